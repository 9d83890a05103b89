//! Every per-source figure of the report in three passes over the hits,
//! instead of one or two passes per analysis: the columns of a million
//! hits are far larger than the caches, so reading them is what costs.
//!
//! 1. Centroid, mean direction (power sums) and the best-focus fit.
//! 2. With those: the spot's RMS and largest radius, each hit's radius for
//!    the encircled energy, the cone's extreme ray, the wavefront fit.
//! 3. With the fit: the wavefront residuals; the encircled-energy
//!    histogram.
//!
//! Each figure is computed by the same accumulators its own function uses
//! (`FocusSums`, `ConeSums`, `Fit`, `EncircledEnergy::from_radii`), so
//! the report equals the separate analyses.

use super::cone::{f_number_from_angle, ConeSums};
use super::energy::EncircledEnergy;
use super::focus::{FocusFit, FocusSums};
use super::select::Subset;
use super::spot::SpotStats;
use super::wavefront::{Fit, FitSums, ResidualSums, WavefrontStats};
use crate::geometry::Vec3;

/// The figures of one source on one screen.
pub(crate) struct Figures {
    pub spot: SpotStats,
    pub fit: Option<FocusFit>,
    pub f_number: Option<f64>,
    pub wavefront: Option<WavefrontStats>,
    pub energy: Option<EncircledEnergy>,
}

/// All figures of `sel`; the wavefront only when `wavefront` (a point-like
/// source), in waves of `wavelength_mm`.
pub(crate) fn figures(sel: &Subset, wavelength_mm: f64, wavefront: bool) -> Figures {
    best_simd!(figures_body(sel: &Subset, wavelength_mm: f64, wavefront: bool) -> Figures)
}

#[inline(always)]
fn figures_body(sel: &Subset, wavelength_mm: f64, wavefront: bool) -> Figures {
    let n = sel.n;
    let h = &*sel.h;
    let w = sel.weights();
    let (u, v) = (sel.col(&h.u), sel.col(&h.v));
    let (du, dv, dw) = (sel.col(&h.du), sel.col(&h.dv), sel.col(&h.dw));
    if n == 0 {
        return Figures { spot: SpotStats::default(), fit: None, f_number: None, wavefront: None, energy: None };
    }

    // Pass 1.
    let mut focus = FocusSums::new(u[0], v[0], du[0] / dw[0], dv[0] / dw[0]);
    let (mut mx, mut my, mut mz) = (0.0, 0.0, 0.0);
    for k in 0..n {
        focus.add(w[k], u[k], v[k], du[k], dv[k], dw[k]);
        mx += du[k] * w[k];
        my += dv[k] * w[k];
        mz += dw[k] * w[k];
    }
    let fit0 = focus.fit(n, sel.w);
    let centroid = fit0.centroid;
    let md = Vec3::new(mx, my, mz);
    let norm = md.norm();
    let mean_dir = (norm > 0.0 && norm.is_finite()).then(|| md / norm);
    sel.set_first_pass(centroid, mean_dir);
    let fit = (n >= 3).then_some(fit0);

    // Pass 2.
    let [cu, cv] = centroid;
    let reference = fit.as_ref().and_then(|f| f.best_point()).unwrap_or([cu, cv, 0.0]);
    let mut wf = if wavefront { Fit::start(sel, reference) } else { None };
    let cols = wf.as_ref().map(|f| f.cols());
    let mut fit_sums = FitSums::default();
    let mut cone = mean_dir.map(ConeSums::new);
    let mut radius = vec![0.0; n];
    let (mut s2, mut rmax2) = (0.0, 0.0f64);
    for k in 0..n {
        let r2 = (u[k] - cu) * (u[k] - cu) + (v[k] - cv) * (v[k] - cv);
        s2 += w[k] * r2;
        rmax2 = rmax2.max(r2);
        radius[k] = r2.sqrt();
        if let Some(c) = cone.as_mut() {
            c.add(k, du[k], dv[k], dw[k]);
        }
        if let (Some(f), Some(c)) = (wf.as_ref(), cols.as_ref()) {
            f.add(c, k, w[k], &mut fit_sums);
        }
    }
    let spot = SpotStats { hits: n as u64, power_w: sel.power, centroid, rms_radius: (s2 / sel.w).sqrt(), max_radius: rmax2.sqrt() };
    let f_number = if n >= 3 { cone.and_then(|c| f_number_from_angle(c.angle(du, dv, dw))) } else { None };
    if let Some(f) = wf.as_mut() {
        if f.solve(&fit_sums).is_none() {
            wf = None;
        }
    }

    // Pass 3.
    let mut wavefront = None;
    if let Some(f) = wf.as_ref() {
        let c = f.cols();
        let mut r = ResidualSums::default();
        for k in 0..n {
            r.add(f.residual(&c, k), w[k]);
        }
        wavefront = f.stats(&r, wavelength_mm);
    }
    let energy = (n >= 3).then(|| EncircledEnergy::from_radii(centroid, radius, w.into_owned(), rmax2.sqrt()));
    Figures { spot, fit, f_number, wavefront, energy }
}
