//! The page session: current layout, re-trace on edits, typed-array views.
