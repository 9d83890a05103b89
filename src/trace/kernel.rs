//! The batched tracer: rays in structure-of-arrays batches, one
//! branch-free kernel per element kind that keeps the nearest hit of every
//! ray in the batch, then one pass that reflects, records and retires.
//!
//! Each round moves every live ray by one event (a reflection or a screen
//! crossing); live rays are kept packed at the front of the columns, in
//! ray order. A ray's fate depends only on its own data and the scene, so
//! any split of the rays into batches, chunks or threads gives the same
//! hits; hits are recorded in ray order.
//!
//! The kernels are written as plain loops over the columns, which the
//! compiler vectorises. On x86-64 with AVX2 they are compiled a second time
//! for it and chosen at run time; the arithmetic is the same operations in
//! the same order (no fused multiply–add), so every build gives identical
//! bits. The scalar tracer (`tracer::propagate`) is the reference this one
//! is tested against.

// Negated comparisons (`!(a >= b)`) are deliberate throughout: they treat
// NaN exactly as the reference tracer's early `continue`s do.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

use super::compiled::{Compiled, ConicRec, Kind, PlaneFrame, Rec};
use super::slope::SlopeError;
use super::source::Emitter;
use super::tracer::ScreenHits;
use crate::geometry::{positive_part, Vec3};
use crate::scene::{Part, Scene};

/// Rays per batch. With 256 a batch's columns (some 45 of them) stay in
/// the core's first- and second-level caches through every round; 512
/// traced a sun-disk dish 10–18 % slower (natively and in wasm), the
/// f/4 paraboloid about the same.
pub const LANES: usize = 256;
// The first-arrival check keeps one bit per lane in 64-bit words.
const _: () = assert!(LANES.is_multiple_of(64));
const NONE: u32 = u32::MAX;
/// A ray free to meet any element (as wide as the float columns, so that
/// masks mixing the two need no repacking).
const NO_SKIP: u64 = u64::MAX;
/// Lanes compared at a time when looking for a ray free to meet an element
/// (speed only).
const SKIP_BLOCK: usize = 64;
/// A reflected ray's second root on its own conic is trusted to rule a
/// return out only when it lies more than this many self-hit distances
/// (`Scene::t_eps`) from the hit: closer, the two roots are nearly equal
/// and left to the exact solve.
const SECOND_ROOT_NEAR: f64 = 1e3;
/// Relative margin on that root's distance, and on the sag-branch test,
/// for rounding (the exact solve's root differs by ~1e-15 relative).
const SECOND_ROOT_REL: f64 = 1e-9;

/// Counters of a traced range of rays.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub(crate) struct Tally {
    pub escaped: u64,
    pub absorbed: u64,
    pub surface_hits: u64,
    /// The range recorded more hits than its cap and stopped.
    pub over_cap: bool,
}

/// Where a batch's hits on one screen start in the output, and their ray
/// numbers while they may need reordering.
#[derive(Debug, Clone, Default)]
struct Recorded {
    start: usize,
    rays: Vec<u32>,
    sorted: bool,
}

/// A batch of rays as columns, plus per-round scratch.
pub(crate) struct Batch {
    ox: Vec<f64>,
    oy: Vec<f64>,
    oz: Vec<f64>,
    dx: Vec<f64>,
    dy: Vec<f64>,
    dz: Vec<f64>,
    opl: Vec<f64>,
    w: Vec<f64>,
    /// Ray number within the batch (for ordering the hits).
    ray: Vec<u32>,
    bounces: Vec<u32>,
    /// Element the ray cannot meet on this leg, or NONE.
    skip: Vec<u64>,
    // Nearest hit so far this round.
    t: Vec<f64>,
    best: Vec<u32>,
    hx: Vec<f64>,
    hy: Vec<f64>,
    hz: Vec<f64>,
    /// Second copies of the nearest-hit columns: a kernel reads one copy
    /// and writes the other whole, then they swap.
    alt_t: Vec<f64>,
    alt_best: Vec<u32>,
    alt_hx: Vec<f64>,
    alt_hy: Vec<f64>,
    alt_hz: Vec<f64>,
    alt_ox: Vec<f64>,
    alt_oy: Vec<f64>,
    alt_oz: Vec<f64>,
    alt_dx: Vec<f64>,
    alt_dy: Vec<f64>,
    alt_dz: Vec<f64>,
    alt_opl: Vec<f64>,
    alt_w: Vec<f64>,
    alt_t0: Vec<f64>,
    alt_bounces: Vec<u32>,
    alt_skip: Vec<u64>,
    alt_alive: Vec<bool>,
    /// Cull pass: does the ray reach the element's bounding sphere, and
    /// where it enters it.
    keep: Vec<u64>,
    t0: Vec<f64>,
    /// After shading: does the ray go on?
    alive: Vec<bool>,
    /// Recording: did the ray arrive on the screen's sensitive face?
    arrived: Vec<bool>,
    /// Scratch: 1.0 where a reflected ray cannot meet its mirror again on
    /// the next leg.
    aux: Vec<f64>,
    /// Scratch between the stages of one kernel (split so that shorter
    /// chains of dependent divisions and roots overlap better).
    s1: Vec<f64>,
    s2: Vec<f64>,
    s3: Vec<f64>,
    /// Per element this round: did any ray take it as its nearest hit so
    /// far (a later element may have taken the ray since)?
    touched: Vec<bool>,
    /// Lane lists for gathers.
    sel: Vec<u32>,
    recorded: Vec<Recorded>,
    /// Scratch for reordering hits.
    order: Vec<u32>,
    scratch: Vec<f64>,
    /// Number (within its source) of the batch's first ray, and the
    /// round: with `ray`, the counters of the slope-error draws.
    base: u64,
    round: u32,
}

impl Batch {
    pub fn new() -> Batch {
        let col = || vec![0.0; LANES];
        Batch {
            ox: col(),
            oy: col(),
            oz: col(),
            dx: col(),
            dy: col(),
            dz: col(),
            opl: col(),
            w: col(),
            ray: vec![0; LANES],
            bounces: vec![0; LANES],
            skip: vec![NO_SKIP; LANES],
            t: col(),
            best: vec![NONE; LANES],
            hx: col(),
            hy: col(),
            hz: col(),
            alt_t: col(),
            alt_best: vec![NONE; LANES],
            alt_hx: col(),
            alt_hy: col(),
            alt_hz: col(),
            alt_ox: col(),
            alt_oy: col(),
            alt_oz: col(),
            alt_dx: col(),
            alt_dy: col(),
            alt_dz: col(),
            alt_opl: col(),
            alt_w: col(),
            alt_t0: col(),
            alt_bounces: vec![0; LANES],
            alt_skip: vec![NO_SKIP; LANES],
            alt_alive: vec![false; LANES],
            keep: vec![0; LANES],
            t0: col(),
            alive: vec![false; LANES],
            arrived: vec![false; LANES],
            aux: col(),
            s1: col(),
            s2: col(),
            s3: col(),
            touched: Vec::new(),
            sel: vec![0; LANES],
            recorded: Vec::new(),
            order: Vec::new(),
            scratch: Vec::new(),
            base: 0,
            round: 0,
        }
    }
}

/// Makes the second copies of the named columns of a batch current.
macro_rules! swap_cols {
    ($b:expr; $($col:ident / $alt:ident),*) => { $( std::mem::swap(&mut $b.$col, &mut $b.$alt); )* };
}

impl Batch {
    /// Makes the second copies of the nearest-hit columns current.
    #[inline(always)]
    fn swap_nearest(&mut self) {
        swap_cols!(self; t/alt_t, best/alt_best, hx/alt_hx, hy/alt_hy, hz/alt_hz);
    }
}

/// Which compiled copy of the kernels runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kernel {
    /// Portable code (SSE2 on x86-64, simd128 in a wasm build with it).
    Portable,
    /// x86-64 with AVX2, chosen at run time.
    Avx2,
    /// x86-64 with AVX-512 (F and VL), chosen at run time: twice the
    /// vector registers, so the long kernels do not spill.
    Avx512,
}

impl Kernel {
    /// The best kernel this machine runs (looked up once).
    pub fn detect() -> Kernel {
        static BEST: std::sync::OnceLock<Kernel> = std::sync::OnceLock::new();
        *BEST.get_or_init(|| *Kernel::available().last().unwrap_or(&Kernel::Portable))
    }

    /// Every kernel this machine runs, portable first.
    pub fn available() -> Vec<Kernel> {
        #[allow(unused_mut)]
        let mut v = vec![Kernel::Portable];
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx2") {
                v.push(Kernel::Avx2);
                if std::arch::is_x86_feature_detected!("avx512f") && std::arch::is_x86_feature_detected!("avx512vl") {
                    v.push(Kernel::Avx512);
                }
            }
        }
        v
    }

    /// Short name for reports.
    pub fn name(self) -> &'static str {
        match self {
            Kernel::Portable => {
                if cfg!(target_feature = "simd128") { "wasm simd128" } else { "portable" }
            }
            Kernel::Avx2 => "avx2",
            Kernel::Avx512 => "avx512",
        }
    }
}

/// Makes a dispatcher `name(kernel, args…)` for each kernel body, which
/// runs the copy compiled for `kernel` (see `best_simd!`).
macro_rules! kernels {
    ($( $(#[$doc:meta])* fn $name:ident => $body:ident ( $($a:ident : $t:ty),* ) -> $r:ty; )*) => { $(
        $(#[$doc])*
        #[allow(clippy::too_many_arguments)]
        fn $name(kernel: Kernel, $($a: $t),*) -> $r {
            best_simd!(kernel, $body($($a: $t),*) -> $r)
        }
    )* };
}

kernels! {
    /// Bounding-sphere cull of every ray against one element.
    fn cull_pass => cull_body(r: &Rec, k: u32, eps: f64, b: &mut Batch, n: usize) -> usize;
    /// Nearest hits on a conic mirror.
    fn conic => conic_body(r: &Rec, cr: &ConicRec, k: u32, eps: f64, kept: usize, b: &mut Batch, n: usize) -> usize;
    /// Nearest hits on a screen.
    fn screen => screen_body(r: &Rec, half: f64, circle: bool, k: u32, eps: f64, kept: usize, b: &mut Batch, n: usize) -> usize;
    /// Reflection off a conic mirror.
    fn reflect_conic => reflect_conic_body(rec: &Rec, cr: &ConicRec, k: u32, max_bounces: u32, eps: f64, predict: bool, b: &mut Batch, n: usize) -> ();
    /// Crossing a screen.
    fn cross => cross_body(rec: &Rec, k: u32, opaque: bool, b: &mut Batch, n: usize) -> ();
    /// One batch's rounds: the bookkeeping between the kernels (fills,
    /// counts, lane lists, packing) compiled for the same machine.
    fn run_batch => run_batch_body(scene: &Scene, comp: &Compiled, kern: Kernel, b: &mut Batch, n: usize, src: u32, out: &mut [ScreenHits], tally: &mut Tally) -> ();
}

/// Takes a batch's hits, in ray order, from the per-screen buffers.
pub(crate) type Flush<'a> = dyn FnMut(&mut [ScreenHits]) + 'a;

/// Traces rays `range` of `em` (source number `src`), appending the screen
/// hits to `out` (one per screen) in ray order. With `flush`, each batch's
/// hits are handed to it as soon as they are in order (it may drain `out`),
/// while they are still in cache.
#[allow(clippy::too_many_arguments)]
pub(crate) fn trace_range(
    scene: &Scene,
    comp: &Compiled,
    kernel: Kernel,
    em: &Emitter,
    src: u32,
    range: std::ops::Range<usize>,
    hit_cap: u64,
    batch: &mut Batch,
    out: &mut [ScreenHits],
    mut flush: Option<&mut Flush>,
) -> Tally {
    let mut tally = Tally::default();
    let mut recorded = 0usize;
    batch.recorded.resize_with(out.len(), Recorded::default);
    batch.touched.resize(comp.recs.len(), false);
    let mut start = range.start;
    while start < range.end {
        let end = (start + LANES).min(range.end);
        let n = end - start;
        {
            let b = &mut *batch;
            em.fill(start, [&mut b.ox[..n], &mut b.oy[..n], &mut b.oz[..n]], [&mut b.dx[..n], &mut b.dy[..n], &mut b.dz[..n]]);
        }
        batch.opl[..n].fill(0.0);
        batch.w[..n].fill(em.ray_weight);
        for (k, r) in batch.ray[..n].iter_mut().enumerate() {
            *r = k as u32;
        }
        batch.bounces[..n].fill(0);
        batch.skip[..n].fill(NO_SKIP);
        batch.base = start as u64;
        for (r, o) in batch.recorded.iter_mut().zip(out.iter()) {
            r.start = o.len();
            r.rays.clear();
            r.sorted = true;
        }
        // The first `kernel` picks the compiled copy, the second is passed on
        // to the kernels that copy calls.
        run_batch(kernel, scene, comp, kernel, batch, n, src, out, &mut tally);
        order_hits(batch, out);
        recorded += batch.recorded.iter().zip(out.iter()).map(|(r, o)| o.len() - r.start).sum::<usize>();
        if let Some(f) = flush.as_mut() {
            f(out);
        }
        start = end;
        if recorded as u64 > hit_cap {
            tally.over_cap = true;
            return tally;
        }
    }
    tally
}

/// Puts a batch's hits on each screen in ray order. They already are unless
/// a ray met one screen in two different rounds; then that batch's run is
/// a few ascending runs (one per round), and only its part from the first
/// hit that a later round's hit must precede is sorted (stably, by ray
/// number, so rounds keep their order) and rearranged.
fn order_hits(b: &mut Batch, out: &mut [ScreenHits]) {
    for (r, o) in b.recorded.iter().zip(out.iter_mut()) {
        if r.sorted {
            continue;
        }
        let rays = &r.rays;
        let Some(p) = rays.windows(2).position(|w| w[1] < w[0]).map(|i| i + 1) else { continue };
        let low = rays[p..].iter().copied().min().unwrap_or(u32::MAX);
        // Hits before `q` stay: no later hit's ray comes before theirs (a
        // tie is the same ray, met in an earlier round).
        let q = rays[..p].partition_point(|&x| x <= low);
        let from = &mut b.order;
        from.clear();
        from.extend(q as u32..rays.len() as u32);
        from.sort_by_key(|&i| rays[i as usize]);
        let s = r.start + q;
        for col in [&mut o.u, &mut o.v, &mut o.du, &mut o.dv, &mut o.dw, &mut o.opl, &mut o.weight] {
            b.scratch.clear();
            b.scratch.extend_from_slice(&col[s..]);
            for (d, &i) in col[s..].iter_mut().zip(from.iter()) {
                *d = b.scratch[i as usize - q];
            }
        }
        let first: Vec<bool> = o.first[s..].to_vec();
        for (d, &i) in o.first[s..].iter_mut().zip(from.iter()) {
            *d = first[i as usize - q];
        }
    }
}

#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn run_batch_body(
    scene: &Scene,
    comp: &Compiled,
    kernel: Kernel,
    b: &mut Batch,
    n: usize,
    src: u32,
    out: &mut [ScreenHits],
    tally: &mut Tally,
) {
    let mut n = n;
    let max_events = (scene.max_bounces as usize + 1) * (scene.elements.len() + 1);
    let eps = scene.t_eps;
    for round in 0..max_events {
        if n == 0 {
            return;
        }
        b.round = round as u32;
        b.t[..n].fill(f64::INFINITY);
        b.best[..n].fill(NONE);
        b.touched.fill(false);
        for (k, rec) in comp.recs.iter().enumerate() {
            if let Kind::General = rec.kind {
                b.touched[k] = general(scene, rec, k, eps, b, n) > 0;
                continue;
            }
            // Blocks of lanes, each compared whole (vectorised), so the
            // usual answer comes from the first block.
            if !b.skip[..n].chunks(SKIP_BLOCK).any(|c| c.iter().fold(false, |a, &s| a | (s != k as u64))) {
                continue; // no ray of the batch can meet it on this leg
            }
            let kept = cull_pass(kernel, rec, k as u32, eps, b, n);
            if kept == 0 {
                continue; // the whole batch passes this element by
            }
            let hits = match rec.kind {
                Kind::Conic(ref cr) => conic(kernel, rec, cr, k as u32, eps, kept, b, n),
                Kind::Screen { half, circle, .. } => screen(kernel, rec, half, circle, k as u32, eps, kept, b, n),
                Kind::General => 0,
            };
            b.touched[k] = hits > 0;
        }
        n = shade(scene, comp, kernel, b, n, src, out, tally);
    }
    // Rays still going after the event limit are counted as absorbed.
    tally.absorbed += n as u64;
}

/// Bounding-sphere cull, exactly as the reference tracer does it: keeps a
/// ray that passes within the radius of the centre, not wholly behind its
/// origin, and not wholly beyond the nearest hit so far. Returns (keep, t0)
/// with t0 where the ray enters the sphere: solving from there keeps the
/// intersection precise for rays launched far away.
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn cull(r: &Rec, eps: f64, ox: f64, oy: f64, oz: f64, dx: f64, dy: f64, dz: f64, t_best: f64) -> (bool, f64) {
    let (cx, cy, cz) = (r.bx - ox, r.by - oy, r.bz - oz);
    let tca = cx * dx + cy * dy + cz * dz;
    let d2 = (cx * cx + cy * cy + cz * cz) - tca * tca;
    let r2 = r.br * r.br;
    let thc = (r2 - d2).sqrt();
    let keep = !(d2 > r2) & !(tca + thc <= eps) & !(tca - thc >= t_best);
    (keep, positive_part(tca - thc))
}

/// The cull of every ray against element `k` into the `keep`/`t0`
/// columns (a ray told to skip `k` is not kept, nor one beyond the
/// element's local z range heading away from it: both could only miss);
/// returns how many are kept.
#[inline(always)]
fn cull_body(r: &Rec, k: u32, eps: f64, b: &mut Batch, n: usize) -> usize {
    if r.slab { cull_rays::<true>(r, k, eps, b, n) } else { cull_rays::<false>(r, k, eps, b, n) }
}

/// [`cull_body`]'s loop, with the z-range test when `SLAB`.
#[inline(always)]
fn cull_rays<const SLAB: bool>(r: &Rec, k: u32, eps: f64, b: &mut Batch, n: usize) -> usize {
    let (ox, oy, oz) = (&b.ox[..n], &b.oy[..n], &b.oz[..n]);
    let (dx, dy, dz) = (&b.dx[..n], &b.dy[..n], &b.dz[..n]);
    let (skip, tb) = (&b.skip[..n], &b.t[..n]);
    let (keep, t0) = (&mut b.keep[..n], &mut b.t0[..n]);
    let f = r.frame;
    let mut kept = 0;
    for i in 0..n {
        let (kp, t) = cull(r, eps, ox[i], oy[i], oz[i], dx[i], dy[i], dz[i], tb[i]);
        // Beyond the element's z range in its frame and not heading back:
        // every point ahead is farther out (a focus above a deep dish).
        let away = SLAB && {
            let lz = (oy[i] - f.oy) * f.s + (oz[i] - f.oz) * f.c;
            let ldz = dy[i] * f.s + dz[i] * f.c;
            ((lz > r.z_hi) & (ldz >= 0.0)) | ((lz < r.z_lo) & (ldz <= 0.0))
        };
        let kp = kp & !away & (skip[i] != k as u64);
        keep[i] = kp as u64;
        t0[i] = t;
        kept += kp as usize;
    }
    kept
}


/// The two roots of a conic along a ray, solved from the cull's entry
/// point `t0` (NaN for both when there is no real root).
#[inline(always)]
fn conic_roots(f: PlaneFrame, cr: &ConicRec, o: (f64, f64, f64), d: (f64, f64, f64), t0: f64) -> (f64, f64) {
    let (c, kap) = (cr.c, cr.kappa);
    let xs = if cr.extruded { 0.0 } else { 1.0 };
    let ((lx, ly, lz), (ldx, ldy, ldz)) = f.ray_to_local(o, d, t0);
    // c(x² + y²) − 2z + (1+K)c z² = 0 along the ray (x dropped for a trough).
    let (qx, qdx) = (lx * xs, ldx * xs);
    let qa = c * (qdx * qdx + ldy * ldy) + kap * ldz * ldz;
    let qb = c * (qx * qdx + ly * ldy) - ldz + kap * lz * ldz;
    let qc = c * (qx * qx + ly * ly) - 2.0 * lz + kap * lz * lz;
    let disc = qb * qb - qa * qc;
    let q = -(qb + disc.sqrt().copysign(qb));
    // No real root: both NaN, so neither passes the tests below.
    let real = (0.0..f64::INFINITY).contains(&disc);
    (pick(real, q / qa, f64::NAN), pick(real, qc / q, f64::NAN))
}

/// The nearest of a ray's two roots that lies on the mirror, nearer than
/// `t_best`: (hit, t from `t0`, the local hit point).
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn conic_nearest<const STRIP: bool>(
    f: PlaneFrame,
    cr: &ConicRec,
    eps: f64,
    o: (f64, f64, f64),
    d: (f64, f64, f64),
    t0: f64,
    t_best: f64,
    (r1, r2): (f64, f64),
) -> (bool, f64, (f64, f64, f64)) {
    let kap = cr.kappa;
    let ((lx, ly, lz), (ldx, ldy, ldz)) = f.ray_to_local(o, d, t0);
    let (t_min, t_max) = (eps - t0, t_best - t0);
    // The sag branch through the vertex has (1+K)c·z < 1.
    let v1 = (r1 > t_min) & (r1 < t_max) & (kap * (lz + r1 * ldz) < 1.0) & cr.clear.contains_as::<STRIP>(lx + r1 * ldx, ly + r1 * ldy);
    let v2 = (r2 > t_min) & (r2 < t_max) & (kap * (lz + r2 * ldz) < 1.0) & cr.clear.contains_as::<STRIP>(lx + r2 * ldx, ly + r2 * ldy);
    let a1 = if v1 { r1 } else { f64::INFINITY };
    let a2 = if v2 { r2 } else { f64::INFINITY };
    let t = if a2 < a1 { a2 } else { a1 };
    (v1 | v2, t, (lx + ldx * t, ly + ldy * t, lz + ldz * t))
}

/// Batches where the cull kept fewer than one ray in this many (a beam's
/// centre crossing a small screen on its way in, the odd ray still
/// heading for a mirror the rest have left) solve only the kept rays,
/// one by one, with the same arithmetic.
const SPARSE: usize = 8;

/// The sparse path: `lane(ray origin, direction, t0, t_best)` of each
/// kept lane alone, in order, giving (hit, t from the ray's origin, local
/// hit point); the other lanes' nearest hits carry over. Returns the hits.
#[inline(always)]
fn sparse(
    b: &mut Batch,
    n: usize,
    k: u32,
    lane: impl Fn((f64, f64, f64), (f64, f64, f64), f64, f64) -> (bool, f64, (f64, f64, f64)),
) -> usize {
    let mut j = 0;
    for i in 0..n {
        b.sel[j] = i as u32;
        j += (b.keep[i] != 0) as usize;
    }
    b.alt_t[..n].copy_from_slice(&b.t[..n]);
    b.alt_best[..n].copy_from_slice(&b.best[..n]);
    b.alt_hx[..n].copy_from_slice(&b.hx[..n]);
    b.alt_hy[..n].copy_from_slice(&b.hy[..n]);
    b.alt_hz[..n].copy_from_slice(&b.hz[..n]);
    let mut hits = 0;
    for q in 0..j {
        let i = b.sel[q] as usize;
        let (hit, t, (x, y, z)) = lane((b.ox[i], b.oy[i], b.oz[i]), (b.dx[i], b.dy[i], b.dz[i]), b.t0[i], b.t[i]);
        if hit {
            b.alt_t[i] = t;
            b.alt_best[i] = k;
            (b.alt_hx[i], b.alt_hy[i], b.alt_hz[i]) = (x, y, z);
            hits += 1;
        }
    }
    b.swap_nearest();
    hits
}

#[inline(always)]
fn conic_body(r: &Rec, cr: &ConicRec, k: u32, eps: f64, kept: usize, b: &mut Batch, n: usize) -> usize {
    if cr.clear.strip { conic_rays::<true>(r, cr, k, eps, kept, b, n) } else { conic_rays::<false>(r, cr, k, eps, kept, b, n) }
}

/// [`conic_body`] for a strip (`STRIP`) or a disk aperture.
#[inline(always)]
fn conic_rays<const STRIP: bool>(r: &Rec, cr: &ConicRec, k: u32, eps: f64, kept: usize, b: &mut Batch, n: usize) -> usize {
    let f = r.frame;
    if kept * SPARSE < n {
        return sparse(b, n, k, |o, d, t0, t_best| {
            let (hit, t, p) = conic_nearest::<STRIP>(f, cr, eps, o, d, t0, t_best, conic_roots(f, cr, o, d, t0));
            (hit, t0 + t, p)
        });
    }
    let (ox, oy, oz) = (&b.ox[..n], &b.oy[..n], &b.oz[..n]);
    let (dx, dy, dz) = (&b.dx[..n], &b.dy[..n], &b.dz[..n]);
    let (keep, t0s) = (&b.keep[..n], &b.t0[..n]);
    let (tb, best) = (&b.t[..n], &b.best[..n]);
    let (hx, hy, hz) = (&b.hx[..n], &b.hy[..n], &b.hz[..n]);
    let (ntb, nbest) = (&mut b.alt_t[..n], &mut b.alt_best[..n]);
    let (nhx, nhy, nhz) = (&mut b.alt_hx[..n], &mut b.alt_hy[..n], &mut b.alt_hz[..n]);
    let (root1, root2) = (&mut b.s1[..n], &mut b.s2[..n]);
    let mut hits = 0;
    // The roots first…
    for i in 0..n {
        (root1[i], root2[i]) = conic_roots(f, cr, (ox[i], oy[i], oz[i]), (dx[i], dy[i], dz[i]), t0s[i]);
    }
    // …then the nearest that lies on the mirror.
    let (root1, root2) = (&b.s1[..n], &b.s2[..n]);
    for i in 0..n {
        let t0 = t0s[i];
        let (on, t, (px, py, pz)) = conic_nearest::<STRIP>(f, cr, eps, (ox[i], oy[i], oz[i]), (dx[i], dy[i], dz[i]), t0, tb[i], (root1[i], root2[i]));
        let hit = (keep[i] != 0) & on;
        hits += hit as usize;
        ntb[i] = pick(hit, t0 + t, tb[i]);
        nbest[i] = pick_u32(hit, k, best[i]);
        nhx[i] = pick(hit, px, hx[i]);
        nhy[i] = pick(hit, py, hy[i]);
        nhz[i] = pick(hit, pz, hz[i]);
    }
    b.swap_nearest();
    hits
}

/// Where a ray crosses a flat screen's plane, from the cull's entry point
/// `t0`: (on the screen, t, the local crossing point).
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn screen_crossing(
    f: PlaneFrame,
    half: f64,
    circle: bool,
    eps: f64,
    o: (f64, f64, f64),
    d: (f64, f64, f64),
    t0: f64,
    t_best: f64,
) -> (bool, f64, (f64, f64, f64)) {
    let ((lx, ly, lz), (ldx, ldy, ldz)) = f.ray_to_local(o, d, t0);
    let tl = -lz / ldz;
    let t = t0 + tl;
    let (px, py) = (lx + ldx * tl, ly + ldy * tl);
    let inside = if circle { px * px + py * py <= half * half } else { (px.abs() <= half) & (py.abs() <= half) };
    let on = (ldz != 0.0) & (t > eps) & (t < t_best) & inside;
    (on, t, (px, py, lz + ldz * tl))
}

#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn screen_body(r: &Rec, half: f64, circle: bool, k: u32, eps: f64, kept: usize, b: &mut Batch, n: usize) -> usize {
    let f = r.frame;
    if kept * SPARSE < n {
        return sparse(b, n, k, |o, d, t0, t_best| screen_crossing(f, half, circle, eps, o, d, t0, t_best));
    }
    let (ox, oy, oz) = (&b.ox[..n], &b.oy[..n], &b.oz[..n]);
    let (dx, dy, dz) = (&b.dx[..n], &b.dy[..n], &b.dz[..n]);
    let (keep, t0s) = (&b.keep[..n], &b.t0[..n]);
    let (tb, best) = (&b.t[..n], &b.best[..n]);
    let (hx, hy, hz) = (&b.hx[..n], &b.hy[..n], &b.hz[..n]);
    let (ntb, nbest) = (&mut b.alt_t[..n], &mut b.alt_best[..n]);
    let (nhx, nhy, nhz) = (&mut b.alt_hx[..n], &mut b.alt_hy[..n], &mut b.alt_hz[..n]);
    let mut hits = 0;
    for i in 0..n {
        let (on, t, (px, py, pz)) = screen_crossing(f, half, circle, eps, (ox[i], oy[i], oz[i]), (dx[i], dy[i], dz[i]), t0s[i], tb[i]);
        let hit = (keep[i] != 0) & on;
        hits += hit as usize;
        ntb[i] = pick(hit, t, tb[i]);
        nbest[i] = pick_u32(hit, k, best[i]);
        nhx[i] = pick(hit, px, hx[i]);
        nhy[i] = pick(hit, py, hy[i]);
        nhz[i] = pick(hit, pz, hz[i]);
    }
    b.swap_nearest();
    hits
}

/// Aspheric and spline mirrors: the exact scalar solver, ray by ray, from
/// the bounding sphere's entry point (as the reference tracer does).
fn general(scene: &Scene, r: &Rec, k: usize, eps: f64, b: &mut Batch, n: usize) -> usize {
    let e = &scene.elements[k];
    let Part::Mirror { surface, .. } = &e.part else { return 0 };
    let mut hits = 0;
    let r2 = r.br * r.br;
    for i in 0..n {
        if b.skip[i] == k as u64 {
            continue;
        }
        let o = Vec3::new(b.ox[i], b.oy[i], b.oz[i]);
        let d = Vec3::new(b.dx[i], b.dy[i], b.dz[i]);
        let oc = e.bound_center - o;
        let tca = oc.dot(&d);
        let d2 = oc.norm_squared() - tca * tca;
        if d2 > r2 {
            continue;
        }
        let thc = (r2 - d2).sqrt();
        if tca + thc <= eps || tca - thc >= b.t[i] {
            continue;
        }
        let t0 = positive_part(tca - thc);
        let lo = e.frame.to_local_point(&(o + d * t0));
        let ld = e.frame.to_local_dir(&d);
        if let Some(h) = surface.intersect(&lo, &ld, eps - t0, b.t[i] - t0) {
            b.t[i] = t0 + h.t;
            b.best[i] = k as u32;
            (b.hx[i], b.hy[i], b.hz[i]) = (h.point.x, h.point.y, h.point.z);
            hits += 1;
        }
    }
    hits
}

/// Applies every ray's nearest hit, element by element (reflect, record,
/// absorb), counts the rays that escaped, then packs the live rays to the
/// front in order. Returns how many live on.
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn shade(
    scene: &Scene,
    comp: &Compiled,
    kernel: Kernel,
    b: &mut Batch,
    n: usize,
    src: u32,
    out: &mut [ScreenHits],
    tally: &mut Tally,
) -> usize {
    let escaped = b.best[..n].iter().map(|&k| (k == NONE) as usize).sum::<usize>();
    tally.escaped += escaped as u64;
    tally.surface_hits += (n - escaped) as u64;
    b.alive[..n].fill(false);
    for k in 0..comp.recs.len() {
        if !b.touched[k] {
            continue;
        }
        let rec = &comp.recs[k];
        match rec.kind {
            Kind::Screen { opaque, screen, .. } => record(rec, k as u32, opaque, kernel, b, n, src, &mut out[screen], screen),
            // A slope error turns the ray after the reflection, so its
            // second root is not predicted there.
            Kind::Conic(ref cr) => reflect_conic(kernel, rec, cr, k as u32, scene.max_bounces, scene.t_eps, rec.slope.is_none(), b, n),
            Kind::General => reflect_general(scene, rec, k, b, n),
        }
        if let Some(s) = &rec.slope {
            slope_pass(scene, s, k, b, n, src);
        }
    }
    // Pack the live rays to the front, in order.
    let live = b.alive[..n].iter().map(|&a| a as usize).sum::<usize>();
    tally.absorbed += (n - escaped - live) as u64;
    if live > 0 && live < n {
        list_lanes(&b.alive[..n], &mut b.sel[..n]);
        let sel = &b.sel[..live];
        for col in [&mut b.ox, &mut b.oy, &mut b.oz, &mut b.dx, &mut b.dy, &mut b.dz, &mut b.opl, &mut b.w] {
            gather(col, sel);
        }
        for col in [&mut b.ray, &mut b.bounces] {
            gather(col, sel);
        }
        gather(&mut b.skip, sel);
    }
    live
}

/// col[j] = col[sel[j]] for ascending `sel` (sel[j] ≥ j, so in place).
#[inline(always)]
fn gather<T: Copy>(col: &mut [T], sel: &[u32]) {
    for (j, &i) in sel.iter().enumerate() {
        col[j] = col[i as usize];
    }
}

/// Screen `k`: rays arriving on the sensitive face are recorded (in the
/// screen frame); the ray goes on unless the screen is opaque.
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn record(rec: &Rec, k: u32, opaque: bool, kernel: Kernel, b: &mut Batch, n: usize, src: u32, o: &mut ScreenHits, screen: usize) {
    cross(kernel, rec, k, opaque, b, n);
    // Lanes that arrived on the face, in order (listed in `sel` unless
    // that is every lane).
    let arrived = &mut b.arrived[..n];
    for ((a, &best), &t) in arrived.iter_mut().zip(&b.best[..n]).zip(&b.t[..n]) {
        *a = (best == k) & (t < 0.0);
    }
    let m = arrived.iter().map(|&a| a as usize).sum::<usize>();
    if m == 0 {
        return;
    }
    if m < n {
        list_lanes(arrived, &mut b.sel[..n]);
    } else {
        for (i, s) in b.sel[..n].iter_mut().enumerate() {
            *s = i as u32;
        }
    }
    let lanes = &b.sel[..m];
    let r = &mut b.recorded[screen];
    let before = r.rays.len();
    if r.rays.last().is_some_and(|&last| last > b.ray[lanes[0] as usize]) {
        r.sorted = false;
    }
    // The hit columns hold (u, v, du) and t0, t hold (dv, dw): see `cross`.
    let cols: [(&mut Vec<f64>, &[f64]); 7] = [
        (&mut o.u, &b.hx),
        (&mut o.v, &b.hy),
        (&mut o.du, &b.hz),
        (&mut o.dv, &b.t0),
        (&mut o.dw, &b.t),
        (&mut o.opl, &b.opl),
        (&mut o.weight, &b.w),
    ];
    if m == n {
        // Every ray of the round arrived here: plain copies.
        for (dst, c) in cols {
            dst.extend_from_slice(&c[..n]);
        }
    } else {
        for (dst, c) in cols {
            dst.extend(lanes.iter().map(|&i| c[i as usize]));
        }
    }
    o.source.extend(std::iter::repeat_n(src, m));
    let ray = &b.ray[..n];
    if m == n {
        r.rays.extend_from_slice(ray);
    } else {
        r.rays.extend(lanes.iter().map(|&i| ray[i as usize]));
    }
    // A hit is the ray's first on this screen unless the batch recorded
    // the ray here in an earlier round.
    if before == 0 {
        o.first.extend(std::iter::repeat_n(true, m));
    } else {
        let mut met = [0u64; LANES / 64];
        for &q in &r.rays[..before] {
            met[q as usize / 64] |= 1 << (q % 64);
        }
        o.first.extend(r.rays[before..].iter().map(|&q| met[q as usize / 64] >> (q % 64) & 1 == 0));
    }
}

/// Writes the numbers of the lanes where `on` holds, in order, to the
/// front of `sel` (as long as `on`).
#[inline(always)]
fn list_lanes(on: &[bool], sel: &mut [u32]) {
    let mut j = 0;
    for (i, &a) in on.iter().enumerate() {
        sel[j] = i as u32;
        j += a as usize;
    }
}

/// The crossing itself, for every lane whose nearest hit is screen `k`:
/// the path grows, the ray restarts at the hit, and the record's
/// direction in the screen frame goes into the free columns hz, t0, t
/// (t < 0: arriving on the sensitive face).
#[inline(always)]
fn cross_body(rec: &Rec, k: u32, opaque: bool, b: &mut Batch, n: usize) {
    let f = rec.frame;
    let best = &b.best[..n];
    let (hx, hy) = (&b.hx[..n], &b.hy[..n]);
    let (dx, dy, dz) = (&b.dx[..n], &b.dy[..n], &b.dz[..n]);
    let (ox, oy, oz, opl) = (&b.ox[..n], &b.oy[..n], &b.oz[..n], &b.opl[..n]);
    let (hz, t0, t) = (&b.hz[..n], &b.t0[..n], &b.t[..n]);
    let (nox, noy, noz, nopl) = (&mut b.alt_ox[..n], &mut b.alt_oy[..n], &mut b.alt_oz[..n], &mut b.alt_opl[..n]);
    let (nhz, nt0, nt) = (&mut b.alt_hz[..n], &mut b.alt_t0[..n], &mut b.alt_t[..n]);
    for i in 0..n {
        let m = best[i] == k;
        let (wx, wy, wz) = f.point_to_world(hx[i], hy[i], hz[i]);
        let (ldx, ldy, ldz) = f.dir_to_local(dx[i], dy[i], dz[i]);
        nopl[i] = pick(m, opl[i] + t[i], opl[i]);
        nox[i] = pick(m, wx, ox[i]);
        noy[i] = pick(m, wy, oy[i]);
        noz[i] = pick(m, wz, oz[i]);
        nhz[i] = pick(m, ldx, hz[i]);
        nt0[i] = pick(m, ldy, t0[i]);
        nt[i] = pick(m, ldz, t[i]);
    }
    // The ray's state in a loop of its own (one type per loop vectorises).
    let (skip, alive) = (&b.skip[..n], &b.alive[..n]);
    let (nskip, nalive) = (&mut b.alt_skip[..n], &mut b.alt_alive[..n]);
    for i in 0..n {
        let m = best[i] == k;
        nskip[i] = pick_u64(m, k as u64, skip[i]);
        nalive[i] = (m & !opaque) | (!m & alive[i]);
    }
    swap_cols!(b; ox/alt_ox, oy/alt_oy, oz/alt_oz, opl/alt_opl, hz/alt_hz, t0/alt_t0, t/alt_t, skip/alt_skip, alive/alt_alive);
}

#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn reflect_conic_body(rec: &Rec, cr: &ConicRec, k: u32, max_bounces: u32, eps: f64, predict: bool, b: &mut Batch, n: usize) {
    if cr.clear.strip {
        reflect_rays::<true>(rec, cr, k, max_bounces, eps, predict, b, n)
    } else {
        reflect_rays::<false>(rec, cr, k, max_bounces, eps, predict, b, n)
    }
}

/// [`reflect_conic_body`] for a strip (`STRIP`) or a disk aperture.
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn reflect_rays<const STRIP: bool>(rec: &Rec, cr: &ConicRec, k: u32, max_bounces: u32, eps: f64, predict: bool, b: &mut Batch, n: usize) {
    let f = rec.frame;
    let (c, kap) = (cr.c, cr.kappa);
    let xs = if cr.extruded { 0.0 } else { 1.0 };
    let best = &b.best[..n];
    let t = &b.t[..n];
    let (hx, hy, hz) = (&b.hx[..n], &b.hy[..n], &b.hz[..n]);
    let (ox, oy, oz) = (&b.ox[..n], &b.oy[..n], &b.oz[..n]);
    let (dx, dy, dz) = (&b.dx[..n], &b.dy[..n], &b.dz[..n]);
    let (opl, w) = (&b.opl[..n], &b.w[..n]);
    let (nox, noy, noz) = (&mut b.alt_ox[..n], &mut b.alt_oy[..n], &mut b.alt_oz[..n]);
    let (ndx, ndy, ndz) = (&mut b.alt_dx[..n], &mut b.alt_dy[..n], &mut b.alt_dz[..n]);
    let (nopl, nw, dn_col, gone_col) = (&mut b.alt_opl[..n], &mut b.alt_w[..n], &mut b.t0[..n], &mut b.aux[..n]);
    let near = SECOND_ROOT_NEAR * eps;
    // Floating-point columns first (one loop of one type, and few columns
    // per loop, vectorises): the new origin, path and weight…
    for i in 0..n {
        let m = best[i] == k;
        let (wx, wy, wz) = f.point_to_world(hx[i], hy[i], hz[i]);
        nox[i] = pick(m, wx, ox[i]);
        noy[i] = pick(m, wy, oy[i]);
        noz[i] = pick(m, wz, oz[i]);
        nopl[i] = pick(m, opl[i] + t[i], opl[i]);
        nw[i] = pick(m, w[i] * rec.reflectivity, w[i]);
    }
    // …the new direction…
    let (lrx, lry, lrz) = (&mut b.s1[..n], &mut b.s2[..n], &mut b.s3[..n]);
    conic_normals(cr, [hx, hy, hz], [&mut *lrx, &mut *lry, &mut *lrz]);
    for i in 0..n {
        let m = best[i] == k;
        let (nx, ny, nz) = (lrx[i], lry[i], lrz[i]);
        let (ldx, ldy, ldz) = f.dir_to_local(dx[i], dy[i], dz[i]);
        let dn = ldx * nx + ldy * ny + ldz * nz;
        let s = 2.0 * dn;
        let (rx, ry, rz) = (ldx - nx * s, ldy - ny * s, ldz - nz * s);
        let (gx, gy, gz) = f.dir_to_world(rx, ry, rz);
        ndx[i] = pick(m, gx, dx[i]);
        ndy[i] = pick(m, gy, dy[i]);
        ndz[i] = pick(m, gz, dz[i]);
        dn_col[i] = dn;
        (lrx[i], lry[i], lrz[i]) = (rx, ry, rz);
    }
    // …and whether it can come back.
    for i in 0..n {
        let (px, py, pz) = (hx[i], hy[i], hz[i]);
        let (rx, ry, rz) = (lrx[i], lry[i], lrz[i]);
        // The reflected line meets the conic at P (t = 0) and at
        // t₂ = −2·q_b/q_a: the ray can meet this mirror again on its next
        // leg only there. Rule it out only when t₂ is clearly behind, or
        // lands clearly off the clear aperture or on the far branch, so
        // that rounding cannot make the exact solve disagree.
        let (sx, srx) = (px * xs, rx * xs);
        let qa = c * (srx * srx + ry * ry) + kap * rz * rz;
        let qb = c * (sx * srx + py * ry) - rz + kap * pz * rz;
        let t2 = -2.0 * qb / qa;
        let (qx, qy, qz) = (px + rx * t2, py + ry * t2, pz + rz * t2);
        let margin = near + SECOND_ROOT_REL * t2.abs();
        let off = cr.clear.clearly_outside::<STRIP>(qx, qy, margin) | (kap * qz > 1.0 + SECOND_ROOT_REL);
        let gone = (t2 < -near) | (t2.abs() == f64::INFINITY) | ((t2 > near) & off);
        gone_col[i] = if gone { 1.0 } else { 0.0 };
    }
    // …then the ray's state: the back face absorbs, so does the bounce
    // limit or a ray with no power left.
    swap_cols!(b; ox/alt_ox, oy/alt_oy, oz/alt_oz, dx/alt_dx, dy/alt_dy, dz/alt_dz, opl/alt_opl, w/alt_w);
    let (bounces, skip, alive) = (&b.bounces[..n], &b.skip[..n], &b.alive[..n]);
    let (nbounces, nskip, nalive) = (&mut b.alt_bounces[..n], &mut b.alt_skip[..n], &mut b.alt_alive[..n]);
    let (dn, w, gone) = (&b.t0[..n], &b.w[..n], &b.aux[..n]);
    for i in 0..n {
        let m = best[i] == k;
        let nb = bounces[i] + 1;
        let lives = !(dn[i] >= 0.0) & (nb <= max_bounces) & !(w[i] <= 0.0);
        let not_again = rec.no_return | (predict & (gone[i] != 0.0));
        nbounces[i] = pick_u32(m, nb, bounces[i]);
        nskip[i] = pick_u64(m, if not_again { k as u64 } else { NO_SKIP }, skip[i]);
        nalive[i] = (m & lives) | (!m & alive[i]);
    }
    swap_cols!(b; bounces/alt_bounces, skip/alt_skip, alive/alt_alive);
}

/// Aspheric and spline mirrors: the same reflection with the exact normal.
fn reflect_general(scene: &Scene, rec: &Rec, k: usize, b: &mut Batch, n: usize) {
    let Part::Mirror { surface, .. } = &scene.elements[k].part else { return };
    let f = rec.frame;
    for i in 0..n {
        if b.best[i] != k as u32 {
            continue;
        }
        let (px, py, pz) = (b.hx[i], b.hy[i], b.hz[i]);
        let m = surface.normal_at(&Vec3::new(px, py, pz));
        let (ldx, ldy, ldz) = f.dir_to_local(b.dx[i], b.dy[i], b.dz[i]);
        let dn = ldx * m.x + ldy * m.y + ldz * m.z;
        let s = 2.0 * dn;
        let (gx, gy, gz) = f.dir_to_world(ldx - m.x * s, ldy - m.y * s, ldz - m.z * s);
        (b.dx[i], b.dy[i], b.dz[i]) = (gx, gy, gz);
        (b.ox[i], b.oy[i], b.oz[i]) = f.point_to_world(px, py, pz);
        b.opl[i] += b.t[i];
        b.bounces[i] += 1;
        b.w[i] *= rec.reflectivity;
        b.skip[i] = if rec.no_return { k as u64 } else { NO_SKIP };
        b.alive[i] = !(dn >= 0.0) && b.bounces[i] <= scene.max_bounces && !(b.w[i] <= 0.0);
    }
}

/// Slope error of mirror `k`: every ray that reflected off it and lives
/// on is re-reflected about the tilted normal (`SlopeError::perturb`, the
/// reference tracer's own step, with the same counters). Runs only for
/// mirrors that have a slope error.
fn slope_pass(scene: &Scene, s: &SlopeError, k: usize, b: &mut Batch, n: usize, src: u32) {
    let e = &scene.elements[k];
    let Part::Mirror { surface, .. } = &e.part else { return };
    for i in 0..n {
        if b.best[i] != k as u32 || !b.alive[i] {
            continue;
        }
        let normal = surface.normal_at(&Vec3::new(b.hx[i], b.hy[i], b.hz[i]));
        let out = Vec3::new(b.dx[i], b.dy[i], b.dz[i]);
        let d = s.perturb(&e.frame, &normal, &out, src, b.base + b.ray[i] as u64, b.round);
        (b.dx[i], b.dy[i], b.dz[i]) = (d.x, d.y, d.z);
    }
}

/// `if m { a } else { b }` with both sides evaluated, as bit operations:
/// the compiler keeps it a blend instead of a branch or a masked store.
#[inline(always)]
fn pick(m: bool, a: f64, b: f64) -> f64 {
    let mask = (m as u64).wrapping_neg();
    f64::from_bits((a.to_bits() & mask) | (b.to_bits() & !mask))
}

/// `pick` for 64-bit whole numbers.
#[inline(always)]
fn pick_u64(m: bool, a: u64, b: u64) -> u64 {
    let mask = (m as u64).wrapping_neg();
    (a & mask) | (b & !mask)
}

/// `pick` for whole numbers.
#[inline(always)]
fn pick_u32(m: bool, a: u32, b: u32) -> u32 {
    let mask = (m as u32).wrapping_neg();
    (a & mask) | (b & !mask)
}

/// The conic's unit normals at local points `p` into `out`, as [`unit`]
/// rounds them. In a loop of its own: with the reflection in the same
/// loop, the wasm build's compiler left the whole loop scalar, and on its
/// own it still judged the root and division not worth two lanes, so the
/// wasm build spells the pairs out (the same operations in the same
/// order, so the same bits).
#[inline(always)]
fn conic_normals(cr: &ConicRec, p: [&[f64]; 3], out: [&mut [f64]; 3]) {
    let [px, py, pz] = p;
    let [nx, ny, nz] = out;
    let n = px.len().min(py.len()).min(pz.len()).min(nx.len()).min(ny.len()).min(nz.len());
    #[allow(unused_mut)]
    let mut done = 0;
    #[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
    {
        use core::arch::wasm32::{f64x2_add, f64x2_div, f64x2_mul, f64x2_splat, f64x2_sqrt, f64x2_sub, v128_load, v128_store};
        let (mc, mk, one) = (f64x2_splat(-cr.c), f64x2_splat(cr.kappa), f64x2_splat(1.0));
        let (xs, zero) = (!cr.extruded, f64x2_splat(0.0));
        while done + 2 <= n {
            let i = done;
            // SAFETY: i + 1 < n, within every slice (n is the shortest);
            // v128 loads and stores need no alignment.
            unsafe {
                let x = if xs { f64x2_mul(mc, v128_load(px.as_ptr().add(i).cast())) } else { zero };
                let y = f64x2_mul(mc, v128_load(py.as_ptr().add(i).cast()));
                let z = f64x2_sub(one, f64x2_mul(mk, v128_load(pz.as_ptr().add(i).cast())));
                let len = f64x2_sqrt(f64x2_add(f64x2_add(f64x2_mul(x, x), f64x2_mul(y, y)), f64x2_mul(z, z)));
                let inv = f64x2_div(one, len);
                v128_store(nx.as_mut_ptr().add(i).cast(), f64x2_mul(x, inv));
                v128_store(ny.as_mut_ptr().add(i).cast(), f64x2_mul(y, inv));
                v128_store(nz.as_mut_ptr().add(i).cast(), f64x2_mul(z, inv));
            }
            done += 2;
        }
    }
    for i in done..n {
        (nx[i], ny[i], nz[i]) = unit(if cr.extruded { 0.0 } else { -cr.c * px[i] }, -cr.c * py[i], 1.0 - cr.kappa * pz[i]);
    }
}

/// (x, y, z) scaled to unit length, as `geometry::unit` rounds it.
#[inline(always)]
fn unit(x: f64, y: f64, z: f64) -> (f64, f64, f64) {
    let inv = 1.0 / (x * x + y * y + z * z).sqrt();
    (x * inv, y * inv, z * inv)
}
