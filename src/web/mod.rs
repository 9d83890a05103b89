//! WebAssembly front end: thin glue between the page and the core.
//!
//! `session` owns the page's working layout and hands results to JS as
//! typed arrays over wasm memory; `bench` runs the throughput benchmark
//! inside the browser or Node; `check` holds its batched tracer to the
//! scalar reference there; `sun` sweeps a day for the day view.

mod analysis;
mod bench;
mod check;
mod design;
mod psf;
mod session;
mod sun;
mod tune;

use wasm_bindgen::prelude::*;

/// Installs the panic hook so a bug shows a readable message in the
/// console instead of "unreachable".
#[wasm_bindgen(start)]
pub fn start() {
    console_error_panic_hook::set_once();
}
