//! Sources, sampling and the non-sequential tracer.

mod fan;
mod sampling;
mod source;
mod tracer;

pub use fan::{trace_fan, Fan};
pub use sampling::{disk_points, halton, seed_of};
pub use source::{Emitter, Ray};
pub use tracer::{trace, trace_into, trace_with, ScreenHits, TraceOptions, TraceResult, BATCH};
