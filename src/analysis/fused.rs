//! Every per-source figure of the report in two passes over the hits,
//! instead of one or two passes per analysis: the columns of a million
//! hits are far larger than the caches, so reading them is what costs.
//!
//! 1. Centroid, mean direction (power sums), the best-focus fit and the
//!    path moments the wavefront fit is made from (see
//!    [`super::wavefront`]'s `PathMoments`: the fit needs the best-focus
//!    point, which this pass finds, only after the sums are made).
//! 2. With those: the spot's RMS and largest radius, each hit's radius for
//!    the encircled energy, the cone's extreme ray, the wavefront
//!    residuals.
//!
//! The encircled-energy histogram then reads the radii alone.
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
use super::lanes::{groups, Quad, V4, LANES};
#[cfg(target_arch = "x86_64")]
use super::lanes::Y4;
use super::select::Subset;
use super::spot::SpotStats;
use super::wavefront::{path_offset, path_origin, path_terms, Cols, Fit, PathMoments, ResidualSums, WavefrontStats};
use crate::geometry::Vec3;
use crate::trace::Kernel;
use super::{over_chunks, over_chunks_mut};
use std::mem::MaybeUninit;
use std::ops::Range;

/// Interleaved partial sums per quantity.
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

/// Hits per block of a pass, a whole number of [`LANES`]: each of the
/// pass's loops runs over one block while its columns sit in the
/// first-level cache. Separate loops, each with few running sums, keep
/// those sums in vector registers. A hit adds to the same lane in the same
/// order as in one loop over the chunk, so blocking changes no bit.
const BLOCK: usize = 256;
const _: () = assert!(BLOCK.is_multiple_of(LANES));

/// The blocks of `0..n`, in order. (An iterator, not a function taking
/// the loop's body as a closure: a closure not inlined would be compiled
/// without its caller's instruction set.)
#[inline(always)]
fn blocks(n: usize) -> impl Iterator<Item = Range<usize>> {
    (0..n).step_by(BLOCK).map(move |start| start..(start + BLOCK).min(n))
}

/// Pass 1 of a chunk: focus sums (shifted by the first hit), power-weighted
/// position and direction sums, and (when `WF`) the path moments the
/// wavefront fit is made from.
struct Pass1 {
    focus: [Lanes; 12],
    path: [Lanes; 13],
}

#[inline(always)]
fn pass1_generic<const WF: bool, Q: Quad>(c: Columns<'_>, first: [f64; 4], origin: [f64; 5]) -> Pass1 {
    let mut out = Pass1 { focus: [[0.0; LANES]; 12], path: [[0.0; LANES]; 13] };
    for r in blocks(c.w.len()) {
        focus_block(c.part(r.clone()), first, &mut out.focus);
        if WF {
            path_block::<Q>(c.part(r), &origin, &mut out.path);
        }
    }
    out
}

/// The focus, centroid and direction sums over one block.
#[inline(always)]
fn focus_block(c: Columns<'_>, first: [f64; 4], out: &mut [Lanes; 12]) {
    let Columns { hit: Cols { u, v, du, dv, dw, .. }, w } = c;
    // Running sums in a local, so they stay in registers.
    let mut a = *out;
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
    *out = a;
}

/// The path moments over one block: groups of [`LANES`] hits as four
/// lanes, then the rest one by one into lanes 0, 1, …
#[inline(always)]
fn path_block<Q: Quad>(c: Columns<'_>, origin: &[f64; 5], out: &mut [Lanes; 13]) {
    let Columns { hit: Cols { u, v, du, dv, dw, opl }, w } = c;
    // Loops, not `map` with a closure: a closure called from the library's
    // `map` is compiled without the caller's instruction set.
    let mut b = [Q::from(0.0); 13];
    for (b, o) in b.iter_mut().zip(out.iter()) {
        *b = Q::load(o);
    }
    let ([gu, gv, gdu, gdv, gdw, gopl, gw], full) = groups([u, v, du, dv, dw, opl, w]);
    for q in 0..gu.len() {
        // Spelled out: `[…].map(…)` is left as a call in this loop.
        let y = path_offset(origin, [Q::load(&gu[q]), Q::load(&gv[q]), Q::load(&gdu[q]), Q::load(&gdv[q]), Q::load(&gdw[q]), Q::load(&gopl[q])]);
        for (s, t) in b.iter_mut().zip(path_terms(Q::load(&gw[q]), y)) {
            *s = *s + t;
        }
    }
    for (o, b) in out.iter_mut().zip(b) {
        *o = b.lanes();
    }
    for g in full..u.len() {
        let y = path_offset(origin, [u[g], v[g], du[g], dv[g], dw[g], opl[g]]);
        for (s, t) in out.iter_mut().zip(path_terms(w[g], y)) {
            s[g - full] += t;
        }
    }
}

#[inline(always)]
fn pass1_path_body(c: Columns<'_>, first: [f64; 4], origin: [f64; 5]) -> Pass1 {
    pass1_generic::<true, V4>(c, first, origin)
}

#[inline(always)]
fn pass1_plain_body(c: Columns<'_>, first: [f64; 4], origin: [f64; 5]) -> Pass1 {
    pass1_generic::<false, V4>(c, first, origin)
}

/// Pass 1 on [`Y4`]s, for a caller compiled with AVX2 or more.
#[cfg(target_arch = "x86_64")]
#[inline(always)]
fn pass1_y4(c: Columns<'_>, first: [f64; 4], origin: Option<[f64; 5]>) -> Pass1 {
    match origin {
        Some(origin) => pass1_generic::<true, Y4>(c, first, origin),
        None => pass1_generic::<false, Y4>(c, first, [0.0; 5]),
    }
}

/// Pass 1 with AVX registers (see [`Y4`]).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn pass1_avx2(c: Columns<'_>, first: [f64; 4], origin: Option<[f64; 5]>) -> Pass1 {
    pass1_y4(c, first, origin)
}

/// Pass 1 with AVX registers on a CPU with AVX-512: the same `Y4`
/// operations, with AVX-512's 32 vector registers to hold the path
/// moments' 13 running sums and their terms (16 spill). The 2-thread
/// report of the f/4 scene 6.9 → 6.1 ms on an AVX-512 machine.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,avx512f,avx512vl")]
fn pass1_avx512(c: Columns<'_>, first: [f64; 4], origin: Option<[f64; 5]>) -> Pass1 {
    pass1_y4(c, first, origin)
}

fn pass1(kernel: Kernel, c: Columns<'_>, first: [f64; 4], origin: Option<[f64; 5]>) -> Pass1 {
    #[cfg(target_arch = "x86_64")]
    match kernel {
        // SAFETY: `Kernel::available` names each only on CPUs with its
        // features.
        Kernel::Avx512 => return unsafe { pass1_avx512(c, first, origin) },
        Kernel::Avx2 => return unsafe { pass1_avx2(c, first, origin) },
        Kernel::Portable => {}
    }
    // The portable copies (`kernel` is Portable here on x86-64).
    match origin {
        Some(origin) => best_simd!(kernel, pass1_path_body(c: Columns<'_>, first: [f64; 4], origin: [f64; 5]) -> Pass1),
        None => {
            let origin = [0.0; 5];
            best_simd!(kernel, pass1_plain_body(c: Columns<'_>, first: [f64; 4], origin: [f64; 5]) -> Pass1)
        }
    }
}

/// Pass 2 of a chunk: the spot's sums, each hit's radius, the cone's
/// extreme ray and (when `WF`) the wavefront residuals' sums, least and
/// largest.
struct Pass2 {
    s2: Lanes,
    rmax2: Lanes,
    cone: ConeBest,
    residual: [Lanes; 4],
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
fn pass2_generic<const WF: bool, Q: Quad>(c: Columns<'_>, radius: &mut [MaybeUninit<f64>], p: Pass2In) -> Pass2 {
    let no_residual = [[0.0; LANES], [0.0; LANES], [f64::INFINITY; LANES], [f64::NEG_INFINITY; LANES]];
    let mut out = Pass2 { s2: [0.0; LANES], rmax2: [0.0; LANES], cone: ConeBest::new(), residual: no_residual };
    let f = p.fit.filter(|_| WF);
    for r in blocks(c.w.len()) {
        let b = c.part(r.clone());
        spot_block::<Q>(b, &mut radius[r.clone()], p.centroid, &mut out.s2, &mut out.rmax2);
        out.cone.block::<Q>(b, p.m, p.offset + r.start);
        if let Some(f) = f {
            residual_block::<Q>(b, f, &mut out.residual);
        }
    }
    out
}

/// The spot's sums and each hit's radius about `centroid`, over one block
/// (groups of [`LANES`] hits as four lanes, then the rest one by one).
#[inline(always)]
fn spot_block<Q: Quad>(c: Columns<'_>, radius: &mut [MaybeUninit<f64>], centroid: [f64; 2], s2_out: &mut Lanes, rmax2_out: &mut Lanes) {
    let Columns { hit: Cols { u, v, .. }, w } = c;
    let (cu, cv) = (Q::from(centroid[0]), Q::from(centroid[1]));
    // Running sums in locals, so they stay in registers.
    let (mut s2, mut rmax2) = (Q::load(s2_out), Q::load(rmax2_out));
    let ([gu, gv, gw], full) = groups([u, v, w]);
    let (gr, rest) = radius.as_chunks_mut::<LANES>();
    for (((r, u), v), w) in gr.iter_mut().zip(gu).zip(gv).zip(gw) {
        let (x, y) = (Q::load(u) - cu, Q::load(v) - cv);
        let r2 = x * x + y * y;
        s2 = s2 + Q::load(w) * r2;
        // As f64::max for numbers (a NaN radius is passed over).
        rmax2 = rmax2.greatest(r2);
        *r = r2.sqrt().lanes().map(MaybeUninit::new);
    }
    let ([cu, cv], mut s2, mut rmax2) = (centroid, s2.lanes(), rmax2.lanes());
    for (l, r) in rest.iter_mut().enumerate() {
        let g = full + l;
        let r2 = (u[g] - cu) * (u[g] - cu) + (v[g] - cv) * (v[g] - cv);
        s2[l] += w[g] * r2;
        rmax2[l] = if r2 > rmax2[l] { r2 } else { rmax2[l] };
        *r = MaybeUninit::new(r2.sqrt());
    }
    (*s2_out, *rmax2_out) = (s2, rmax2);
}

#[inline(always)]
fn pass2_fit_body(c: Columns<'_>, radius: &mut [MaybeUninit<f64>], p: Pass2In) -> Pass2 {
    pass2_generic::<true, V4>(c, radius, p)
}

#[inline(always)]
fn pass2_plain_body(c: Columns<'_>, radius: &mut [MaybeUninit<f64>], p: Pass2In) -> Pass2 {
    pass2_generic::<false, V4>(c, radius, p)
}

/// Pass 2 with AVX registers (see [`Y4`]).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn pass2_avx2(c: Columns<'_>, radius: &mut [MaybeUninit<f64>], p: Pass2In) -> Pass2 {
    pass2_y4(c, radius, p)
}

/// Pass 2 on [`Y4`]s, for a caller compiled with AVX2 or more.
#[cfg(target_arch = "x86_64")]
#[inline(always)]
fn pass2_y4(c: Columns<'_>, radius: &mut [MaybeUninit<f64>], p: Pass2In) -> Pass2 {
    if p.fit.is_some() { pass2_generic::<true, Y4>(c, radius, p) } else { pass2_generic::<false, Y4>(c, radius, p) }
}

/// Pass 2 with AVX registers on a CPU with AVX-512 (see [`pass1_avx512`]).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,avx512f,avx512vl")]
fn pass2_avx512(c: Columns<'_>, radius: &mut [MaybeUninit<f64>], p: Pass2In) -> Pass2 {
    pass2_y4(c, radius, p)
}

fn pass2(kernel: Kernel, c: Columns<'_>, radius: &mut [MaybeUninit<f64>], p: Pass2In) -> Pass2 {
    #[cfg(target_arch = "x86_64")]
    match kernel {
        // SAFETY: `Kernel::available` names each only on CPUs with its
        // features.
        Kernel::Avx512 => return unsafe { pass2_avx512(c, radius, p) },
        Kernel::Avx2 => return unsafe { pass2_avx2(c, radius, p) },
        Kernel::Portable => {}
    }
    // The portable copies (`kernel` is Portable here on x86-64).
    if p.fit.is_some() {
        best_simd!(kernel, pass2_fit_body(c: Columns<'_>, radius: &mut [MaybeUninit<f64>], p: Pass2In) -> Pass2)
    } else {
        best_simd!(kernel, pass2_plain_body(c: Columns<'_>, radius: &mut [MaybeUninit<f64>], p: Pass2In) -> Pass2)
    }
}

/// Sums, least and largest of the wavefront residuals over one block
/// (groups of [`LANES`] hits as four lanes, then the rest one by one into
/// lanes 0, 1, …).
#[inline(always)]
fn residual_block<Q: Quad>(c: Columns<'_>, f: &Fit, out: &mut [Lanes; 4]) {
    let Columns { hit: Cols { u, v, du, dv, dw, opl }, w } = c;
    let [mut sum, mut sq, mut lo, mut hi] = [Q::load(&out[0]), Q::load(&out[1]), Q::load(&out[2]), Q::load(&out[3])];
    let ([gu, gv, gdu, gdv, gdw, gopl, gw], full) = groups([u, v, du, dv, dw, opl, w]);
    for q in 0..gu.len() {
        let r = f.residual_of(f.sample_of(Q::load(&gu[q]), Q::load(&gv[q]), Q::load(&gdu[q]), Q::load(&gdv[q]), Q::load(&gdw[q]), Q::load(&gopl[q])));
        let wk = Q::load(&gw[q]);
        sum = sum + wk * r;
        sq = sq + wk * r * r;
        lo = lo.least(r);
        hi = hi.greatest(r);
    }
    let [mut sum, mut sq, mut lo, mut hi] = [sum.lanes(), sq.lanes(), lo.lanes(), hi.lanes()];
    for g in full..u.len() {
        let (r, l) = (f.residual_of(f.sample_of(u[g], v[g], du[g], dv[g], dw[g], opl[g])), g - full);
        sum[l] += w[g] * r;
        sq[l] += w[g] * r * r;
        lo[l] = if r < lo[l] { r } else { lo[l] };
        hi[l] = if r > hi[l] { r } else { hi[l] };
    }
    *out = [sum, sq, lo, hi];
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

    // Pass 1: centroid, mean direction, best-focus sums, path moments.
    let first = [hit.u[0], hit.v[0], hit.du[0] / hit.dw[0], hit.dv[0] / hit.dw[0]];
    let origin = (wavefront && n >= 5).then(|| path_origin(&hit));
    let parts = over_chunks(n, |r| pass1(kernel, cols.part(r), first, origin));
    let t = merge(&parts.iter().map(|p| p.focus).collect::<Vec<_>>());
    let focus = FocusSums { first, s: [t[0], t[1], t[2], t[3]], xx: t[4], xp: t[5], pp: t[6], su: t[7], sv: t[8] };
    let fit0 = focus.fit(n, sel.w);
    let centroid = fit0.centroid;
    let md = Vec3::new(t[9], t[10], t[11]);
    let norm = md.norm();
    let mean_dir = (norm > 0.0 && norm.is_finite()).then(|| md / norm);
    sel.set_first_pass(centroid, mean_dir);
    let fit = (n >= 3).then_some(fit0);

    // The wavefront fit, from the path moments about the best-focus point.
    let reference = fit.as_ref().and_then(|f| f.best_point()).unwrap_or([centroid[0], centroid[1], 0.0]);
    let mut wf = if origin.is_some() { Fit::start(sel, reference) } else { None };
    if let Some(f) = wf.as_mut() {
        let t = merge(&parts.iter().map(|p| p.path).collect::<Vec<_>>());
        let pm = PathMoments { s: [t[0], t[1], t[2], t[3]], ss: [t[4], t[5], t[6], t[7], t[8], t[9], t[10], t[11], t[12]] };
        let sums = f.sums_from(&pm);
        if f.solve(&sums).is_none() {
            wf = None;
        }
    }

    // Pass 2: spot, radii, cone, wavefront residuals.
    let mut radius: Vec<f64> = Vec::with_capacity(n);
    let parts = {
        let wf = wf.as_ref();
        over_chunks_mut(&mut radius.spare_capacity_mut()[..n], |r, out| {
            let p = Pass2In { centroid, m: mean_dir.unwrap_or(Vec3::z()), offset: r.start, fit: wf };
            pass2(kernel, cols.part(r), out, p)
        })
    };
    // SAFETY: pass 2 wrote every radius: each chunk's `spot_block`s cover
    // its part of the column, and the parts cover `0..n`.
    unsafe { radius.set_len(n) };
    let mut cone = ConeSums::new(mean_dir.unwrap_or(Vec3::z()));
    let mut rmax2 = 0.0f64;
    for p in &parts {
        p.cone.merge_into(&mut cone);
        rmax2 = p.rmax2.iter().copied().fold(rmax2, f64::max);
    }
    let s2: f64 = parts.iter().map(|p| total(&p.s2)).sum();
    let spot = SpotStats { hits: n as u64, power_w: sel.power, centroid, rms_radius: (s2 / sel.w).sqrt(), max_radius: rmax2.sqrt() };
    let f_number = if n >= 3 && mean_dir.is_some() { f_number_from_angle(cone.angle(hit.du, hit.dv, hit.dw)) } else { None };
    let wavefront = wf.as_ref().and_then(|f| {
        let mut r = ResidualSums::default();
        for [sum, sq, lo, hi] in parts.iter().map(|p| &p.residual) {
            r.sum += total(sum);
            r.s2 += total(sq);
            r.lo = lo.iter().copied().fold(r.lo, f64::min);
            r.hi = hi.iter().copied().fold(r.hi, f64::max);
        }
        f.stats(&r, wavelength_mm)
    });
    let energy = (n >= 3).then(|| EncircledEnergy::from_radii(centroid, radius, &w, sel.uniform_weight(), rmax2.sqrt()));
    Figures { spot, fit, f_number, wavefront, energy }
}

/// The cone's extreme ray over a chunk: the largest sin² among rays
/// within 90° of the reference (earliest hit on ties) and, lane by lane,
/// the most negative cosine.
struct ConeBest {
    best: f64,
    at: usize,
    back: Lanes,
}

impl ConeBest {
    fn new() -> Self {
        ConeBest { best: -1.0, at: 0, back: [f64::NEG_INFINITY; LANES] }
    }

    /// sin² and cosine of the angle between a direction and `m`.
    #[inline(always)]
    fn sin2_cos(m: Vec3, du: f64, dv: f64, dw: f64) -> (f64, f64) {
        let (cx, cy, cz) = (dv * m.z - dw * m.y, dw * m.x - du * m.z, du * m.y - dv * m.x);
        (cx * cx + cy * cy + cz * cz, du * m.x + dv * m.y + dw * m.z)
    }

    /// Adds a block whose first hit is hit `offset` of the selection. The
    /// largest sin² of the block comes from a vector loop; only a block
    /// that beats the best so far is scanned again for the earliest hit
    /// reaching it (rarely, once the best has settled).
    #[inline(always)]
    fn block<Q: Quad>(&mut self, c: Columns<'_>, m: Vec3, offset: usize) {
        let Cols { du, dv, dw, .. } = c.hit;
        let (mx, my, mz) = (Q::from(m.x), Q::from(m.y), Q::from(m.z));
        // A lane a hit does not count in gets −∞, which beats nothing.
        let none = Q::from(f64::NEG_INFINITY);
        let (mut top, mut back) = (Q::from(self.best), Q::load(&self.back));
        let ([gx, gy, gz], full) = groups([du, dv, dw]);
        for ((x, y), z) in gx.iter().zip(gy).zip(gz) {
            // `sin2_cos` of four hits: the same operations in the same order.
            let (du, dv, dw) = (Q::load(x), Q::load(y), Q::load(z));
            let (cx, cy, cz) = (dv * mz - dw * my, dw * mx - du * mz, du * my - dv * mx);
            let (s2, cos) = (cx * cx + cy * cy + cz * cz, du * mx + dv * my + dw * mz);
            top = top.greatest(cos.where_positive(s2, none));
            back = back.greatest(cos.where_not_positive(cos.neg(), none));
        }
        let (mut top, mut back) = (top.lanes(), back.lanes());
        let mut lane = |l: usize, (s2, c): (f64, f64)| {
            top[l] = if (c > 0.0) & (s2 > top[l]) { s2 } else { top[l] };
            back[l] = if (c <= 0.0) & (-c > back[l]) { -c } else { back[l] };
        };
        for g in full..du.len() {
            lane(g - full, Self::sin2_cos(m, du[g], dv[g], dw[g]));
        }
        self.back = back;
        if top.iter().any(|&t| t > self.best) {
            for k in 0..du.len() {
                let (s2, c) = Self::sin2_cos(m, du[k], dv[k], dw[k]);
                if c > 0.0 && s2 > self.best {
                    (self.best, self.at) = (s2, offset + k);
                }
            }
        }
    }

    /// Merged into `out`: the larger sin², the earlier hit on ties.
    fn merge_into(&self, out: &mut ConeSums) {
        if self.best > out.best || (self.best == out.best && self.best >= 0.0 && self.at < out.at) {
            (out.best, out.at) = (self.best, self.at);
        }
        out.back = self.back.iter().copied().fold(out.back, f64::max);
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_rng::uniform;
    use super::*;
    use crate::trace::ScreenHits;

    #[test]
    fn every_kernel_gives_the_same_figures() {
        // Common practice for run-time dispatched SIMD: each instruction
        // set runs the same operations in the same order (no fused
        // multiply-add), so the figures agree bit for bit. A spread spot
        // with a tilted cone, unequal weights, over several chunks.
        let mut h = ScreenHits::default();
        let mut next = uniform(0x9e37_79b9_7f4a_7c15);
        for _ in 0..(3 * super::super::CHUNK + 17) {
            let (a, b) = (next() - 0.5, next() - 0.5);
            let d = Vec3::new(0.1 * a, 0.1 * b + 0.02, 1.0).normalize();
            h.push(0.3 * a + 1.0, 0.2 * b - 2.0, &d, 1000.0 + 0.01 * a * a + 0.003 * b, 0.5 + next(), 0, true);
        }
        let sel = Subset::new(&h, Some(0));
        let show = |f: &Figures| format!("{:?} {:?} {:?} {:?} {:?}", f.spot, f.fit, f.f_number, f.wavefront, f.energy);
        let reference = show(&figures_with(Kernel::Portable, &sel, 550e-6, true));
        for k in Kernel::available() {
            assert_eq!(show(&figures_with(k, &sel, 550e-6, true)), reference, "{k:?}");
        }
    }

    #[test]
    fn the_cones_extreme_ray_is_the_one_the_plain_function_finds() {
        // Common practice: the fused pass's cone (sin² against the mean
        // direction, from a cross product) must pick the same extreme ray
        // as the plain f-number function. An elliptical cone about a mean
        // direction with all three components, so every term of the cross
        // product and of the cosine matters, and the rim is not a tie.
        let m = Vec3::new(0.3, -0.9, 0.4).normalize();
        let e1 = m.cross(&Vec3::x()).normalize();
        let e2 = m.cross(&e1);
        let mut h = ScreenHits::default();
        let mut rng = uniform(0x6a09_e667_f3bc_c908);
        let mut next = || rng() - 0.5;
        for _ in 0..4000 {
            let (a, b) = (next(), next());
            h.push(a, b, &(m + e1 * (0.6 * a) + e2 * (0.2 * b)).normalize(), 100.0, 1.0, 0, true);
        }
        let fused = figures(&Subset::new(&h, Some(0)), 550e-6, false).f_number.expect("a cone");
        let plain = super::super::cone::f_number_of(&Subset::new(&h, Some(0))).expect("a cone");
        assert!((fused - plain).abs() <= 1e-12 * plain, "fused N = {fused}, plain N = {plain}");
        // A wide cone: the check is not at a limit (about f/1.7 here).
        assert!(plain > 1.0 && plain < 3.0, "N = {plain}");
    }
}
