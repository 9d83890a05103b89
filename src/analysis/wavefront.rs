//! Wavefront error from optical path lengths, and the Strehl estimate.
//!
//! # Method
//!
//! Each hit carries the optical path length (OPL) from its source's launch
//! surface to the screen; for a collimated beam the launch disk is a plane
//! wavefront and for a point lamp the launch point is a spherical one, so
//! equal OPL means one wavefront. The path to a reference sphere centred
//! on a point P (the best-focus centroid, [`super::FocusFit::best_point`])
//! is taken as far as the foot of the perpendicular from P on the ray:
//!
//! W = OPL + d·(P − H)   (H the hit point, d the unit direction)
//!
//! which is the path to a reference sphere of large radius; the term this
//! drops, ε²/(2R) for a ray missing P by ε at a pupil distance R, is below
//! 1e-3 waves for the spots this program measures (ε = 20 µm, R = 1 m gives
//! 2e-7 mm).
//!
//! Moving P by Δ changes W by Δ·d exactly, so fitting W by weighted least
//! squares with the basis {1, a, b, c} — a, b the direction cosines across
//! the power-weighted mean direction m (the pupil coordinates used here)
//! and c = d·m — removes piston, tilt (Δ across m) and defocus (Δ along m):
//! the residual is the wavefront error about the best reference sphere,
//! i.e. at the best diffraction focus. Its weighted RMS σ and P-V are given
//! in waves of the layout's wavelength.
//!
//! OPLs are ~10³ mm while aberrations are ~10⁻⁵ mm: W is taken relative to
//! the first ray's before any sum, and the fit's sums are shifted by the
//! first sample (one pass, then centred exactly by the mean's offset), so
//! f64 keeps ~10⁻¹² mm.
//!
//! # Strehl
//!
//! `strehl = exp(−(2πσ)²)`, σ in waves: the extended Maréchal approximation
//! (Mahajan, JOSA 72, 1258 (1982)); the original Maréchal form is
//! 1 − (2πσ)² (Born & Wolf, Principles of Optics, 7th ed.). A system is
//! called diffraction limited when σ ≤ λ/14 (Maréchal criterion; Strehl
//! ≥ 0.8 in the 1 − x form, 0.82 in the exp form).

use super::select::Subset;
use super::lanes::Lane;
use crate::geometry::Vec3;
use crate::trace::ScreenHits;
use nalgebra::{Matrix3, Vector3};

/// Maréchal criterion: largest RMS wavefront error (waves) still called
/// diffraction limited.
pub const MARECHAL_RMS_WAVES: f64 = 1.0 / 14.0;

/// Singular values below this fraction of the largest are dropped in the
/// least-squares fit (a fan with no spread in x, for example).
const FIT_RCOND: f64 = 1e-10;

/// Wavefront figures of one source on one screen.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WavefrontStats {
    pub hits: usize,
    /// Peak-to-valley of the residual, waves.
    pub pv_waves: f64,
    /// Weighted RMS of the residual, waves.
    pub rms_waves: f64,
    /// exp(−(2π·rms)²).
    pub strehl: f64,
    /// Reference point (screen frame, mm) moved by the removed tilt and
    /// defocus: the best diffraction focus.
    pub best_point: [f64; 3],
}

impl WavefrontStats {
    /// Maréchal criterion, RMS ≤ λ/14.
    pub fn diffraction_limited(&self) -> bool {
        self.rms_waves <= MARECHAL_RMS_WAVES
    }
}

/// Strehl ratio from an RMS wavefront error in waves, exp(−(2πσ)²).
pub fn strehl_from_rms(rms_waves: f64) -> f64 {
    (-(std::f64::consts::TAU * rms_waves).powi(2)).exp()
}

/// The least-squares fit shared by the statistics and the map.
pub(crate) struct Fit<'s, 'a> {
    sel: &'s Subset<'a>,
    p: Vec3,
    m: Vec3,
    e1: Vec3,
    e2: Vec3,
    w0: f64,
    mean: [f64; 4],
    coef: [f64; 3],
}

/// The picked hits' columns as plain slices.
#[derive(Clone, Copy)]
pub(crate) struct Cols<'s> {
    pub u: &'s [f64],
    pub v: &'s [f64],
    pub du: &'s [f64],
    pub dv: &'s [f64],
    pub dw: &'s [f64],
    pub opl: &'s [f64],
}

impl Fit<'_, '_> {
    pub(crate) fn cols(&self) -> Cols<'_> {
        let (s, h) = (&self.sel, &*self.sel.h);
        Cols { u: s.col(&h.u), v: s.col(&h.v), du: s.col(&h.du), dv: s.col(&h.dv), dw: s.col(&h.dw), opl: s.col(&h.opl) }
    }

    /// (a, b, c, W − w0) of picked hit `k` (0-based within the subset).
    #[inline(always)]
    fn sample(&self, c: &Cols, k: usize) -> [f64; 4] {
        self.sample_of(c.u[k], c.v[k], c.du[k], c.dv[k], c.dw[k], c.opl[k])
    }

    /// (a, b, c, W − w0) of a hit at (u, v) with direction (du, dv, dw)
    /// and optical path `opl` (of one hit, or of one hit per lane).
    #[inline(always)]
    pub(crate) fn sample_of<T: Lane>(&self, u: T, v: T, dx: T, dy: T, dz: T, opl: T) -> [T; 4] {
        let (qx, qy, qz) = (T::from(self.p.x) - u, T::from(self.p.y) - v, T::from(self.p.z));
        let w = (opl - T::from(self.w0)) + (dx * qx + dy * qy + dz * qz);
        let dot = |e: &Vec3| dx * T::from(e.x) + dy * T::from(e.y) + dz * T::from(e.z);
        [dot(&self.e1), dot(&self.e2), dot(&self.m), w]
    }

    /// Residual wavefront of picked hit `k`, mm.
    #[inline(always)]
    pub(crate) fn residual(&self, c: &Cols, k: usize) -> f64 {
        self.residual_of(self.sample(c, k))
    }

    /// Residual wavefront of a sample, mm.
    #[inline(always)]
    pub(crate) fn residual_of<T: Lane>(&self, s: [T; 4]) -> T {
        let (m, c) = (self.mean, self.coef);
        (s[3] - T::from(m[3])) - T::from(c[0]) * (s[0] - T::from(m[0])) - T::from(c[1]) * (s[1] - T::from(m[1]))
            - T::from(c[2]) * (s[2] - T::from(m[2]))
    }
}

/// Sums of the fit's one pass over the hits (see [`Fit::add`]): weighted
/// sums of the shifted samples d, of d_a·d_b (a ≤ b < 3) and of d_a·d_3.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct FitSums {
    pub s: [f64; 4],
    pub nn: [f64; 6],
    pub rr: [f64; 3],
}

/// Sums a pass can gather before the reference point and the pupil frame
/// are known: over the hits, Σw·y and Σw·y_i·y_j (i ≤ j, i < 3) of y = x − x₀, where
/// x = (d_u, d_v, d_w, L − (d_u·u + d_v·v)) (d the direction, (u, v) the
/// hit, L its optical path) and x₀ that of the first hit. A sample is
/// linear in x — (a, b, c) = (e₁·d, e₂·d, m·d) and W − w₀ = P·d + x₃ − w₀ —
/// so the fit's shifted sums are these moments carried through that map
/// ([`Fit::sums_from`]): the same spread-only sums, with no pass that
/// needs P first.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct PathMoments {
    pub s: [f64; 4],
    /// Σw·y_i·y_j, i ≤ j, row by row: (0,0) (0,1) (0,2) (0,3) (1,1) (1,2)
    /// (1,3) (2,2) (2,3). Σw·y₃² is not needed: the fit regresses W on
    /// (a, b, c), whose rows of the map have no y₃ term.
    pub ss: [f64; 9],
}

/// What [`path_offset`] measures from: the first hit's d_u, d_v, d_w, L
/// and d_u·u + d_v·v.
pub(crate) fn path_origin(c: &Cols) -> [f64; 5] {
    [c.du[0], c.dv[0], c.dw[0], c.opl[0], c.du[0] * c.u[0] + c.dv[0] * c.v[0]]
}

/// y of a hit (or of one hit per lane) from `origin` (see [`PathMoments`]):
/// the path's large part is differenced before the small terms are added.
#[inline(always)]
pub(crate) fn path_offset<T: Lane>(origin: &[f64; 5], [u, v, du, dv, dw, opl]: [T; 6]) -> [T; 4] {
    let o = |k: usize| T::from(origin[k]);
    [du - o(0), dv - o(1), dw - o(2), (opl - o(3)) - ((du * u + dv * v) - o(4))]
}

/// The 13 terms a hit of weight `w` adds to [`PathMoments`] (`s`, then `ss`).
#[inline(always)]
pub(crate) fn path_terms<T: Lane>(w: T, y: [T; 4]) -> [T; 13] {
    let wy = [w * y[0], w * y[1], w * y[2], w * y[3]];
    [
        wy[0],
        wy[1],
        wy[2],
        wy[3],
        wy[0] * y[0],
        wy[0] * y[1],
        wy[0] * y[2],
        wy[0] * y[3],
        wy[1] * y[1],
        wy[1] * y[2],
        wy[1] * y[3],
        wy[2] * y[2],
        wy[2] * y[3],
    ]
}

/// Residual statistics of the second pass.
#[derive(Debug, Clone, Copy)]
pub(crate) struct ResidualSums {
    pub sum: f64,
    pub s2: f64,
    pub lo: f64,
    pub hi: f64,
}

impl Default for ResidualSums {
    fn default() -> Self {
        ResidualSums { sum: 0.0, s2: 0.0, lo: f64::INFINITY, hi: f64::NEG_INFINITY }
    }
}

impl ResidualSums {
    #[inline(always)]
    pub fn add(&mut self, r: f64, w: f64) {
        self.sum += w * r;
        self.s2 += w * r * r;
        self.lo = self.lo.min(r);
        self.hi = self.hi.max(r);
    }
}

impl<'s, 'a> Fit<'s, 'a> {
    /// The pupil frame and path offsets of a fit about `reference`; `None`
    /// with fewer than 5 hits or when the rays cancel.
    pub(crate) fn start(sel: &'s Subset<'a>, reference: [f64; 3]) -> Option<Fit<'s, 'a>> {
        if sel.n < 5 {
            return None;
        }
        let m = sel.mean_dir()?;
        let helper = if m.x.abs() < 0.9 { Vec3::x() } else { Vec3::y() };
        let e1 = (helper - m * m.dot(&helper)).normalize();
        let e2 = m.cross(&e1);
        let mut f = Fit { sel, p: Vec3::from(reference), m, e1, e2, w0: 0.0, mean: [0.0; 4], coef: [0.0; 3] };
        // W is taken relative to the first ray's; the sums are shifted by
        // the first sample (which keeps them free of cancellation: the
        // spread, not the size, of each quantity is summed) and centred by
        // the mean's offset from it once the pass is over.
        f.w0 = f.sample(&f.cols(), 0)[3];
        f.mean = f.sample(&f.cols(), 0);
        Some(f)
    }

    /// Adds picked hit `k` (weight `w`) to the first pass.
    #[inline(always)]
    pub(crate) fn add(&self, c: &Cols, k: usize, w: f64, acc: &mut FitSums) {
        let x = self.sample(c, k);
        let x0 = &self.mean;
        let d = [x[0] - x0[0], x[1] - x0[1], x[2] - x0[2], x[3] - x0[3]];
        for (s, d) in acc.s.iter_mut().zip(d) {
            *s += w * d;
        }
        acc.nn[0] += w * d[0] * d[0];
        acc.nn[1] += w * d[0] * d[1];
        acc.nn[2] += w * d[0] * d[2];
        acc.nn[3] += w * d[1] * d[1];
        acc.nn[4] += w * d[1] * d[2];
        acc.nn[5] += w * d[2] * d[2];
        for a in 0..3 {
            acc.rr[a] += w * d[a] * d[3];
        }
    }

    /// The first pass's sums from [`PathMoments`] of the same hits (the
    /// first of them the fit's first sample): d = L·y with L's rows e₁, e₂,
    /// m (and 0) and (P, 1), so Σw·d = L·Σw·y and Σw·d·dᵀ = L·(Σw·y·yᵀ)·Lᵀ.
    pub(crate) fn sums_from(&self, pm: &PathMoments) -> FitSums {
        // Where Σw·y_k·y_j sits in `pm.ss`, for k < 3.
        const AT: [[usize; 4]; 3] = [[0, 1, 2, 3], [1, 4, 5, 6], [2, 5, 7, 8]];
        let (e1, e2, m, p) = (self.e1, self.e2, self.m, self.p);
        let rows = [[e1.x, e1.y, e1.z, 0.0], [e2.x, e2.y, e2.z, 0.0], [m.x, m.y, m.z, 0.0], [p.x, p.y, p.z, 1.0]];
        let dot = |a: &[f64; 4], b: &[f64; 4]| a[0] * b[0] + a[1] * b[1] + a[2] * b[2] + a[3] * b[3];
        let s = rows.map(|r| dot(&r, &pm.s));
        // Row a < 3 of L·M (L's rows a < 3 end in 0, so M's last row is not
        // needed), then its product with row b of L.
        let lm = [0, 1, 2].map(|a| [0, 1, 2, 3].map(|j| (0..3).map(|k| rows[a][k] * pm.ss[AT[k][j]]).sum::<f64>()));
        let n = |a: usize, b: usize| dot(&lm[a], &rows[b]);
        FitSums { s, nn: [n(0, 0), n(0, 1), n(0, 2), n(1, 1), n(1, 2), n(2, 2)], rr: [n(0, 3), n(1, 3), n(2, 3)] }
    }

    /// Solves the centred normal equations of the first pass; `None` when
    /// the fit fails (non-finite coefficients).
    pub(crate) fn solve(&mut self, acc: &FitSums) -> Option<()> {
        let wt = self.sel.w;
        let x0 = self.mean;
        let delta = acc.s.map(|v| v / wt);
        self.mean = [x0[0] + delta[0], x0[1] + delta[1], x0[2] + delta[2], x0[3] + delta[3]];
        const AT: [[usize; 3]; 3] = [[0, 1, 2], [1, 3, 4], [2, 4, 5]];
        let n = Matrix3::from_fn(|a, b| acc.nn[AT[a][b]] - wt * delta[a] * delta[b]);
        let r = Vector3::from_fn(|a, _| acc.rr[a] - wt * delta[a] * delta[3]);
        // Scale the columns to unit size so the cut-off is relative.
        let scale = Vector3::from_fn(|k, _| {
            let d = n[(k, k)].max(0.0).sqrt();
            if d > 0.0 { 1.0 / d } else { 0.0 }
        });
        let ns = Matrix3::from_fn(|i, j| n[(i, j)] * scale[i] * scale[j]);
        let rs = r.component_mul(&scale);
        // Checked before the SVD, whose iteration need not end on a NaN.
        if !(ns.iter().all(|v| v.is_finite()) && rs.iter().all(|v| v.is_finite())) {
            return None;
        }
        let svd = ns.svd(true, true);
        let smax = svd.singular_values.max();
        let sol = if smax > 0.0 { svd.solve(&rs, smax * FIT_RCOND).ok()? } else { Vector3::zeros() };
        let c = sol.component_mul(&scale);
        self.coef = [c[0], c[1], c[2]];
        self.coef.iter().all(|v| v.is_finite()).then_some(())
    }

    /// The figures from the second pass's sums.
    pub(crate) fn stats(&self, r: &ResidualSums, wavelength_mm: f64) -> Option<WavefrontStats> {
        let wt = self.sel.w;
        let mean = r.sum / wt;
        let rms = ((r.s2 / wt) - mean * mean).max(0.0).sqrt() / wavelength_mm;
        let pv = (r.hi - r.lo) / wavelength_mm;
        // The removed tilt and defocus move the reference point by −coef
        // along e1, e2, m (W changes by Δ·d when P moves by Δ).
        let best = self.p - (self.e1 * self.coef[0] + self.e2 * self.coef[1] + self.m * self.coef[2]);
        (rms.is_finite() && pv.is_finite()).then(|| WavefrontStats {
            hits: self.sel.n,
            pv_waves: pv,
            rms_waves: rms,
            strehl: strehl_from_rms(rms),
            best_point: [best.x, best.y, best.z],
        })
    }
}

fn fit<'s, 'a>(sel: &'s Subset<'a>, reference: [f64; 3]) -> Option<Fit<'s, 'a>> {
    let mut f = Fit::start(sel, reference)?;
    let cols = f.cols();
    let wts = f.sel.weights();
    let mut acc = FitSums::default();
    for (k, &w) in wts.iter().enumerate() {
        f.add(&cols, k, w, &mut acc);
    }
    f.solve(&acc)?;
    Some(f)
}

/// Wavefront error of the hits of `source` about the best reference sphere
/// (see the module doc). `reference` is the starting centre (screen frame,
/// mm; the result does not depend on it beyond the dropped ε²/2R term);
/// `wavelength_mm` sets the wave unit. `None` with fewer than 5 hits or
/// when the rays cancel. Meaningful for a point-like source only (a star or
/// a lamp), not for a solar disk.
pub fn wavefront(h: &ScreenHits, source: Option<u32>, reference: [f64; 3], wavelength_mm: f64) -> Option<WavefrontStats> {
    wavefront_of(&Subset::new(h, source), reference, wavelength_mm)
}

pub(crate) fn wavefront_of(sel: &Subset, reference: [f64; 3], wavelength_mm: f64) -> Option<WavefrontStats> {
    let f = fit(sel, reference)?;
    let wts = f.sel.weights();
    let cols = f.cols();
    let mut r = ResidualSums::default();
    for (k, &w) in wts.iter().enumerate() {
        r.add(f.residual(&cols, k), w);
    }
    f.stats(&r, wavelength_mm)
}

/// Residual wavefront per hit, for a pupil map.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WavefrontMap {
    /// Pupil coordinates: direction cosines across the mean direction,
    /// divided by the largest radius, so the pupil is the unit disk.
    pub pupil_x: Vec<f64>,
    pub pupil_y: Vec<f64>,
    /// Residual wavefront error (piston, tilt, defocus removed), waves.
    pub opd_waves: Vec<f64>,
}

/// The residual wavefront of every hit of `source` (see [`wavefront`]).
pub fn wavefront_map(h: &ScreenHits, source: Option<u32>, reference: [f64; 3], wavelength_mm: f64) -> Option<WavefrontMap> {
    let sel = Subset::new(h, source);
    let f = fit(&sel, reference)?;
    let mut out = WavefrontMap {
        pupil_x: Vec::with_capacity(f.sel.n),
        pupil_y: Vec::with_capacity(f.sel.n),
        opd_waves: Vec::with_capacity(f.sel.n),
    };
    let mut rmax = 0.0f64;
    let mut mean = 0.0;
    let wts = f.sel.weights();
    let cols = f.cols();
    for (k, &w) in wts.iter().enumerate() {
        let s = f.sample(&cols, k);
        out.pupil_x.push(s[0]);
        out.pupil_y.push(s[1]);
        rmax = rmax.max(s[0].hypot(s[1]));
        let r = f.residual(&cols, k);
        mean += w * r;
        out.opd_waves.push(r);
    }
    mean /= f.sel.w;
    let k = if rmax > 0.0 { 1.0 / rmax } else { 0.0 };
    out.pupil_x.iter_mut().for_each(|x| *x *= k);
    out.pupil_y.iter_mut().for_each(|y| *y *= k);
    out.opd_waves.iter_mut().for_each(|r| *r = (*r - mean) / wavelength_mm);
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::super::test_rng::uniform;
    use super::*;

    #[test]
    fn fit_sums_from_path_moments_match_the_direct_sums() {
        // Textbook identity (the covariance of a linear map, e.g. Anderson,
        // An Introduction to Multivariate Statistical Analysis, 3rd ed.,
        // §2.4): for d = L·y, Σw·d = L·Σw·y and Σw·d·dᵀ = L·(Σw·y·yᵀ)·Lᵀ.
        // The sums from the first pass's moments must equal the sums of
        // each hit's sample about a reference point that pass did not know.
        let mut h = ScreenHits::default();
        let mut rng = uniform(0x2545_f491_4f6c_dd1d);
        let mut next = || rng() - 0.5;
        for _ in 0..500 {
            let (a, b) = (next(), next());
            let d = Vec3::new(0.2 * a + 0.05, 0.15 * b, 1.0).normalize();
            let (u, v) = (3.0 + 0.4 * a + 0.01 * b * b, -1.0 + 0.3 * b);
            h.push(u, v, &d, 2400.0 + 0.002 * a * a - 0.001 * a * b, 1.0 + next(), 0, true);
        }
        let sel = Subset::new(&h, Some(0));
        let f = Fit::start(&sel, [2.5, -0.7, 12.0]).expect("enough hits");
        let (c, w) = (f.cols(), sel.weights());
        let mut direct = FitSums::default();
        let mut pm = PathMoments::default();
        let origin = path_origin(&c);
        for k in 0..sel.n {
            f.add(&c, k, w[k], &mut direct);
            let t = path_terms(w[k], path_offset(&origin, [c.u[k], c.v[k], c.du[k], c.dv[k], c.dw[k], c.opl[k]]));
            pm.s.iter_mut().zip(&t[..4]).for_each(|(s, t)| *s += t);
            pm.ss.iter_mut().zip(&t[4..]).for_each(|(s, t)| *s += t);
        }
        let moved = f.sums_from(&pm);
        let pairs = direct.s.iter().chain(&direct.nn).chain(&direct.rr).zip(moved.s.iter().chain(&moved.nn).chain(&moved.rr));
        for (i, (a, b)) in pairs.enumerate() {
            assert!((a - b).abs() <= 1e-9 * (1.0 + a.abs()), "sum {i}: direct {a}, from moments {b}");
        }
        // Not all zero: the check above compares real spreads.
        assert!(direct.nn[0] > 1e-3 && direct.rr.iter().any(|r| r.abs() > 1e-6), "{direct:?}");
    }
}
