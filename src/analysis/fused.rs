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
//! The sums are kept in [`LANES`] interleaved partial sums (hit k adds to
//! lane k mod LANES) and the lanes added in order at the end: independent
//! chains the compiler turns into vector instructions. The order is fixed,
//! so the figures are the same on every machine and thread count; they
//! agree with the separate analysis functions (`focus_fit`, `wavefront`, …,
//! which sum in hit order) to rounding.

use super::cone::{f_number_from_angle, ConeSums};
use super::energy::EncircledEnergy;
use super::focus::{FocusFit, FocusSums};
use super::select::Subset;
use super::spot::SpotStats;
use super::wavefront::{Fit, FitSums, ResidualSums, WavefrontStats};
use crate::geometry::Vec3;

/// Interleaved partial sums per quantity.
const LANES: usize = 4;
type Lanes = [f64; LANES];

/// Sum of the lanes, in lane order.
#[inline(always)]
fn total(l: &Lanes) -> f64 {
    l.iter().sum()
}

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
    best_simd!(crate::trace::Kernel::detect(), figures_body(sel: &Subset, wavelength_mm: f64, wavefront: bool) -> Figures)
}

/// Runs `body` for every hit with lane l = (hit mod LANES) and global index
/// g: full groups of [`LANES`] hits, then the rest. In a group the named
/// columns are re-sliced to the group (k = l indexes them), so the
/// compiler sees fixed-length slices and turns the group into vector
/// instructions; in the rest k = g. (A macro, not a closure, so the body
/// is compiled inline with the caller's instruction set.)
macro_rules! for_lanes {
    ($n:expr, [$($col:ident),*], [$($mcol:ident),*], $k:ident, $l:ident, $g:ident, $body:block) => {{
        let n = $n;
        let full = n / LANES * LANES;
        for base in (0..full).step_by(LANES) {
            $(let $col = &$col[base..base + LANES];)*
            $(let $mcol = &mut $mcol[base..base + LANES];)*
            for $l in 0..LANES {
                let $k = $l;
                let $g = base + $l;
                let _ = $g;
                $body
            }
        }
        for $g in full..n {
            let $l = $g - full;
            let $k = $g;
            $body
        }
    }};
}

#[inline(always)]
fn figures_body(sel: &Subset, wavelength_mm: f64, wavefront: bool) -> Figures {
    let n = sel.n;
    let h = &*sel.h;
    let w = sel.weights();
    let w = &w[..n];
    let (u, v) = (&sel.col(&h.u)[..n], &sel.col(&h.v)[..n]);
    let (du, dv, dw) = (&sel.col(&h.du)[..n], &sel.col(&h.dv)[..n], &sel.col(&h.dw)[..n]);
    let opl = &sel.col(&h.opl)[..n];
    if n == 0 {
        return Figures { spot: SpotStats::default(), fit: None, f_number: None, wavefront: None, energy: None };
    }

    // Pass 1: focus sums (shifted by the first hit), power-weighted
    // position and direction sums.
    let first = [u[0], v[0], du[0] / dw[0], dv[0] / dw[0]];
    let mut a = [[0.0; LANES]; 12];
    for_lanes!(n, [u, v, du, dv, dw, w], [], k, l, g, {
        let wk = w[k];
        let inv = 1.0 / dw[k];
        let (x, y, p, q) = (u[k] - first[0], v[k] - first[1], du[k] * inv - first[2], dv[k] * inv - first[3]);
        a[0][l] += wk * x;
        a[1][l] += wk * y;
        a[2][l] += wk * p;
        a[3][l] += wk * q;
        a[4][l] += wk * (x * x + y * y);
        a[5][l] += wk * (x * p + y * q);
        a[6][l] += wk * (p * p + q * q);
        a[7][l] += wk * u[k];
        a[8][l] += wk * v[k];
        a[9][l] += du[k] * wk;
        a[10][l] += dv[k] * wk;
        a[11][l] += dw[k] * wk;
    });
    let t: Vec<f64> = a.iter().map(total).collect();
    let focus = FocusSums { first, s: [t[0], t[1], t[2], t[3]], xx: t[4], xp: t[5], pp: t[6], su: t[7], sv: t[8] };
    let fit0 = focus.fit(n, sel.w);
    let centroid = fit0.centroid;
    let md = Vec3::new(t[9], t[10], t[11]);
    let norm = md.norm();
    let mean_dir = (norm > 0.0 && norm.is_finite()).then(|| md / norm);
    sel.set_first_pass(centroid, mean_dir);
    let fit = (n >= 3).then_some(fit0);

    // Pass 2: spot, radii, cone, wavefront fit sums.
    let [cu, cv] = centroid;
    let reference = fit.as_ref().and_then(|f| f.best_point()).unwrap_or([cu, cv, 0.0]);
    let mut wf = if wavefront { Fit::start(sel, reference) } else { None };
    let mut radius = vec![0.0; n];
    let (mut s2, mut rmax2) = ([0.0; LANES], [0.0f64; LANES]);
    for_lanes!(n, [u, v, w], [radius], k, l, g, {
        let r2 = (u[k] - cu) * (u[k] - cu) + (v[k] - cv) * (v[k] - cv);
        s2[l] += w[k] * r2;
        rmax2[l] = rmax2[l].max(r2);
        radius[k] = r2.sqrt();
    });
    let mut cone = None;
    if let Some(m) = mean_dir {
        cone = Some(cone_pass(m, du, dv, dw));
    }
    let mut fit_sums = FitSums::default();
    if let Some(f) = wf.as_ref() {
        let x0 = f.shift();
        let mut b = [[0.0; LANES]; 13];
        for_lanes!(n, [u, v, du, dv, dw, opl, w], [], k, l, g, {
            let x = f.sample_of(u[k], v[k], du[k], dv[k], dw[k], opl[k]);
            let d = [x[0] - x0[0], x[1] - x0[1], x[2] - x0[2], x[3] - x0[3]];
            let wk = w[k];
            b[0][l] += wk * d[0];
            b[1][l] += wk * d[1];
            b[2][l] += wk * d[2];
            b[3][l] += wk * d[3];
            b[4][l] += wk * d[0] * d[0];
            b[5][l] += wk * d[0] * d[1];
            b[6][l] += wk * d[0] * d[2];
            b[7][l] += wk * d[1] * d[1];
            b[8][l] += wk * d[1] * d[2];
            b[9][l] += wk * d[2] * d[2];
            b[10][l] += wk * d[0] * d[3];
            b[11][l] += wk * d[1] * d[3];
            b[12][l] += wk * d[2] * d[3];
        });
        let t: Vec<f64> = b.iter().map(total).collect();
        fit_sums = FitSums { s: [t[0], t[1], t[2], t[3]], nn: [t[4], t[5], t[6], t[7], t[8], t[9]], rr: [t[10], t[11], t[12]] };
    }
    let rmax2 = rmax2.iter().copied().fold(0.0, f64::max);
    let spot = SpotStats {
        hits: n as u64,
        power_w: sel.power,
        centroid,
        rms_radius: (total(&s2) / sel.w).sqrt(),
        max_radius: rmax2.sqrt(),
    };
    let f_number = if n >= 3 { cone.and_then(|c| f_number_from_angle(c.angle(du, dv, dw))) } else { None };
    if let Some(f) = wf.as_mut() {
        if f.solve(&fit_sums).is_none() {
            wf = None;
        }
    }

    // Pass 3: wavefront residuals.
    let mut wavefront = None;
    if let Some(f) = wf.as_ref() {
        let (mut sum, mut sq, mut lo, mut hi) = ([0.0; LANES], [0.0; LANES], [f64::INFINITY; LANES], [f64::NEG_INFINITY; LANES]);
        for_lanes!(n, [u, v, du, dv, dw, opl, w], [], k, l, g, {
            let r = f.residual_of(f.sample_of(u[k], v[k], du[k], dv[k], dw[k], opl[k]));
            sum[l] += w[k] * r;
            sq[l] += w[k] * r * r;
            lo[l] = lo[l].min(r);
            hi[l] = hi[l].max(r);
        });
        let r = ResidualSums {
            sum: total(&sum),
            s2: total(&sq),
            lo: lo.iter().copied().fold(f64::INFINITY, f64::min),
            hi: hi.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        };
        wavefront = f.stats(&r, wavelength_mm);
    }
    let energy = (n >= 3).then(|| EncircledEnergy::from_radii(centroid, radius, w, rmax2.sqrt()));
    Figures { spot, fit, f_number, wavefront, energy }
}

/// The cone's extreme ray: lane-wise largest sin² among rays within 90° of
/// `m` (earliest hit on ties) and the most negative cosine, merged.
#[inline(always)]
fn cone_pass(m: Vec3, du: &[f64], dv: &[f64], dw: &[f64]) -> ConeSums {
    let (mut best, mut at, mut back) = ([-1.0f64; LANES], [0usize; LANES], [f64::NEG_INFINITY; LANES]);
    for_lanes!(du.len(), [du, dv, dw], [], k, l, g, {
        let (cx, cy, cz) = (dv[k] * m.z - dw[k] * m.y, dw[k] * m.x - du[k] * m.z, du[k] * m.y - dv[k] * m.x);
        let s2 = cx * cx + cy * cy + cz * cz;
        let c = du[k] * m.x + dv[k] * m.y + dw[k] * m.z;
        let better = (c > 0.0) & (s2 > best[l]);
        best[l] = if better { s2 } else { best[l] };
        at[l] = if better { g } else { at[l] };
        back[l] = if c <= 0.0 { back[l].max(-c) } else { back[l] };
    });
    let mut out = ConeSums::new(m);
    for l in 0..LANES {
        if best[l] > out.best || (best[l] == out.best && best[l] >= 0.0 && at[l] < out.at) {
            (out.best, out.at) = (best[l], at[l]);
        }
        out.back = out.back.max(back[l]);
    }
    out
}
