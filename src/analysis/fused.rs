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
//! Each pass runs over fixed chunks of [`super::CHUNK`] hits (on the thread pool
//! natively). In a chunk the sums are kept in [`LANES`] interleaved partial
//! sums (hit k adds to lane k mod LANES): independent chains the compiler
//! turns into vector instructions. Lanes are added in order, then chunks in
//! order, so the figures are the same on every machine and thread count; they
//! agree with the separate analysis functions (`focus_fit`, `wavefront`, …,
//! which sum in hit order) to rounding.

use super::cone::{f_number_from_angle, ConeSums};
use super::energy::EncircledEnergy;
use super::focus::{FocusFit, FocusSums};
use super::select::Subset;
use super::spot::SpotStats;
use super::wavefront::{Cols, Fit, FitSums, ResidualSums, WavefrontStats};
use crate::geometry::Vec3;
use crate::trace::Kernel;
use super::{over_chunks, over_chunks_mut};
use std::ops::Range;

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
    figures_with(crate::trace::Kernel::detect(), sel, wavelength_mm, wavefront)
}

/// The sums of `Q` quantities over every chunk: lanes in order within a
/// chunk, chunks in order.
fn merge<const Q: usize>(parts: &[[Lanes; Q]]) -> [f64; Q] {
    let mut t = [0.0; Q];
    for p in parts {
        for (t, l) in t.iter_mut().zip(p) {
            *t += total(l);
        }
    }
    t
}

/// The hit columns a pass reads (one source's picked hits, or a chunk of
/// them) and their weights.
#[derive(Clone, Copy)]
struct Columns<'c> {
    hit: Cols<'c>,
    w: &'c [f64],
}

impl<'c> Columns<'c> {
    fn part(&self, r: Range<usize>) -> Columns<'c> {
        let h = &self.hit;
        let hit = Cols {
            u: &h.u[r.clone()],
            v: &h.v[r.clone()],
            du: &h.du[r.clone()],
            dv: &h.dv[r.clone()],
            dw: &h.dw[r.clone()],
            opl: &h.opl[r.clone()],
        };
        Columns { hit, w: &self.w[r] }
    }
}

/// Runs `body` for every hit with lane l = (hit mod LANES) and index g:
/// full groups of [`LANES`] hits, then the rest. In a group the named
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

/// Pass 1 of a chunk: focus sums (shifted by the first hit), power-weighted
/// position and direction sums.
#[inline(always)]
fn pass1_body(c: Columns<'_>, first: [f64; 4]) -> [Lanes; 12] {
    let Columns { hit: Cols { u, v, du, dv, dw, .. }, w } = c;
    let mut a = [[0.0; LANES]; 12];
    for_lanes!(u.len(), [u, v, du, dv, dw, w], [], k, l, g, {
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
    a
}

fn pass1(kernel: Kernel, c: Columns<'_>, first: [f64; 4]) -> [Lanes; 12] {
    best_simd!(kernel, pass1_body(c: Columns<'_>, first: [f64; 4]) -> [Lanes; 12])
}

/// Pass 2 of a chunk: the spot's sums, each hit's radius, the cone's
/// extreme ray and (when `WF`) the wavefront fit's sums.
struct Pass2 {
    s2: Lanes,
    rmax2: Lanes,
    cone: ConeLanes,
    fit: [Lanes; 13],
}

/// What pass 2 needs besides the columns.
#[derive(Clone, Copy)]
struct Pass2In<'f, 's, 'a> {
    centroid: [f64; 2],
    /// Direction the cone is measured from.
    m: Vec3,
    /// Index of the chunk's first hit.
    offset: usize,
    fit: Option<&'f Fit<'s, 'a>>,
}

#[inline(always)]
fn pass2_generic<const WF: bool>(c: Columns<'_>, radius: &mut [f64], p: Pass2In) -> Pass2 {
    let Columns { hit: Cols { u, v, du, dv, dw, opl }, w } = c;
    let [cu, cv] = p.centroid;
    let m = p.m;
    let (mut s2, mut rmax2) = ([0.0; LANES], [0.0f64; LANES]);
    let mut cone = ConeLanes::new();
    let mut b = [[0.0; LANES]; 13];
    let f = p.fit.filter(|_| WF);
    let x0 = f.map_or([0.0; 4], |f| f.shift());
    for_lanes!(u.len(), [u, v, du, dv, dw, opl, w], [radius], k, l, g, {
        let r2 = (u[k] - cu) * (u[k] - cu) + (v[k] - cv) * (v[k] - cv);
        s2[l] += w[k] * r2;
        rmax2[l] = rmax2[l].max(r2);
        radius[k] = r2.sqrt();
        cone.add(l, p.offset + g, m, du[k], dv[k], dw[k]);
        if WF {
            if let Some(f) = f {
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
            }
        }
    });
    Pass2 { s2, rmax2, cone, fit: b }
}

#[inline(always)]
fn pass2_fit_body(c: Columns<'_>, radius: &mut [f64], p: Pass2In) -> Pass2 {
    pass2_generic::<true>(c, radius, p)
}

#[inline(always)]
fn pass2_plain_body(c: Columns<'_>, radius: &mut [f64], p: Pass2In) -> Pass2 {
    pass2_generic::<false>(c, radius, p)
}

fn pass2(kernel: Kernel, c: Columns<'_>, radius: &mut [f64], p: Pass2In) -> Pass2 {
    if p.fit.is_some() {
        best_simd!(kernel, pass2_fit_body(c: Columns<'_>, radius: &mut [f64], p: Pass2In) -> Pass2)
    } else {
        best_simd!(kernel, pass2_plain_body(c: Columns<'_>, radius: &mut [f64], p: Pass2In) -> Pass2)
    }
}

/// Pass 3 of a chunk: sums, least and largest of the wavefront residuals.
#[inline(always)]
fn pass3_body(c: Columns<'_>, f: &Fit) -> [Lanes; 4] {
    let Columns { hit: Cols { u, v, du, dv, dw, opl }, w } = c;
    let (mut sum, mut sq, mut lo, mut hi) = ([0.0; LANES], [0.0; LANES], [f64::INFINITY; LANES], [f64::NEG_INFINITY; LANES]);
    for_lanes!(u.len(), [u, v, du, dv, dw, opl, w], [], k, l, g, {
        let r = f.residual_of(f.sample_of(u[k], v[k], du[k], dv[k], dw[k], opl[k]));
        sum[l] += w[k] * r;
        sq[l] += w[k] * r * r;
        lo[l] = lo[l].min(r);
        hi[l] = hi[l].max(r);
    });
    [sum, sq, lo, hi]
}

fn pass3(kernel: Kernel, c: Columns<'_>, f: &Fit) -> [Lanes; 4] {
    best_simd!(kernel, pass3_body(c: Columns<'_>, f: &Fit) -> [Lanes; 4])
}

/// The figures, with the passes' kernels of `kernel`'s instruction set.
pub(crate) fn figures_with(kernel: Kernel, sel: &Subset, wavelength_mm: f64, wavefront: bool) -> Figures {
    let n = sel.n;
    let h = &*sel.h;
    let w = sel.weights();
    let hit = Cols {
        u: &sel.col(&h.u)[..n],
        v: &sel.col(&h.v)[..n],
        du: &sel.col(&h.du)[..n],
        dv: &sel.col(&h.dv)[..n],
        dw: &sel.col(&h.dw)[..n],
        opl: &sel.col(&h.opl)[..n],
    };
    let cols = Columns { hit, w: &w[..n] };
    if n == 0 {
        return Figures { spot: SpotStats::default(), fit: None, f_number: None, wavefront: None, energy: None };
    }

    // Pass 1: centroid, mean direction, best-focus sums.
    let first = [hit.u[0], hit.v[0], hit.du[0] / hit.dw[0], hit.dv[0] / hit.dw[0]];
    let t = merge(&over_chunks(n, |r| pass1(kernel, cols.part(r), first)));
    let focus = FocusSums { first, s: [t[0], t[1], t[2], t[3]], xx: t[4], xp: t[5], pp: t[6], su: t[7], sv: t[8] };
    let fit0 = focus.fit(n, sel.w);
    let centroid = fit0.centroid;
    let md = Vec3::new(t[9], t[10], t[11]);
    let norm = md.norm();
    let mean_dir = (norm > 0.0 && norm.is_finite()).then(|| md / norm);
    sel.set_first_pass(centroid, mean_dir);
    let fit = (n >= 3).then_some(fit0);

    // Pass 2: spot, radii, cone, wavefront fit sums.
    let reference = fit.as_ref().and_then(|f| f.best_point()).unwrap_or([centroid[0], centroid[1], 0.0]);
    let mut wf = if wavefront { Fit::start(sel, reference) } else { None };
    let mut radius = vec![0.0; n];
    let parts = {
        let wf = wf.as_ref();
        over_chunks_mut(&mut radius, |r, out| {
            let p = Pass2In { centroid, m: mean_dir.unwrap_or(Vec3::z()), offset: r.start, fit: wf };
            pass2(kernel, cols.part(r), out, p)
        })
    };
    let mut cone = ConeSums::new(mean_dir.unwrap_or(Vec3::z()));
    let mut rmax2 = 0.0f64;
    for p in &parts {
        p.cone.merge_into(&mut cone);
        rmax2 = p.rmax2.iter().copied().fold(rmax2, f64::max);
    }
    let s2: f64 = parts.iter().map(|p| total(&p.s2)).sum();
    let spot = SpotStats { hits: n as u64, power_w: sel.power, centroid, rms_radius: (s2 / sel.w).sqrt(), max_radius: rmax2.sqrt() };
    let f_number = if n >= 3 && mean_dir.is_some() { f_number_from_angle(cone.angle(hit.du, hit.dv, hit.dw)) } else { None };
    if let Some(f) = wf.as_mut() {
        let fits: Vec<[Lanes; 13]> = parts.iter().map(|p| p.fit).collect();
        let t = merge(&fits);
        let sums = FitSums { s: [t[0], t[1], t[2], t[3]], nn: [t[4], t[5], t[6], t[7], t[8], t[9]], rr: [t[10], t[11], t[12]] };
        if f.solve(&sums).is_none() {
            wf = None;
        }
    }

    // Pass 3: wavefront residuals.
    let mut wavefront = None;
    if let Some(f) = wf.as_ref() {
        let parts = over_chunks(n, |r| pass3(kernel, cols.part(r), f));
        let mut r = ResidualSums { sum: 0.0, s2: 0.0, lo: f64::INFINITY, hi: f64::NEG_INFINITY };
        for [sum, sq, lo, hi] in &parts {
            r.sum += total(sum);
            r.s2 += total(sq);
            r.lo = lo.iter().copied().fold(r.lo, f64::min);
            r.hi = hi.iter().copied().fold(r.hi, f64::max);
        }
        wavefront = f.stats(&r, wavelength_mm);
    }
    let energy = (n >= 3).then(|| EncircledEnergy::from_radii(centroid, radius, &w, rmax2.sqrt()));
    Figures { spot, fit, f_number, wavefront, energy }
}

/// The cone's extreme ray, lane by lane: the largest sin² among rays
/// within 90° of the reference (earliest hit on ties) and the most
/// negative cosine.
struct ConeLanes {
    best: Lanes,
    at: [usize; LANES],
    back: Lanes,
}

impl ConeLanes {
    fn new() -> Self {
        ConeLanes { best: [-1.0; LANES], at: [0; LANES], back: [f64::NEG_INFINITY; LANES] }
    }

    #[inline(always)]
    fn add(&mut self, l: usize, g: usize, m: Vec3, du: f64, dv: f64, dw: f64) {
        let (cx, cy, cz) = (dv * m.z - dw * m.y, dw * m.x - du * m.z, du * m.y - dv * m.x);
        let s2 = cx * cx + cy * cy + cz * cz;
        let c = du * m.x + dv * m.y + dw * m.z;
        let better = (c > 0.0) & (s2 > self.best[l]);
        self.best[l] = if better { s2 } else { self.best[l] };
        self.at[l] = if better { g } else { self.at[l] };
        self.back[l] = if c <= 0.0 { self.back[l].max(-c) } else { self.back[l] };
    }

    /// Merged into `out`: the larger sin², the earlier hit on ties.
    fn merge_into(&self, out: &mut ConeSums) {
        for l in 0..LANES {
            if self.best[l] > out.best || (self.best[l] == out.best && self.best[l] >= 0.0 && self.at[l] < out.at) {
                (out.best, out.at) = (self.best[l], self.at[l]);
            }
            out.back = out.back.max(self.back[l]);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::trace::ScreenHits;

    #[test]
    fn every_kernel_gives_the_same_figures() {
        // Common practice for run-time dispatched SIMD: each instruction
        // set runs the same operations in the same order (no fused
        // multiply-add), so the figures agree bit for bit. A spread spot
        // with a tilted cone, unequal weights, over several chunks.
        let mut h = ScreenHits::default();
        let mut seed = 0x9e37_79b9_7f4a_7c15_u64;
        let mut next = || {
            seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (seed >> 11) as f64 / (1u64 << 53) as f64
        };
        for _ in 0..(3 * super::super::CHUNK + 17) {
            let (a, b) = (next() - 0.5, next() - 0.5);
            let d = Vec3::new(0.1 * a, 0.1 * b + 0.02, 1.0).normalize();
            h.u.push(0.3 * a + 1.0);
            h.v.push(0.2 * b - 2.0);
            h.du.push(d.x);
            h.dv.push(d.y);
            h.dw.push(d.z);
            h.opl.push(1000.0 + 0.01 * a * a + 0.003 * b);
            h.weight.push(0.5 + next());
            h.source.push(0);
            h.first.push(true);
        }
        let sel = Subset::new(&h, Some(0));
        let show = |f: &Figures| format!("{:?} {:?} {:?} {:?} {:?}", f.spot, f.fit, f.f_number, f.wavefront, f.energy);
        let reference = show(&figures_with(Kernel::Portable, &sel, 550e-6, true));
        for k in Kernel::available() {
            assert_eq!(show(&figures_with(k, &sel, 550e-6, true)), reference, "{k:?}");
        }
    }
}
