//! A self-check exported to JS for the test suite: the wasm build's
//! batched tracer (its simd128 kernels) against the scalar reference
//! tracer compiled into the same module, bit for bit.

use crate::layout::parse_layout;
use crate::trace::{trace, trace_reference, ScreenHits, TraceOptions, TraceResult};
use crate::Scene;
use wasm_bindgen::prelude::*;

/// Traces `layout_json` with `rays` rays per source (the layout's own
/// counts when absent) by the batched tracer and by the reference, and
/// returns how many of the results' values differ in any bit: the
/// counters, each screen's hit count, then every recorded value (NaN
/// equals NaN). An unreadable layout or a ray count outside the page's
/// range is an error naming what is wrong.
#[wasm_bindgen]
pub fn kernel_check(layout_json: &str, rays: Option<u32>) -> Result<u32, JsError> {
    let rays = super::session::check_rays(rays)?;
    let layout = parse_layout(layout_json).map_err(|e| JsError::new(&e.to_string()))?;
    let scene = Scene::compile(&layout);
    let opts = TraceOptions { rays, ..Default::default() };
    Ok(differences(&trace(&scene, opts), &trace_reference(&scene, opts)))
}

/// Values of `a` and `b` that differ in any bit (see [`kernel_check`]).
fn differences(a: &TraceResult, b: &TraceResult) -> u32 {
    let counters = |r: &TraceResult| [r.rays_launched, r.rays_escaped, r.rays_absorbed, r.surface_hits, r.screens.len() as u64];
    let mut n = counters(a).iter().zip(counters(b)).filter(|(x, y)| **x != *y).count();
    for (x, y) in a.screens.iter().zip(&b.screens) {
        if x.len() != y.len() {
            n += 1;
            continue;
        }
        for (p, q) in columns(x).into_iter().zip(columns(y)) {
            n += p.iter().zip(q).filter(|(u, v)| u.to_bits() != v.to_bits() && !(u.is_nan() && v.is_nan())).count();
        }
        n += x.source.iter().zip(&y.source).filter(|(s, t)| s != t).count();
        n += x.first.iter().zip(&y.first).filter(|(s, t)| s != t).count();
    }
    n as u32
}

/// The recorded float columns of a screen's hits.
fn columns(h: &ScreenHits) -> [&[f64]; 7] {
    [&h.u, &h.v, &h.du, &h.dv, &h.dw, &h.opl, &h.weight]
}
