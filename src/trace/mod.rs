//! Sources, sampling and the non-sequential tracer.

pub mod budget;
mod compiled;
mod fan;
mod kernel;
mod run;
mod sampling;
mod slope;
mod source;
#[cfg(not(target_arch = "wasm32"))]
mod stream;
pub mod sunshape;
mod tracer;

pub use fan::{trace_fan, Fan};
pub use sampling::{disk_points, halton, seed_of, DiskPoints};
pub use slope::{gauss_pair, SlopeError};
pub use source::{Emitter, Ray};
pub use budget::{work_estimate, Limit, MAX_RECORDED_HITS, WORK_BUDGET};
pub use kernel::{Kernel, LANES};
pub use run::{merge_parts, slice_range, thread_count, trace_into, trace_part, CHUNK};
pub use tracer::{trace_reference, ScreenHits, TraceOptions, TraceResult};

/// Traces every source of the scene (batched, on every core unless
/// `opts.threads` says otherwise).
pub fn trace(scene: &crate::Scene, opts: TraceOptions) -> TraceResult {
    trace_with(scene, opts, &mut |_, _| {})
}

/// Traces every source, calling `progress(done, total)` as rays finish.
pub fn trace_with(scene: &crate::Scene, opts: TraceOptions, progress: &mut dyn FnMut(u64, u64)) -> TraceResult {
    let mut res = TraceResult::default();
    trace_into(scene, opts, &mut res, progress);
    res
}
