//! Closed-form designers and mirror-testing tables; each emits layouts.
