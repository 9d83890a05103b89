//! The sun through the day for the page: the JSON of `catoptric day`
//! for the page's layout (a small document: one row per step).

use crate::layout::parse_layout;
use crate::sun::{day_sweep, DayRequest};
use crate::trace::TraceOptions;
use wasm_bindgen::prelude::*;

/// `catoptric day --json` for `layout_json` on `date` (YYYY-MM-DD); empty
/// `from`/`to` mean sunrise/sunset. `rays_per_source` (0: the layout's
/// own) traces each step with fewer rays for a quick sweep. Errors start
/// with the field they name (`site: …`, `--date: …`).
#[wasm_bindgen]
pub fn day_json(layout_json: &str, date: &str, from: &str, to: &str, step_min: u32, rays_per_source: u32) -> Result<String, JsError> {
    let layout = parse_layout(layout_json).map_err(|e| JsError::new(&e.to_string()))?;
    let opt = |s: &str| (!s.trim().is_empty()).then(|| s.to_string());
    let req = DayRequest { date: date.to_string(), from: opt(from), to: opt(to), step_min };
    let opts = TraceOptions { rays: (rays_per_source > 0).then_some(rays_per_source as usize), ..Default::default() };
    let report = day_sweep(&layout, &req, opts).map_err(|e| JsError::new(&e.to_string()))?;
    serde_json::to_string(&report).map_err(|e| JsError::new(&format!("report: {e}")))
}
