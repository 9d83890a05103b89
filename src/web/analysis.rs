//! Glue for the analysis views of the page (Focus, Energy, Flux and the
//! caustic layer of the drawing).
//!
//! Every trace of the session runs [`analyse_all`](crate::analysis::analyse_all)
//! (the report comes from it too) and keeps the result here, so the curves
//! cost nothing more to hand out. Curves are small (≈ 100 points) and
//! cross as copies (`Float64Array`), packed as pairs [x0, y0, x1, y1, …];
//! the caustic picture is the one large buffer and is handed out as a
//! view, like the other bulk data of the session (valid until the next
//! call into the session).
//!
//! Indices: `screen` as in [`Session::screen_id`], `source` as in
//! [`Session::source_id`]. A pair that got no light gives `undefined`.

use super::session::Session;
use crate::analysis::{caustic_raster, longitudinal_aberration, Analyses, SourceCurves, SourceReport, MAX_RASTER_SIDE};
use crate::layout::Source;
use crate::pixels::{caustic_rgba, map_rgba};
use crate::trace::{trace_fan, work_estimate};
use js_sys::Uint8Array;
use wasm_bindgen::prelude::*;
use wasm_bindgen::Clamped;

/// Most meridional rays per source the caustic layer may ask for.
pub const MAX_CAUSTIC_RAYS: u32 = 20_000;
/// Most meridional rays of a longitudinal aberration curve.
pub const MAX_LONGITUDINAL_RAYS: u32 = 2001;
/// Most worst-case element tests (`trace::work_estimate`) a view may trace
/// on the page's thread (the caustic layer, the longitudinal curve): in a
/// cavity they get fewer rays, or refuse.
pub const MAX_VIEW_WORK: u64 = 20_000_000;

/// What the views keep between calls.
#[derive(Default)]
pub(crate) struct ViewState {
    /// Analyses of the last trace (`None` before any).
    pub analyses: Option<Analyses>,
    /// RGBA pixels of the last caustic picture.
    caustic: Vec<u8>,
}

/// Interleaves two equal-length series into [x0, y0, x1, y1, …].
fn pairs(x: &[f64], y: &[f64]) -> Vec<f64> {
    x.iter().zip(y).flat_map(|(a, b)| [*a, *b]).collect()
}

impl Session {
    fn curves_of(&self, screen: usize, source: usize) -> Option<(&SourceReport, &SourceCurves)> {
        let a = self.views.analyses.as_ref()?;
        let curves = a.curves.get(screen)?;
        let k = curves.iter().position(|c| c.source == source)?;
        Some((a.report.screens.get(screen)?.by_source.get(k)?, &curves[k]))
    }
}

#[wasm_bindgen]
impl Session {
    /// Through-focus curve of `source` on `screen`: [shift mm, RMS radius
    /// µm] pairs over a range centred on the best focus (shift positive
    /// along the screen's axis, toward the arriving light).
    pub fn focus_curve(&self, screen: usize, source: usize) -> Option<Vec<f64>> {
        let tf = self.curves_of(screen, source)?.1.through_focus.as_ref()?;
        Some(pairs(&tf.shift_mm, &tf.rms_radius_um))
    }

    /// Best focus of `source` on `screen`: [shift mm, RMS radius there µm];
    /// `undefined` when the rays arrive parallel or too few arrive.
    pub fn best_focus(&self, screen: usize, source: usize) -> Option<Vec<f64>> {
        let r = self.curves_of(screen, source)?.0;
        Some(vec![r.best_focus_shift_mm?, r.rms_radius_at_best_um?])
    }

    /// Encircled-energy curve about the spot centroid: [radius µm,
    /// fraction 0..1] pairs.
    pub fn energy_curve(&self, screen: usize, source: usize) -> Option<Vec<f64>> {
        let c = self.curves_of(screen, source)?.1;
        (!c.encircled_radius_um.is_empty()).then(|| pairs(&c.encircled_radius_um, &c.encircled_fraction))
    }

    /// [EE50, EE80] radii, µm.
    pub fn energy_radii(&self, screen: usize, source: usize) -> Option<Vec<f64>> {
        let r = self.curves_of(screen, source)?.0;
        Some(vec![r.ee50_radius_um?, r.ee80_radius_um?])
    }

    /// Longitudinal aberration of `rays` meridional rays of `source` on
    /// `screen`: [pupil height, axial crossing mm] pairs, the crossing
    /// measured from the screen plane along its axis. The height unit is
    /// [`Session::pupil_unit`]. Traces its own rays (the scene, not the
    /// last trace).
    pub fn longitudinal_curve(&self, screen: usize, source: usize, rays: u32) -> Result<Option<Vec<f64>>, JsError> {
        if !(2..=MAX_LONGITUDINAL_RAYS).contains(&rays) {
            return Err(JsError::new(&format!("longitudinal rays: must be between 2 and {MAX_LONGITUDINAL_RAYS} (got {rays})")));
        }
        if work_estimate(&self.scene, u64::from(rays)) > MAX_VIEW_WORK {
            return Err(JsError::new("longitudinal curve: this layout's rays could bounce too often to trace the curve here"));
        }
        Ok(longitudinal_aberration(&self.scene, screen, source, rays as usize)
            .filter(|la| !la.height.is_empty())
            .map(|la| pairs(&la.height, &la.crossing_mm)))
    }

    /// Unit of the pupil height of `source`: "mm" across a beam, "deg"
    /// across a lamp's cone; empty for a bad index.
    pub fn pupil_unit(&self, source: usize) -> String {
        match self.scene.sources.get(source) {
            Some(Source::Beam(_)) => "mm".into(),
            Some(Source::Point(_)) => "deg".into(),
            None => String::new(),
        }
    }

    /// Flux map of `screen` from all sources (W/m², row-major, row 0 at
    /// v = +half, column 0 at u = −half); its size is in
    /// [`Session::flux_figures`].
    pub fn flux_grid(&self, screen: usize) -> Option<Vec<f64>> {
        let m = self.views.analyses.as_ref()?.flux_maps.get(screen)?;
        (!m.w_m2.is_empty()).then(|| m.w_m2.clone())
    }

    /// [nx, ny, half side mm, peak W/m², mean W/m², peak suns (NaN without
    /// a beam), intercept 0..1 (NaN when nothing was launched)] of
    /// `screen`'s flux map.
    pub fn flux_figures(&self, screen: usize) -> Option<Vec<f64>> {
        let a = self.views.analyses.as_ref()?;
        let m = a.flux_maps.get(screen)?;
        let f = a.report.screens.get(screen)?.flux;
        Some(vec![
            m.nx as f64,
            m.ny as f64,
            m.half_mm,
            f.peak_w_m2,
            f.mean_w_m2,
            f.peak_suns.unwrap_or(f64::NAN),
            f.intercept.unwrap_or(f64::NAN),
        ])
    }

    /// Draws the caustic of a dense meridional fan (`rays` per source) over
    /// the view [y0, z0]–[y1, z1] (mm) into `width` × `height` RGBA pixels
    /// (row 0 at y1, column 0 at z0) in one colour whose opacity carries
    /// the ray density; read them with [`Session::caustic_pixels_view`].
    /// Returns the number of pixels.
    #[allow(clippy::too_many_arguments)]
    pub fn caustic_pixels(
        &mut self,
        y0: f64,
        z0: f64,
        y1: f64,
        z1: f64,
        width: usize,
        height: usize,
        rays: u32,
        dark: bool,
    ) -> Result<usize, JsError> {
        if rays == 0 || rays > MAX_CAUSTIC_RAYS {
            return Err(JsError::new(&format!("caustic rays: must be between 1 and {MAX_CAUSTIC_RAYS} (got {rays})")));
        }
        if width == 0 || height == 0 || width > MAX_RASTER_SIDE || height > MAX_RASTER_SIDE {
            return Err(JsError::new(&format!("caustic size: each side must be between 1 and {MAX_RASTER_SIDE} pixels (got {width} × {height})")));
        }
        if ![y0, z0, y1, z1].iter().all(|v| v.is_finite()) || y1 <= y0 || z1 <= z0 {
            return Err(JsError::new("caustic view: needs finite corners with y1 > y0 and z1 > z0"));
        }
        // Fewer rays where each could bounce on and on (a cavity).
        let sources = self.scene.sources.len().max(1) as u64;
        let fits = MAX_VIEW_WORK / work_estimate(&self.scene, 1).max(1).saturating_mul(sources);
        if fits == 0 {
            return Err(JsError::new("caustic: this layout's rays could bounce too often to draw the caustic here"));
        }
        let fan = trace_fan(&self.scene, u64::from(rays).min(fits) as usize, None);
        let density = caustic_raster(&fan, [y0, z0, y1, z1], width, height);
        // A deep brown-red on the light ground, a warm yellow on the dark one.
        let colour = if dark { [255, 204, 110] } else { [150, 45, 10] };
        self.views.caustic = caustic_rgba(&density, colour);
        Ok(width * height)
    }

    /// RGBA bytes of the last caustic picture. View: valid until the next
    /// call into the session. JS wraps it as a `Uint8ClampedArray` over the
    /// same memory (`new Uint8ClampedArray(v.buffer, v.byteOffset,
    /// v.length)`) for one `ImageData`, without a copy.
    pub fn caustic_pixels_view(&self) -> Uint8Array {
        // SAFETY: the view is handed straight to JS, which puts it on a
        // canvas before calling into the session again.
        unsafe { Uint8Array::view(&self.views.caustic) }
    }
}

/// RGBA pixels of `values` through the page's colour map (see
/// [`crate::pixels`]), `lo` → darkest, `hi` → lightest; NaN is
/// transparent. For flux maps (also those a trace worker sent) and colour
/// bars.
#[wasm_bindgen]
pub fn colour_map_rgba(values: &[f64], lo: f64, hi: f64) -> Clamped<Vec<u8>> {
    Clamped(map_rgba(values, lo, hi))
}
