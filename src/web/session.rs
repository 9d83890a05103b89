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
//!
//! # Pooled traces
//!
//! The page's long traces run on a pool of workers, one session each:
//! every worker traces a numbered slice with [`Session::trace_slice`] and
//! hands its hits back as typed-array **copies** ([`Session::slice_hits`],
//! transferable); the coordinating session takes them in slice order
//! ([`Session::add_slice`], [`Session::add_slice_hits`], or
//! [`Session::keep_slice`] for its own) and [`Session::merge_slices`]
//! merges them into exactly the whole trace, then analyses it as
//! [`Session::retrace`] does. A slice that stopped at a limit says so
//! ([`Session::slice_limit`], passed on to [`Session::add_slice`]), so the
//! merged trace stops at it too ([`Session::limit_message`]).
//!
//! # Bounded work
//!
//! [`Session::work_estimate`] is the core's worst-case cost of a trace
//! (`trace::work_estimate`); the page traces nothing above
//! [`Session::work_budget`] unless the user asks, and only small previews
//! on its own thread. [`Session::set_max_hits`] lowers the cap on recorded
//! screen hits for this session's traces.

use crate::analysis::analyse_all;
use crate::geometry::{Aperture, Sag, Vec3};
use crate::layout::{decode_link, encode_link, parse_layout, Layout, Source, MAX_RAYS_PER_SOURCE};
use crate::scene::{Part, Scene};
use crate::trace::{
    merge_parts, trace_fan, trace_part, trace_with, work_estimate, Fan, Limit, ScreenHits, TraceOptions, TraceResult,
    WORK_BUDGET,
};
use js_sys::{Array, Float32Array, Float64Array, Function, Uint16Array, Uint32Array, Uint8Array};
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;

/// Fan rays per source drawn on the canvas unless the page asks otherwise.
pub const DEFAULT_FAN_RAYS: usize = 64;
/// Most fan rays per source the page may ask for.
pub const MAX_FAN_RAYS: usize = 4096;
/// Most worst-case element tests (`trace::work_estimate`) a fan may cost:
/// the fan is traced on the page's own thread after every edit, so in a
/// cavity (many bounces, many screens) it gets fewer rays, or none.
pub const MAX_FAN_WORK: u64 = 20_000_000;
/// Points per mirror outline (each side of a central hole gets its share).
const OUTLINE_POINTS: usize = 97;
/// Most slices a pooled trace may be cut into.
pub const MAX_SLICES: u32 = 64;
/// Columns of a slice's hits on one screen, in [`Session::slice_hits`] order.
const HIT_COLUMNS: usize = 9;
/// Largest count a JS number holds exactly (2⁵³).
const MAX_EXACT_COUNT: f64 = 9_007_199_254_740_992.0;

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

/// Checks a page-given rays-per-source count.
pub(super) fn check_rays(rays: Option<u32>) -> Result<Option<usize>, JsError> {
    match rays {
        Some(n) if n == 0 || n as u64 > MAX_RAYS_PER_SOURCE => {
            Err(JsError::new(&format!("rays per source: must be between 1 and {MAX_RAYS_PER_SOURCE} (got {n})")))
        }
        _ => Ok(rays.map(|n| n as usize)),
    }
}

/// Calls the page's `progress(done, total)`; a failing callback must not
/// stop the trace.
fn report_progress(f: Option<&Function>, done: u64, total: u64) {
    if let Some(f) = f {
        let _ = f.call2(&JsValue::NULL, &JsValue::from_f64(done as f64), &JsValue::from_f64(total as f64));
    }
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
        site: None,
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
    /// Fan rays per source of the last fan (`fan_rays` or fewer; see
    /// [`MAX_FAN_WORK`]).
    fan_traced: usize,
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
    /// The slice this session traced last for a pooled trace.
    slice: TraceResult,
    /// Slices gathered for [`Session::merge_slices`], in slice order.
    staged: Vec<TraceResult>,
    /// Cap on recorded screen hits of this session's traces (`None`: the
    /// core's default, `trace::MAX_RECORDED_HITS`).
    max_hits: Option<u64>,
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
            fan_traced: 0,
            outline: Vec::new(),
            spans: Vec::new(),
            spot_uv: Vec::new(),
            spot_source: Vec::new(),
            spot_weight: Vec::new(),
            trace_ms: 0.0,
            fan_ms: 0.0,
            slice: TraceResult::default(),
            staged: Vec::new(),
            max_hits: None,
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

    /// Traces slice `k` of `parts` of the current layout (each source's
    /// rays numbered and cut into `parts` equal runs), with
    /// `rays_per_source` rays per source when given, calling
    /// `progress(done, total)` (the slice's ray counts) after each batch.
    /// The slice stays in the session for [`Session::slice_counts`],
    /// [`Session::slice_hits`] or [`Session::keep_slice`]; the session's
    /// own last trace is untouched.
    pub fn trace_slice(&mut self, rays_per_source: Option<u32>, k: u32, parts: u32, progress: Option<Function>) -> Result<(), JsError> {
        let rays = check_rays(rays_per_source)?;
        if parts == 0 || parts > MAX_SLICES || k >= parts {
            return Err(JsError::new(&format!("trace slice: need 0 <= k < parts <= {MAX_SLICES} (got k = {k}, parts = {parts})")));
        }
        let opts = TraceOptions { rays, max_hits: self.max_hits, ..Default::default() };
        trace_part(&self.scene, opts, k as usize, parts as usize, &mut self.slice, &mut |done, total| {
            report_progress(progress.as_ref(), done, total)
        });
        Ok(())
    }

    /// Counters of the last traced slice: [rays launched, escaped,
    /// absorbed, surface hits] (a copy).
    pub fn slice_counts(&self) -> Vec<f64> {
        let r = &self.slice;
        vec![r.rays_launched as f64, r.rays_escaped as f64, r.rays_absorbed as f64, r.surface_hits as f64]
    }
    /// Rays the last traced slice launched from each source (a copy).
    pub fn slice_launched_by_source(&self) -> Vec<f64> {
        self.slice.launched_by_source.iter().map(|&n| n as f64).collect()
    }
    /// Power of each source, W, as the last traced slice saw it (a copy).
    pub fn slice_power_by_source(&self) -> Vec<f64> {
        self.slice.power_by_source.clone()
    }
    /// The hit cap the last traced slice stopped at, if it stopped at one
    /// (pass it on to [`Session::add_slice`]).
    pub fn slice_limit(&self) -> Option<f64> {
        self.slice.limit.map(|Limit::TooManyHits { cap }| cap as f64)
    }
    /// Hits of the last traced slice on screen `screen` as fresh typed
    /// arrays (copies, safe to keep and to transfer): [u, v, du, dv, dw,
    /// opl, weight] as `Float64Array`s, then source as a `Uint32Array`.
    pub fn slice_hits(&self, screen: usize) -> Result<Array, JsError> {
        let Some(h) = self.slice.screens.get(screen) else {
            return Err(JsError::new(&format!(
                "slice hits: no screen {screen} in the last slice ({} screens)",
                self.slice.screens.len()
            )));
        };
        let out = Array::new();
        for col in [&h.u, &h.v, &h.du, &h.dv, &h.dw, &h.opl, &h.weight] {
            out.push(&Float64Array::from(&col[..]));
        }
        out.push(&Uint32Array::from(&h.source[..]));
        let first: Vec<u8> = h.first.iter().map(|&f| f as u8).collect();
        out.push(&Uint8Array::from(&first[..]));
        Ok(out)
    }

    /// Starts gathering a pooled trace afresh (drops gathered slices).
    pub fn clear_slices(&mut self) {
        self.staged.clear();
    }
    /// Gathers the session's own last traced slice as the next slice.
    pub fn keep_slice(&mut self) {
        self.staged.push(std::mem::take(&mut self.slice));
    }
    /// Gathers the next slice (in slice order) from its counters as
    /// [`Session::slice_counts`], [`Session::slice_launched_by_source`] and
    /// [`Session::slice_power_by_source`] gave them, with the hit cap it
    /// stopped at ([`Session::slice_limit`]; `undefined` when it did not);
    /// its hits follow with [`Session::add_slice_hits`], screen by screen.
    pub fn add_slice(
        &mut self,
        counts: &[f64],
        launched_by_source: &[f64],
        power_by_source: &[f64],
        limit: Option<f64>,
    ) -> Result<(), JsError> {
        let sources = self.scene.sources.len();
        let count = |what: &str, x: f64| -> Result<u64, JsError> {
            if (0.0..=MAX_EXACT_COUNT).contains(&x) && x.fract() == 0.0 {
                Ok(x as u64)
            } else {
                Err(JsError::new(&format!("slice: {what} must be a whole number from 0 to 2^53 (got {x})")))
            }
        };
        if self.staged.len() >= MAX_SLICES as usize {
            return Err(JsError::new(&format!("slice: at most {MAX_SLICES} slices")));
        }
        if counts.len() != 4 {
            return Err(JsError::new(&format!("slice: expected 4 counters, got {}", counts.len())));
        }
        if launched_by_source.len() != sources || power_by_source.len() != sources {
            return Err(JsError::new(&format!(
                "slice: expected {sources} sources, got {} launched counts and {} powers",
                launched_by_source.len(),
                power_by_source.len()
            )));
        }
        let res = TraceResult {
            rays_launched: count("rays launched", counts[0])?,
            rays_escaped: count("rays escaped", counts[1])?,
            rays_absorbed: count("rays absorbed", counts[2])?,
            surface_hits: count("surface hits", counts[3])?,
            launched_by_source: launched_by_source.iter().map(|&x| count("rays launched by a source", x)).collect::<Result<_, _>>()?,
            power_by_source: power_by_source.to_vec(),
            screens: Vec::new(),
            limit: limit.map(|cap| count("hit cap", cap).map(|cap| Limit::TooManyHits { cap })).transpose()?,
        };
        self.staged.push(res);
        Ok(())
    }
    /// Adds the hits on the next screen (in screen order) to the slice
    /// last started with [`Session::add_slice`]: the arrays
    /// [`Session::slice_hits`] gave, all of one length, sources in
    /// ascending order as a trace records them.
    pub fn add_slice_hits(&mut self, columns: Array) -> Result<(), JsError> {
        let screens = self.scene.screen_ids.len();
        let sources = self.scene.sources.len();
        let Some(slice) = self.staged.last_mut() else {
            return Err(JsError::new("slice hits: add_slice must come first"));
        };
        if slice.screens.len() >= screens {
            return Err(JsError::new(&format!("slice hits: the slice already has all {screens} screens")));
        }
        if columns.length() as usize != HIT_COLUMNS {
            return Err(JsError::new(&format!("slice hits: expected {HIT_COLUMNS} columns, got {}", columns.length())));
        }
        let f64_column = |i: u32| -> Result<Vec<f64>, JsError> {
            columns
                .get(i)
                .dyn_into::<Float64Array>()
                .map(|a| a.to_vec())
                .map_err(|_| JsError::new(&format!("slice hits: column {i} must be a Float64Array")))
        };
        let source = columns
            .get(7)
            .dyn_into::<Uint32Array>()
            .map(|a| a.to_vec())
            .map_err(|_| JsError::new("slice hits: column 7 (source) must be a Uint32Array"))?;
        let first = columns
            .get(8)
            .dyn_into::<Uint8Array>()
            .map(|a| a.to_vec().into_iter().map(|x| x != 0).collect::<Vec<bool>>())
            .map_err(|_| JsError::new("slice hits: column 8 (first arrival) must be a Uint8Array"))?;
        let h = ScreenHits {
            u: f64_column(0)?,
            v: f64_column(1)?,
            du: f64_column(2)?,
            dv: f64_column(3)?,
            dw: f64_column(4)?,
            opl: f64_column(5)?,
            weight: f64_column(6)?,
            source,
            first,
        };
        let n = h.len();
        if [&h.v, &h.du, &h.dv, &h.dw, &h.opl, &h.weight].iter().any(|c| c.len() != n) || h.source.len() != n || h.first.len() != n {
            return Err(JsError::new("slice hits: the columns differ in length"));
        }
        if h.source.iter().any(|&s| s as usize >= sources) || h.source.windows(2).any(|w| w[0] > w[1]) {
            return Err(JsError::new(&format!("slice hits: sources must be ascending indices below {sources}")));
        }
        slice.screens.push(h);
        Ok(())
    }
    /// Merges the `parts` gathered slices (in slice order) into the whole
    /// trace and makes it the session's last trace, then analyses it and
    /// traces the fan as [`Session::retrace`] does. `rays_per_source` is
    /// what the slices were traced with; `trace_ms` the wall time to
    /// report. The gathered slices are dropped, also on error.
    pub fn merge_slices(&mut self, rays_per_source: Option<u32>, parts: u32, trace_ms: f64) -> Result<(), JsError> {
        let staged = std::mem::take(&mut self.staged);
        let rays = check_rays(rays_per_source)?;
        if staged.len() != parts as usize || staged.is_empty() {
            return Err(JsError::new(&format!("merge: expected {parts} slices, got {}", staged.len())));
        }
        let screens = self.scene.screen_ids.len();
        let sources = self.scene.sources.len();
        if let Some(k) = staged.iter().position(|p| p.screens.len() != screens || p.launched_by_source.len() != sources) {
            return Err(JsError::new(&format!(
                "merge: slice {k} has {} screens and {} sources, the layout {screens} and {sources}",
                staged[k].screens.len(),
                staged[k].launched_by_source.len()
            )));
        }
        self.result = merge_parts(&staged);
        drop(staged);
        self.finish_trace(rays, trace_ms)
    }

    /// Re-traces only the fan (cheap: a few hundred rays, fewer when each
    /// ray could cost much; see [`MAX_FAN_WORK`]).
    pub fn retrace_fan(&mut self) {
        let t0 = now_ms();
        let sources = self.scene.sources.len().max(1) as u64;
        let per_ray = work_estimate(&self.scene, 1).max(1);
        let fits = MAX_FAN_WORK / per_ray.saturating_mul(sources);
        self.fan_traced = (self.fan_rays as u64).min(fits) as usize;
        self.fan = if self.fan_traced > 0 { trace_fan(&self.scene, self.fan_traced, None) } else { Fan::default() };
        self.fan_ms = now_ms() - t0;
    }

    /// Fan rays per source the last fan traced: the asked-for count, or
    /// fewer (0: no fan) when the layout makes each ray costly.
    pub fn fan_rays_traced(&self) -> usize {
        self.fan_traced
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
    /// Why the last trace stopped short (the core's message), or `None`
    /// when it ran to the end. A trace that stopped keeps its counters but
    /// no screen hits.
    pub fn limit_message(&self) -> Option<String> {
        self.result.limit.map(|l| l.to_string())
    }

    // ----- bounded work --------------------------------------------------

    /// Worst-case cost (element tests, `trace::work_estimate`) of tracing
    /// the layout with `rays_per_source` rays per source, or with each
    /// source's own count.
    pub fn work_estimate(&self, rays_per_source: Option<u32>) -> f64 {
        let rays = match rays_per_source {
            Some(n) => u64::from(n).saturating_mul(self.layout.sources.len() as u64),
            None => self.layout.sources.iter().map(|s| s.rays()).sum(),
        };
        work_estimate(&self.scene, rays) as f64
    }
    /// The budget (`trace::WORK_BUDGET`, element tests) above which the
    /// page pauses a trace until the user asks for it.
    pub fn work_budget() -> f64 {
        WORK_BUDGET as f64
    }
    /// True when a full trace of the layout is estimated above the budget.
    pub fn over_budget(&self) -> bool {
        self.work_estimate(None) > Self::work_budget()
    }
    /// Caps the screen hits this session's traces record (whole number
    /// from 1 to 2⁵³; `undefined`: the core's default cap).
    pub fn set_max_hits(&mut self, max_hits: Option<f64>) -> Result<(), JsError> {
        self.max_hits = match max_hits {
            None => None,
            Some(n) if (1.0..=MAX_EXACT_COUNT).contains(&n) && n.fract() == 0.0 => Some(n as u64),
            Some(n) => return Err(JsError::new(&format!("hit cap: must be a whole number from 1 to 2^53 (got {n})"))),
        };
        Ok(())
    }
    /// True when a source is an extended solar disk (the page shows its
    /// concentrated-sunlight caution).
    pub fn has_sun(&self) -> bool {
        self.layout.sources.iter().any(|s| matches!(s, Source::Beam(b) if b.sun_half_angle_mrad > 0.0))
    }

    /// Test hook: ends this call in a WebAssembly trap while the session is
    /// borrowed, as a failed allocation deep in a trace would. It changes
    /// nothing; the browser tests use it to check that the page recovers
    /// (a fresh module and session holding the last good layout).
    #[wasm_bindgen(js_name = "__trapForTests")]
    pub fn trap_for_tests(&mut self) {
        #[cfg(target_arch = "wasm32")]
        core::arch::wasm32::unreachable();
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
        self.slice = TraceResult::default();
        self.staged.clear();
        self.build_outlines();
    }

    fn retrace_inner(&mut self, rays: Option<u32>, progress: Option<&Function>) -> Result<(), JsError> {
        let rays = check_rays(rays)?;
        let opts = TraceOptions { rays, max_hits: self.max_hits, ..Default::default() };
        let t0 = now_ms();
        self.result = trace_with(&self.scene, opts, &mut |done, total| report_progress(progress, done, total));
        self.finish_trace(rays, now_ms() - t0)
    }

    /// What follows every trace once `result` holds it: times, analyses,
    /// the report and the fan.
    fn finish_trace(&mut self, rays: Option<usize>, trace_ms: f64) -> Result<(), JsError> {
        self.trace_ms = trace_ms;
        self.traced_rays = rays;
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
