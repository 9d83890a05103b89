//! The page session: current layout, re-trace on edits, typed-array views.
//!
//! One [`Session`] lives in the page (and one in the trace worker). The page
//! keeps a plain JS copy of the layout object for its forms, edits it and
//! sends it back whole with [`Session::set_layout_json`] — layouts are a
//! few kilobytes. Everything bulky (ray fan, element outlines, spot hits)
//! stays in wasm memory and is handed out as typed-array **views**.
//!
//! # Views go stale
//!
//! `*_view()` methods return `Float32Array`/`Float64Array`/`Uint*Array`
//! objects that look straight into wasm memory: no copy. A view is valid
//! only until the next call into the session (any call may allocate, and a
//! growing wasm memory detaches every existing view, which then reads as
//! length 0). Read a view at once, or `.slice()` it to keep a copy.
//!
//! Small values (counts, ids, times, the report) are returned by value.

use crate::analysis::analyse_all;
use crate::geometry::{Aperture, Sag, Vec3};
use crate::layout::{decode_link, encode_link, parse_layout, Layout, Source, MAX_RAYS_PER_SOURCE};
use crate::scene::{Part, Scene};
use crate::trace::{trace_fan, trace_with, Fan, TraceOptions, TraceResult};
use js_sys::{Float32Array, Float64Array, Function, Uint16Array, Uint32Array, Uint8Array};
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;

/// Fan rays per source drawn on the canvas unless the page asks otherwise.
pub const DEFAULT_FAN_RAYS: usize = 64;
/// Most fan rays per source the page may ask for.
pub const MAX_FAN_RAYS: usize = 4096;
/// Points per mirror outline (each side of a central hole gets its share).
const OUTLINE_POINTS: usize = 97;

/// Milliseconds from the global `performance` clock (page or worker).
fn now_ms() -> f64 {
    js_sys::Reflect::get(&js_sys::global(), &JsValue::from_str("performance"))
        .ok()
        .and_then(|p| p.dyn_into::<web_sys::Performance>().ok())
        .map_or_else(js_sys::Date::now, |p| p.now())
}

fn input_error(e: crate::InputError) -> JsError {
    JsError::new(&e.to_string())
}

/// An empty but valid layout: what a new session holds before anything is
/// loaded.
fn empty_layout() -> Layout {
    Layout {
        format: crate::layout::FORMAT_TAG.to_string(),
        version: crate::layout::FORMAT_VERSION,
        name: "Untitled".to_string(),
        notes: String::new(),
        wavelength_nm: 550.0,
        max_bounces: 16,
        elements: Vec::new(),
        sources: Vec::new(),
    }
}

/// The page's working state: layout, compiled scene, last trace, fan and
/// the buffers the views look into.
#[wasm_bindgen]
pub struct Session {
    layout: Layout,
    pub(crate) scene: Scene,
    pub(crate) result: TraceResult,
    /// Rays per source of the last trace (`None`: each source's own count).
    traced_rays: Option<usize>,
    report: String,
    fan: Fan,
    fan_rays: usize,
    /// Outline points [y, z, y, z, …] (mm) of every element.
    outline: Vec<f32>,
    /// Outline spans as (element index, first point, point count) triples.
    spans: Vec<u32>,
    /// Hits of the selected screen: [u, v, u, v, …] mm, source, weight W.
    spot_uv: Vec<f64>,
    spot_source: Vec<u32>,
    spot_weight: Vec<f64>,
    trace_ms: f64,
    fan_ms: f64,
    /// Curves, flux maps and pixels of the analysis views (src/web/analysis.rs).
    pub(crate) views: super::analysis::ViewState,
}

impl Default for Session {
    fn default() -> Self {
        Self::new()
    }
}

#[wasm_bindgen]
impl Session {
    /// A session holding an empty layout ("Untitled", no elements).
    #[wasm_bindgen(constructor)]
    pub fn new() -> Session {
        let layout = empty_layout();
        let scene = Scene::compile(&layout);
        let mut s = Session {
            layout,
            scene,
            result: TraceResult::default(),
            traced_rays: None,
            report: String::new(),
            fan: Fan::default(),
            fan_rays: DEFAULT_FAN_RAYS,
            outline: Vec::new(),
            spans: Vec::new(),
            spot_uv: Vec::new(),
            spot_source: Vec::new(),
            spot_weight: Vec::new(),
            trace_ms: 0.0,
            fan_ms: 0.0,
            views: Default::default(),
        };
        s.install(s.layout.clone());
        s
    }

    // ----- layout in and out -------------------------------------------

    /// Replaces the layout with a parsed and validated document (a file the
    /// user opened, a preset). On error the previous layout stays and the
    /// message names the field (`elements[0].profile.conic: …`).
    pub fn load_json(&mut self, text: &str) -> Result<(), JsError> {
        let layout = parse_layout(text).map_err(input_error)?;
        self.install(layout);
        Ok(())
    }

    /// Same as [`Session::load_json`], for edits: the page changes its JS
    /// copy of the layout and sends the whole JSON back. Invalid edits are
    /// refused with a field-naming message and the session keeps the last
    /// valid layout.
    pub fn set_layout_json(&mut self, text: &str) -> Result<(), JsError> {
        self.load_json(text)
    }

    /// Opens a share link (`#L=…`, the bare payload or a whole URL). On
    /// error the previous layout stays.
    pub fn load_link(&mut self, fragment: &str) -> Result<(), JsError> {
        let layout = decode_link(fragment).map_err(input_error)?;
        self.install(layout);
        Ok(())
    }

    /// The current layout as indented JSON (for files and the page's copy).
    pub fn layout_json(&self) -> String {
        self.layout.to_json_pretty()
    }

    /// The share fragment of the current layout, `#L=` included.
    pub fn link(&self) -> String {
        encode_link(&self.layout)
    }

    /// The layout's name.
    pub fn name(&self) -> String {
        self.layout.name.clone()
    }

    // ----- tracing -----------------------------------------------------

    /// Traces every source (with `rays_per_source` rays each instead of
    /// their own counts, when given) and the meridional fan.
    pub fn retrace(&mut self, rays_per_source: Option<u32>) -> Result<(), JsError> {
        self.retrace_inner(rays_per_source, None)
    }

    /// As [`Session::retrace`], calling `progress(done, total)` (ray
    /// counts) after each batch of rays; for the trace worker.
    pub fn retrace_with_progress(&mut self, rays_per_source: Option<u32>, progress: &Function) -> Result<(), JsError> {
        self.retrace_inner(rays_per_source, Some(progress))
    }

    /// Re-traces only the fan (cheap: a few hundred rays).
    pub fn retrace_fan(&mut self) {
        let t0 = now_ms();
        self.fan = trace_fan(&self.scene, self.fan_rays, None);
        self.fan_ms = now_ms() - t0;
    }

    /// Fan rays per source (1 … 4096); takes effect at the next trace.
    pub fn set_fan_rays(&mut self, n: u32) -> Result<(), JsError> {
        let n = n as usize;
        if n == 0 || n > MAX_FAN_RAYS {
            return Err(JsError::new(&format!("fan rays: must be between 1 and {MAX_FAN_RAYS} (got {n})")));
        }
        self.fan_rays = n;
        Ok(())
    }

    /// The statistics report of the last trace as JSON (the document
    /// `catoptric trace --json` prints). Empty string before any trace.
    pub fn report_json(&self) -> String {
        self.report.clone()
    }

    /// Rays launched by the last trace.
    pub fn rays_launched(&self) -> f64 {
        self.result.rays_launched as f64
    }
    /// Rays of the last trace that left the scene.
    pub fn rays_escaped(&self) -> f64 {
        self.result.rays_escaped as f64
    }
    /// Rays of the last trace absorbed (mirror backs, opaque screens,
    /// bounce limit).
    pub fn rays_absorbed(&self) -> f64 {
        self.result.rays_absorbed as f64
    }
    /// Rays per source of the last trace, or 0 when each source used its
    /// own count.
    pub fn traced_rays_per_source(&self) -> u32 {
        self.traced_rays.map_or(0, |n| n as u32)
    }
    /// Sum of the sources' own ray counts (what a full trace launches,
    /// give or take the lattice rounding).
    pub fn layout_rays(&self) -> f64 {
        self.layout.sources.iter().map(|s| s.rays() as f64).sum()
    }
    /// Wall time of the last full trace, ms.
    pub fn trace_ms(&self) -> f64 {
        self.trace_ms
    }
    /// Wall time of the last fan trace, ms.
    pub fn fan_ms(&self) -> f64 {
        self.fan_ms
    }
    /// True when a source is an extended solar disk (the page shows its
    /// concentrated-sunlight caution).
    pub fn has_sun(&self) -> bool {
        self.layout.sources.iter().any(|s| matches!(s, Source::Beam(b) if b.sun_half_angle_mrad > 0.0))
    }

    // ----- scene lookups -------------------------------------------------

    pub fn screen_count(&self) -> usize {
        self.scene.screen_ids.len()
    }
    /// Id of screen `i` (in hit-record order), if any.
    pub fn screen_id(&self, i: usize) -> Option<String> {
        self.scene.screen_ids.get(i).cloned()
    }
    /// Index of the screen with this id, if any.
    pub fn screen_index(&self, id: &str) -> Option<usize> {
        self.scene.screen_ids.iter().position(|s| s == id)
    }
    pub fn source_count(&self) -> usize {
        self.scene.sources.len()
    }
    pub fn source_id(&self, i: usize) -> Option<String> {
        self.scene.sources.get(i).map(|s| s.id().to_string())
    }

    /// Sag (mm, along the mirror axis) of element `element` at local
    /// ρ = `rho` mm (signed local y for extruded mirrors); `None` when the
    /// element is not a mirror.
    pub fn sag_at(&self, element: usize, rho: f64) -> Option<f64> {
        match &self.scene.elements.get(element)?.part {
            Part::Mirror { surface, .. } => {
                let r = if surface.extruded { rho } else { rho.abs() };
                Some(surface.profile.sag(r))
            }
            Part::Screen { .. } => None,
        }
    }

    /// Sag of element `element` without its departure spline (conic plus
    /// aspheric terms) at local ρ = `rho` mm; `None` when not a mirror. The
    /// page places and drags the knots of a free-form mirror with it.
    pub fn base_sag_at(&self, element: usize, rho: f64) -> Option<f64> {
        match &self.scene.elements.get(element)?.part {
            Part::Mirror { surface, .. } => {
                let r = if surface.extruded { rho } else { rho.abs() };
                let mut base = surface.profile.clone();
                base.departure = None;
                Some(base.sag(r))
            }
            Part::Screen { .. } => None,
        }
    }

    // ----- bulk data as views (valid until the next call) --------------

    /// Fan segments [y0, z0, y1, z1, …] in mm. View: see the module notes.
    pub fn fan_segments_view(&self) -> Float32Array {
        // SAFETY: the view is handed straight to JS; the documented contract
        // is that JS reads it before calling into the session again.
        unsafe { Float32Array::view(&self.fan.segments) }
    }
    /// Source index of each fan segment. View.
    pub fn fan_sources_view(&self) -> Uint16Array {
        // SAFETY: as above.
        unsafe { Uint16Array::view(&self.fan.source) }
    }
    /// 1 for the drawn-on last leg of an escaping fan ray, else 0. View.
    pub fn fan_escaping_view(&self) -> Uint8Array {
        // SAFETY: as above.
        unsafe { Uint8Array::view(&self.fan.escaping) }
    }
    /// Number of fan segments.
    pub fn fan_count(&self) -> usize {
        self.fan.source.len()
    }

    /// Element outlines: points [y, z, …] in mm. View.
    pub fn outline_points_view(&self) -> Float32Array {
        // SAFETY: as above.
        unsafe { Float32Array::view(&self.outline) }
    }
    /// Outline spans as (element index, first point, point count) triples;
    /// a mirror with a central hole has two spans. View.
    pub fn outline_spans_view(&self) -> Uint32Array {
        // SAFETY: as above.
        unsafe { Uint32Array::view(&self.spans) }
    }

    /// Gathers the hits of the last trace on screen `screen` (index in
    /// [`Session::screen_id`] order) into the spot buffers and returns
    /// their number.
    pub fn select_spot(&mut self, screen: usize) -> Result<usize, JsError> {
        let Some(h) = self.result.screens.get(screen) else {
            return Err(JsError::new(&format!(
                "screen {screen}: no such screen in the last trace ({} screens)",
                self.result.screens.len()
            )));
        };
        self.spot_uv.clear();
        self.spot_uv.reserve(2 * h.len());
        for (u, v) in h.u.iter().zip(&h.v) {
            self.spot_uv.push(*u);
            self.spot_uv.push(*v);
        }
        self.spot_source.clone_from(&h.source);
        self.spot_weight.clone_from(&h.weight);
        Ok(h.len())
    }
    /// Selected screen's hits [u, v, u, v, …] in mm. View.
    pub fn spot_uv_view(&self) -> Float64Array {
        // SAFETY: as above.
        unsafe { Float64Array::view(&self.spot_uv) }
    }
    /// Source index of each selected hit. View.
    pub fn spot_source_view(&self) -> Uint32Array {
        // SAFETY: as above.
        unsafe { Uint32Array::view(&self.spot_source) }
    }
    /// Power of each selected hit, W. View.
    pub fn spot_weight_view(&self) -> Float64Array {
        // SAFETY: as above.
        unsafe { Float64Array::view(&self.spot_weight) }
    }
}

impl Session {
    /// Makes `layout` current: compile, outline, forget the old trace.
    fn install(&mut self, layout: Layout) {
        self.scene = Scene::compile(&layout);
        self.layout = layout;
        self.result = TraceResult::default();
        self.traced_rays = None;
        self.report.clear();
        self.fan = Fan::default();
        self.spot_uv.clear();
        self.spot_source.clear();
        self.spot_weight.clear();
        self.views = Default::default();
        self.build_outlines();
    }

    fn retrace_inner(&mut self, rays: Option<u32>, progress: Option<&Function>) -> Result<(), JsError> {
        if let Some(n) = rays {
            if n == 0 || n as u64 > MAX_RAYS_PER_SOURCE {
                return Err(JsError::new(&format!("rays per source: must be between 1 and {MAX_RAYS_PER_SOURCE} (got {n})")));
            }
        }
        let opts = TraceOptions { rays: rays.map(|n| n as usize), ..Default::default() };
        let t0 = now_ms();
        self.result = match progress {
            None => trace_with(&self.scene, opts, &mut |_, _| {}),
            Some(f) => trace_with(&self.scene, opts, &mut |done, total| {
                // A failing progress callback must not stop the trace.
                let _ = f.call2(&JsValue::NULL, &JsValue::from_f64(done as f64), &JsValue::from_f64(total as f64));
            }),
        };
        self.trace_ms = now_ms() - t0;
        self.traced_rays = opts.rays;
        let all = analyse_all(&self.scene, &self.result);
        self.report = serde_json::to_string(&all.report).map_err(|e| JsError::new(&format!("report: {e}")))?;
        self.views.analyses = Some(all);
        self.retrace_fan();
        Ok(())
    }

    /// Samples every element's meridional section into `outline`/`spans`.
    fn build_outlines(&mut self) {
        self.outline.clear();
        self.spans.clear();
        for (ei, e) in self.scene.elements.iter().enumerate() {
            let mut pieces: Vec<(f64, f64)> = Vec::new();
            match &e.part {
                Part::Mirror { surface, .. } => {
                    let (offset, half, hole) = match surface.aperture {
                        Aperture::Disk { offset, r, hole } => (offset, r, hole),
                        Aperture::Strip { offset, half_width, half_hole, .. } => (offset, half_width, half_hole),
                    };
                    if hole > 0.0 {
                        pieces.push((offset - half, offset - hole));
                        pieces.push((offset + hole, offset + half));
                    } else {
                        pieces.push((offset - half, offset + half));
                    }
                    for (a, b) in pieces {
                        let n = ((OUTLINE_POINTS as f64 * (b - a) / (2.0 * half)).ceil() as usize).max(2);
                        let start = (self.outline.len() / 2) as u32;
                        for i in 0..n {
                            let y = a + (b - a) * i as f64 / (n - 1) as f64;
                            let rho = if surface.extruded { y } else { y.abs() };
                            let z = surface.profile.sag(rho);
                            let w = e.frame.to_world_point(&Vec3::new(0.0, y, z));
                            self.outline.push(w.y as f32);
                            self.outline.push(w.z as f32);
                        }
                        self.spans.extend_from_slice(&[ei as u32, start, n as u32]);
                    }
                }
                Part::Screen { half, .. } => {
                    let start = (self.outline.len() / 2) as u32;
                    for y in [-*half, *half] {
                        let w = e.frame.to_world_point(&Vec3::new(0.0, y, 0.0));
                        self.outline.push(w.y as f32);
                        self.outline.push(w.z as f32);
                    }
                    self.spans.extend_from_slice(&[ei as u32, start, 2]);
                }
            }
        }
    }
}
