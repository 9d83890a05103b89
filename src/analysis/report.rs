//! The trace report: the JSON document `catoptric trace --json` prints and
//! the page's statistics table shows (docs/FORMATS.md §3), and [`analyse_all`],
//! which adds the curves and maps the page draws.
//!
//! Analysis keys are `null` where they mean nothing: fewer than 3 hits
//! (5 for the wavefront), rays arriving parallel (no focus, no f-number),
//! or an extended solar source (no single wavefront).

use super::cone::airy_radius;
use super::flux::{flux_map, flux_stats_with, FluxMap, FluxStats, DEFAULT_FLUX_GRID};
use super::focus::{default_focus_range, through_focus_of, ThroughFocus};
use super::select::Subset;
use super::join;
use crate::layout::Source;
use crate::scene::Scene;
use crate::trace::{ScreenHits, TraceResult};
use serde::Serialize;

/// Figures for one source on one screen.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct SourceReport {
    pub source: String,
    pub hits: u64,
    pub power_w: f64,
    pub centroid_mm: [f64; 2],
    pub rms_radius_um: f64,
    pub max_radius_um: f64,
    /// Screen shift of the smallest RMS spot, mm, positive along the
    /// screen's axis (toward the arriving light).
    pub best_focus_shift_mm: Option<f64>,
    pub rms_radius_at_best_um: Option<f64>,
    /// Working f-number 1/(2 sin θmax) of the arriving cone.
    pub f_number: Option<f64>,
    /// 1.22 λ N, µm.
    pub airy_radius_um: Option<f64>,
    /// Residual wavefront (piston, tilt, defocus removed), waves.
    pub wavefront_pv_waves: Option<f64>,
    pub wavefront_rms_waves: Option<f64>,
    /// exp(−(2π·rms)²) (extended Maréchal, Mahajan 1982).
    pub strehl_estimate: Option<f64>,
    /// Maréchal criterion: RMS wavefront ≤ λ/14.
    pub diffraction_limited: Option<bool>,
    /// Encircled-energy radii about the centroid at the screen, µm.
    pub ee50_radius_um: Option<f64>,
    pub ee80_radius_um: Option<f64>,
}

/// Rays that reached a screen (each counted once, at its first arrival)
/// and the power they brought, W.
pub fn first_arrivals(h: &ScreenHits) -> (u64, f64) {
    // Chunk by chunk, four interleaved sums per chunk (a fixed order).
    // Hits recorded without the flag count as first.
    let parts = super::over_chunks(h.weight.len(), |r| {
        let (w, f) = (&h.weight[r.clone()], h.first.get(r.start..r.end.min(h.first.len())).unwrap_or(&[]));
        let (mut n, mut l) = (0u64, [0.0; 4]);
        // Every hit flagged (a trace's result): whole groups of four in a
        // loop the compiler vectorises; the rest hit by hit (the same
        // sums in the same order).
        let mut done = 0;
        if f.len() == w.len() {
            for (wq, fq) in w.chunks_exact(4).zip(f.chunks_exact(4)) {
                for j in 0..4 {
                    n += fq[j] as u64;
                    l[j] += if fq[j] { wq[j] } else { 0.0 };
                }
            }
            done = w.len() - w.len() % 4;
        }
        for (k, &wk) in w.iter().enumerate().skip(done) {
            let first = f.get(k).copied().unwrap_or(true);
            n += first as u64;
            l[k & 3] += if first { wk } else { 0.0 };
        }
        (n, l.iter().sum::<f64>())
    });
    parts.iter().fold((0, 0.0), |(n, w), p| (n + p.0, w + p.1))
}

/// Figures for one screen.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ScreenReport {
    pub id: String,
    /// Rays that reached the screen, each counted once.
    pub hits: u64,
    /// Every recorded crossing: more than `hits` when rays come back (a
    /// screen inside a cavity).
    pub crossings: u64,
    pub power_w: f64,
    pub by_source: Vec<SourceReport>,
    /// Flux of all sources together on a [`DEFAULT_FLUX_GRID`]-square grid.
    pub flux: FluxStats,
}

/// The whole report.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct TraceReport {
    pub rays_launched: u64,
    pub rays_escaped: u64,
    pub rays_absorbed: u64,
    pub screens: Vec<ScreenReport>,
}

/// Curves of one source on one screen, for plotting.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SourceCurves {
    /// Index into `scene.sources`.
    pub source: usize,
    /// RMS radius versus shift over [`default_focus_range`].
    pub through_focus: Option<ThroughFocus>,
    /// Encircled energy: radius (µm) and fraction.
    pub encircled_radius_um: Vec<f64>,
    pub encircled_fraction: Vec<f64>,
}

/// Everything the analysis drawer shows for one trace.
#[derive(Debug, Clone, PartialEq)]
pub struct Analyses {
    pub report: TraceReport,
    /// One flux map per screen ([`DEFAULT_FLUX_GRID`] square).
    pub flux_maps: Vec<FluxMap>,
    /// Per screen, the curves of each source that reached it (same order
    /// as `report.screens[k].by_source`).
    pub curves: Vec<Vec<SourceCurves>>,
}

/// Points in each plotted curve.
pub const CURVE_POINTS: usize = 101;

fn analyse_source(scene: &Scene, hits: &ScreenHits, si: usize, curves: bool) -> Option<(SourceReport, SourceCurves)> {
    let sel = Subset::new(hits, Some(si as u32));
    if sel.n == 0 {
        return None;
    }
    let lambda = scene.wavelength_mm;
    let extended = matches!(&scene.sources[si], Source::Beam(b) if b.sun_half_angle_mrad > 0.0);
    let figures = super::fused::figures(&sel, lambda, !extended);
    let (st, fit, n, wf, ee) = (figures.spot, figures.fit, figures.f_number, figures.wavefront, figures.energy);
    let best = fit.as_ref().and_then(|f| f.best_shift());
    let points = if curves { CURVE_POINTS } else { 0 };
    let (ee_radii, ee_curve) = ee.as_ref().map_or((vec![None, None], Default::default()), |e| e.radii_and_curve(&[0.5, 0.8], points));
    let um = |v: Option<f64>| v.map(|x| x * 1e3);
    let report = SourceReport {
        source: scene.sources[si].id().to_string(),
        hits: st.hits,
        power_w: st.power_w,
        centroid_mm: st.centroid,
        rms_radius_um: st.rms_radius * 1e3,
        max_radius_um: st.max_radius * 1e3,
        best_focus_shift_mm: best,
        rms_radius_at_best_um: um(fit.as_ref().and_then(|f| f.rms_at_best())),
        f_number: n,
        airy_radius_um: um(n.map(|n| airy_radius(lambda, n))),
        wavefront_pv_waves: wf.map(|w| w.pv_waves),
        wavefront_rms_waves: wf.map(|w| w.rms_waves),
        strehl_estimate: wf.map(|w| w.strehl),
        diffraction_limited: wf.map(|w| w.diffraction_limited()),
        ee50_radius_um: um(ee_radii[0]),
        ee80_radius_um: um(ee_radii[1]),
    };
    let through_focus = fit.map(|f| {
        let (a, b) = default_focus_range(&f);
        through_focus_of(&f, a, b, CURVE_POINTS)
    });
    let (encircled_radius_um, encircled_fraction) = ee_curve;
    Some((report, SourceCurves { source: si, through_focus, encircled_radius_um, encircled_fraction }))
}

/// Runs every analysis of a finished trace: the report plus the curves and
/// flux maps. O(hits × sources) apart from one sort per (screen, source)
/// for the encircled energy; no allocation per hit beyond result arrays.
pub fn analyse_all(scene: &Scene, res: &TraceResult) -> Analyses {
    analyse(scene, res, true)
}

/// The analyses, with or without the plotted encircled-energy curves.
fn analyse(scene: &Scene, res: &TraceResult, with_curves: bool) -> Analyses {
    let mut screens = Vec::with_capacity(res.screens.len());
    let mut flux_maps = Vec::with_capacity(res.screens.len());
    let mut curves = Vec::with_capacity(res.screens.len());
    let per_screen = |k: usize| {
        let hits = &res.screens[k];
        let ((by_source, c), map) = join(
            || -> (Vec<_>, Vec<_>) { (0..scene.sources.len()).filter_map(|si| analyse_source(scene, hits, si, with_curves)).unzip() },
            || flux_map(scene, res, k, DEFAULT_FLUX_GRID, DEFAULT_FLUX_GRID).unwrap_or_default(),
        );
        let (arrivals, power_w) = first_arrivals(hits);
        let flux = flux_stats_with(scene, res, k, &map, power_w);
        let id = scene.screen_ids[k].clone();
        let crossings = hits.len() as u64;
        (ScreenReport { id, hits: arrivals, crossings, power_w, by_source, flux }, map, c)
    };
    for k in 0..res.screens.len().min(scene.screen_ids.len()) {
        let (r, map, c) = per_screen(k);
        screens.push(r);
        flux_maps.push(map);
        curves.push(c);
    }
    let report = TraceReport {
        rays_launched: res.rays_launched,
        rays_escaped: res.rays_escaped,
        rays_absorbed: res.rays_absorbed,
        screens,
    };
    Analyses { report, flux_maps, curves }
}

/// Builds the report of a finished trace.
pub fn trace_report(scene: &Scene, res: &TraceResult) -> TraceReport {
    analyse(scene, res, false).report
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::test_rng::uniform;

    /// The definition: per chunk, hit k adds to sum k mod 4 when it is a
    /// first arrival (missing flags count as first); chunks in order.
    fn by_definition(h: &ScreenHits) -> (u64, f64) {
        let (mut n, mut total) = (0u64, 0.0);
        for c in (0..h.weight.len()).step_by(crate::analysis::CHUNK) {
            let mut l = [0.0; 4];
            for k in c..(c + crate::analysis::CHUNK).min(h.weight.len()) {
                let first = h.first.get(k).copied().unwrap_or(true);
                n += first as u64;
                l[(k - c) % 4] += if first { h.weight[k] } else { 0.0 };
            }
            total += l.iter().sum::<f64>();
        }
        (n, total)
    }

    #[test]
    fn first_arrivals_are_the_defined_sums_to_the_bit() {
        // Our choice of grouping, pinned: the vector loop over flagged hits
        // and the loop for hits recorded without flags give these bits.
        let mut rnd = uniform(7);
        for len in [0, 1, 3, 4, 5, 1000, crate::analysis::CHUNK + 3, 2 * crate::analysis::CHUNK + 7] {
            let weight: Vec<f64> = (0..len).map(|_| rnd() * 10f64.powi((rnd() * 12.0) as i32 - 6)).collect();
            let first: Vec<bool> = (0..len).map(|_| rnd() < 0.8).collect();
            for flags in [len, len / 2, 0] {
                let h = ScreenHits { weight: weight.clone(), first: first[..flags].to_vec(), ..Default::default() };
                let (n, w) = first_arrivals(&h);
                let (n0, w0) = by_definition(&h);
                assert_eq!(n, n0, "len {len} flags {flags}");
                assert_eq!(w.to_bits(), w0.to_bits(), "len {len} flags {flags}");
            }
        }
    }
}
