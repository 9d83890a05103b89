//! Throughput benchmark exported to JS (see `catoptric bench` and
//! `pkg-config/bench-wasm.mjs`): the same standard scenes as the native
//! command, timed inside the wasm module.

use crate::bench_scenes::scenes;
use crate::trace::{trace, TraceOptions};
use crate::Scene;
use wasm_bindgen::prelude::*;

/// Milliseconds from the host's `performance.now()` (browser or Node),
/// else `Date.now()`.
fn now_ms() -> f64 {
    let global = js_sys::global();
    js_sys::Reflect::get(&global, &JsValue::from_str("performance"))
        .ok()
        .filter(|p| p.is_object())
        .and_then(|p| {
            let now = js_sys::Reflect::get(&p, &JsValue::from_str("now")).ok()?;
            let f: js_sys::Function = now.dyn_into().ok()?;
            f.call0(&p).ok()?.as_f64()
        })
        .unwrap_or_else(js_sys::Date::now)
}

/// Number of standard scenes.
#[wasm_bindgen]
pub fn bench_scene_count() -> u32 {
    scenes().len() as u32
}

/// Machine name of scene `index` (empty when out of range).
#[wasm_bindgen]
pub fn bench_scene_key(index: u32) -> String {
    scenes().get(index as usize).map(|s| s.key.to_string()).unwrap_or_default()
}

/// Traces scene `index` with `rays` rays and returns the seconds taken by
/// the trace alone (scene compilation excluded, as in the native bench).
/// Returns NaN for an unknown scene or a ray count outside 1..=cap.
#[wasm_bindgen]
pub fn bench_scene(index: u32, rays: u32) -> f64 {
    let Some(s) = scenes().into_iter().nth(index as usize) else {
        return f64::NAN;
    };
    if rays == 0 || u64::from(rays) > crate::layout::MAX_RAYS_PER_SOURCE {
        return f64::NAN;
    }
    let scene = Scene::compile(&s.layout);
    let t0 = now_ms();
    let res = trace(&scene, TraceOptions { rays: Some(rays as usize), ..Default::default() });
    let dt = (now_ms() - t0) / 1000.0;
    // Keep the result alive so the trace cannot be optimised away.
    std::hint::black_box(res.surface_hits);
    dt
}

/// Milliseconds one dragging frame of the page takes on scene `index`
/// (see [`crate::bench_scenes::page_frame`]); NaN for an unknown scene.
#[wasm_bindgen]
pub fn bench_frame_ms(index: u32) -> f64 {
    let Some(s) = scenes().into_iter().nth(index as usize) else {
        return f64::NAN;
    };
    let t0 = now_ms();
    let hits = crate::bench_scenes::page_frame(&s.layout);
    let dt = now_ms() - t0;
    std::hint::black_box(hits);
    dt
}
