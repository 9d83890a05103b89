//! Catoptric: a ray-optics workbench for curved mirrors.
//!
//! Data flows one way: [`layout`] (file format, validation, share links) →
//! [`scene`] (compiled geometry) → [`trace`] (sources and the tracer) →
//! [`analysis`] (spot statistics and the focus and flux analyses).
//! [`design`] holds the closed-form designers and mirror-testing tables,
//! which emit layouts. The core has no web or I/O dependency; `src/web`
//! (wasm only) and `src/bin` are thin front ends.

pub mod analysis;
pub mod bench_scenes;
pub mod design;
pub mod error;
pub mod geometry;
pub mod layout;
pub mod pixels;
pub mod scene;
pub mod trace;
#[cfg(target_arch = "wasm32")]
pub mod web;

pub use error::InputError;
pub use layout::{parse_layout, validate, Layout};
pub use scene::Scene;
pub use trace::{trace, TraceOptions, TraceResult};
