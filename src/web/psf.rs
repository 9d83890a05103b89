//! Glue for the page's Image view (www/js/views/image.js): the diffraction
//! image of one source on one screen, computed from a layout in the PSF
//! worker (www/js/psf-worker.js), so the page's thread stays free.
//!
//! The layout is parsed, traced whole (once per layout text: the worker's
//! [`PsfTracer`] keeps the last trace) and analysed by
//! [`crate::analysis::psf`]; the report crosses as its JSON text (as
//! `catoptric psf --json` prints it) and the picture as a copy
//! (`Float32Array`, intensities relative to the unaberrated peak).

use crate::analysis::{psf, Psf, PsfFocus, PsfOptions};
use crate::trace::{trace, work_estimate, TraceOptions, TraceResult, WORK_BUDGET};
use crate::Scene;
use wasm_bindgen::prelude::*;

/// The picture frames at least this many Airy radii about the centre.
const FRAME_AIRY_RADII: f64 = 8.0;

/// A computed image: the report and a square window of the PSF.
#[wasm_bindgen]
pub struct PsfImage {
    report: String,
    window: Vec<f32>,
    side: usize,
}

#[wasm_bindgen]
impl PsfImage {
    /// The `catoptric psf --json` document.
    pub fn report_json(&self) -> String {
        self.report.clone()
    }

    /// Pixels per side of [`PsfImage::pixels`].
    pub fn side(&self) -> usize {
        self.side
    }

    /// Row-major side×side intensities relative to the unaberrated peak,
    /// row 0 at −v, column 0 at −u, the reference point at (side/2, side/2);
    /// pixel pitch `psf.pixel_um` of the report.
    pub fn pixels(&self) -> Vec<f32> {
        self.window.clone()
    }
}

/// The window side that holds the image: the encircled-energy curve's
/// reach (past 95 % of the light) or FRAME_AIRY_RADII Airy radii, whichever
/// is larger, within the whole PSF grid.
fn frame_side(p: &Psf) -> usize {
    let r = &p.report;
    let px = r.psf.pixel_um;
    let reach = r.ee_diffraction.radius_um.last().copied().unwrap_or(0.0) / px;
    let airy = 1.22 * r.wavelength_nm * 1e-3 * r.f_number / px;
    let half = reach.max(FRAME_AIRY_RADII * airy).ceil() as usize;
    (2 * half + 2).min(p.side)
}

/// Traces layouts for the image worker and keeps the last trace, so images
/// of several screens, sources, focuses and grids of one layout cost one
/// trace.
#[wasm_bindgen]
#[derive(Default)]
pub struct PsfTracer {
    text: String,
    traced: Option<(Scene, TraceResult)>,
}

#[wasm_bindgen]
impl PsfTracer {
    #[wasm_bindgen(constructor)]
    pub fn new() -> PsfTracer {
        PsfTracer::default()
    }

    /// The diffraction image of source `source` on screen `screen` of the
    /// layout `layout_json` at `at` (`best` or `screen`) on a `grid`-sided
    /// pupil grid. Bad input (and a layout too heavy to trace here) is an
    /// error naming the field.
    pub fn image(&mut self, layout_json: &str, screen: usize, source: usize, at: &str, grid: usize) -> Result<PsfImage, JsError> {
        let at = PsfFocus::parse(at).ok_or_else(|| JsError::new("at: must be best or screen"))?;
        if self.traced.is_none() || self.text != layout_json {
            self.traced = None;
            let layout = crate::parse_layout(layout_json).map_err(|e| JsError::new(&e.to_string()))?;
            let scene = Scene::compile(&layout);
            let rays: u64 = layout.sources.iter().map(|s| s.rays()).sum();
            if work_estimate(&scene, rays) > WORK_BUDGET {
                return Err(JsError::new("layout: too heavy to trace for the image here; lower the rays or max_bounces"));
            }
            let res = trace(&scene, TraceOptions::default());
            if let Some(limit) = &res.limit {
                return Err(JsError::new(&limit.to_string()));
            }
            self.text = layout_json.to_string();
            self.traced = Some((scene, res));
        }
        let (scene, res) = self.traced.as_ref().expect("traced above");
        let p = psf(scene, res, &PsfOptions { screen, source, at, grid }).map_err(|e| JsError::new(&e.to_string()))?;
        let side = frame_side(&p);
        let window = p.window(side);
        let report = serde_json::to_string(&p.report).map_err(|e| JsError::new(&e.to_string()))?;
        Ok(PsfImage { report, window, side })
    }
}
