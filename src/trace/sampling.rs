//! Deterministic sample points on the unit disk: hexagonal and square
//! lattices, and a seeded low-discrepancy (Halton) sequence.

use crate::layout::Pattern;
use std::sync::{Arc, Mutex, OnceLock};

/// Radical inverse of `i` in `base` (the Halton sequence's coordinate).
#[inline]
pub fn halton(i: u64, base: u64) -> f64 {
    match base {
        2 => halton2(i),
        3 => halton_const::<3>(i),
        5 => halton_const::<5>(i),
        7 => halton_const::<7>(i),
        _ => halton_any(i, base),
    }
}

/// Base-2 radical inverse by bit reversal; exact (and equal to the digit
/// loop) for i < 2⁵³.
#[inline]
fn halton2(i: u64) -> f64 {
    i.reverse_bits() as f64 * (1.0 / 18_446_744_073_709_551_616.0)
}

/// x mod 1 for x in [0, 2): the rotated sequence value, without a call to
/// `trunc` (not inlined on baseline x86-64).
#[inline]
fn wrap01(x: f64) -> f64 {
    if x >= 1.0 { x - 1.0 } else { x }
}

/// The radical inverse with a constant base: inlined with the base known,
/// the compiler turns the divisions into multiplications (the sampler's hot
/// spot).
#[inline(always)]
fn halton_const<const B: u64>(i: u64) -> f64 {
    radical_inverse(i, B)
}

fn halton_any(i: u64, base: u64) -> f64 {
    radical_inverse(i, base.max(2))
}

#[inline(always)]
fn radical_inverse(mut i: u64, base: u64) -> f64 {
    let inv = 1.0 / base as f64;
    let mut f = inv;
    let mut r = 0.0;
    while i > 0 {
        r += f * (i % base) as f64;
        i /= base;
        f *= inv;
    }
    r
}

/// Stable 64-bit seed from an id (FNV-1a), so each source has its own
/// sequence and a run repeats exactly.
pub fn seed_of(id: &str) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in id.bytes() {
        h ^= b as u64;
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h
}

/// Two offsets in [0, 1) from a seed (Cranley–Patterson rotation).
pub fn rotation(seed: u64, salt: u64) -> (f64, f64) {
    let a = seed.wrapping_add(salt.wrapping_mul(0x9e37_79b9_7f4a_7c15));
    let mix = |mut z: u64| {
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    };
    let u = (mix(a) >> 11) as f64 / (1u64 << 53) as f64;
    let v = (mix(a ^ 0x5555) >> 11) as f64 / (1u64 << 53) as f64;
    (u, v)
}

/// Shirley–Chiu concentric map of the unit square onto the unit disk
/// (area preserving, keeps stratification).
#[inline]
pub fn square_to_disk(u: f64, v: f64) -> [f64; 2] {
    let a = 2.0 * u - 1.0;
    let b = 2.0 * v - 1.0;
    if a == 0.0 && b == 0.0 {
        return [0.0, 0.0];
    }
    let q = std::f64::consts::FRAC_PI_4;
    let (r, phi) = if a.abs() > b.abs() { (a, q * (b / a)) } else { (b, 2.0 * q - q * (a / b)) };
    [r * phi.cos(), r * phi.sin()]
}

/// Point `i` of the seeded Halton sequence in bases (b1, b2), mapped to
/// the disk.
#[inline]
pub fn halton_disk(i: u64, bases: (u64, u64), rot: (f64, f64)) -> [f64; 2] {
    let u = wrap01(halton(i + 1, bases.0) + rot.0);
    let v = wrap01(halton(i + 1, bases.1) + rot.1);
    square_to_disk(u, v)
}

/// About `n` points on the unit disk in the given pattern (exactly `n` for
/// `random`; lattices keep the points that fall inside the disk, with the
/// spacing tuned so the count is close to `n`). The last few point sets
/// are kept and shared: re-tracing the same sources lays no new points.
pub fn disk_points(pattern: Pattern, n: usize, seed: u64) -> Arc<DiskPoints> {
    let key = (Set::Disk(pattern), n.max(1), if pattern == Pattern::Random { seed } else { 0 });
    cached(key, || lay_points(pattern, key.1, seed))
}

/// The directions of an extended sun: sample `i` of the seeded Halton
/// sequence in bases (5, 7) on the unit disk (see [`halton_disk`]), for
/// i < n; cached like [`disk_points`].
pub fn sun_points(n: usize, seed: u64) -> Arc<DiskPoints> {
    let rot = rotation(seed, 2);
    cached((Set::Sun, n, seed), || {
        let mut pts = DiskPoints::with_capacity(n);
        for i in 0..n as u64 {
            let [x, y] = halton_disk(i, (5, 7), rot);
            pts.push(x, y);
        }
        pts
    })
}

/// A point set of another kind (a shaped sun's directions), cached like
/// [`disk_points`] under `set`, `n` and `seed`.
pub(crate) fn cached_points(set: Set, n: usize, seed: u64, lay: impl FnOnce() -> DiskPoints) -> Arc<DiskPoints> {
    cached((set, n, seed), lay)
}

fn cached(key: Key, lay: impl FnOnce() -> DiskPoints) -> Arc<DiskPoints> {
    let cache = CACHE.get_or_init(|| Mutex::new(Vec::new()));
    if let Ok(c) = cache.lock()
        && let Some((_, p)) = c.iter().find(|(k, _)| *k == key) {
            return Arc::clone(p);
        }
    let pts = Arc::new(lay());
    if let Ok(mut c) = cache.lock() {
        if c.len() >= CACHE_SETS {
            c.remove(0);
        }
        c.push((key, Arc::clone(&pts)));
    }
    pts
}

/// Point sets kept by [`disk_points`].
const CACHE_SETS: usize = 8;
/// Which point set: a source's disk, or a sun's directions (uniform, or
/// shaped: sunshape, csr and half-angle bits).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Set {
    Disk(Pattern),
    Sun,
    ShapedSun(u8, u64, u64),
}
type Key = (Set, usize, u64);
type Cache = Mutex<Vec<(Key, Arc<DiskPoints>)>>;
static CACHE: OnceLock<Cache> = OnceLock::new();

/// Points on the unit disk as two columns (x, y), ready to be scaled
/// into a batch of rays.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct DiskPoints {
    pub x: Vec<f64>,
    pub y: Vec<f64>,
}

impl DiskPoints {
    fn with_capacity(n: usize) -> DiskPoints {
        DiskPoints { x: Vec::with_capacity(n), y: Vec::with_capacity(n) }
    }
    fn push(&mut self, x: f64, y: f64) {
        self.x.push(x);
        self.y.push(y);
    }
    pub fn len(&self) -> usize {
        self.x.len()
    }
    pub fn is_empty(&self) -> bool {
        self.x.is_empty()
    }
    /// Point `i` as [x, y].
    pub fn get(&self, i: usize) -> [f64; 2] {
        [self.x[i], self.y[i]]
    }
}

fn lay_points(pattern: Pattern, n: usize, seed: u64) -> DiskPoints {
    match pattern {
        Pattern::Random => {
            let rot = rotation(seed, 1);
            let mut pts = DiskPoints::with_capacity(n);
            for i in 0..n as u64 {
                let u = wrap01(halton2(i + 1) + rot.0);
                let v = wrap01(halton_const::<3>(i + 1) + rot.1);
                let [x, y] = square_to_disk(u, v);
                pts.push(x, y);
            }
            pts
        }
        Pattern::Hex | Pattern::Grid => {
            if n == 1 {
                return DiskPoints { x: vec![0.0], y: vec![0.0] };
            }
            let hex = pattern == Pattern::Hex;
            // Area per point: s² (grid) or s²√3/2 (hex).
            let cell = if hex { 3f64.sqrt() / 2.0 } else { 1.0 };
            let mut s = (std::f64::consts::PI / (n as f64 * cell)).sqrt();
            // Tune the spacing on counts alone (O(rows) each), then lay the
            // points once.
            let mut count = lattice_count(hex, s);
            let (mut best_s, mut best_n) = (s, count);
            for _ in 0..4 {
                if count == n {
                    break;
                }
                s *= (count as f64 / n as f64).sqrt();
                count = lattice_count(hex, s);
                if count.abs_diff(n) < best_n.abs_diff(n) {
                    (best_s, best_n) = (s, count);
                }
            }
            let mut pts = DiskPoints::with_capacity(best_n);
            lattice(hex, best_s, |x, y| pts.push(x, y));
            pts
        }
    }
}

/// Is lattice point (x, y) inside the unit disk? (The one test both the
/// counter and the layer use.)
#[inline(always)]
fn inside(x: f64, y: f64) -> bool {
    x * x + y * y <= 1.0 + 1e-12
}

/// Row geometry of the lattice: (row pitch, rows either side of the
/// centre, column index bound).
fn rows(hex: bool, s: f64) -> (f64, i64, i64) {
    let row = if hex { s * 3f64.sqrt() / 2.0 } else { s };
    (row, (1.0 / row).floor() as i64, (1.0 / s).ceil() as i64 + 1)
}

#[inline(always)]
fn shift(hex: bool, j: i64, s: f64) -> f64 {
    if hex && j.rem_euclid(2) == 1 { 0.5 * s } else { 0.0 }
}

/// The run of column indices of row `j` inside the disk, found from the
/// circle's chord and then settled with the exact test at both ends (the
/// test is monotone in |x| along a row).
fn row_span(hex: bool, s: f64, j: i64, row: f64, imax: i64) -> Option<(i64, i64)> {
    let y = j as f64 * row;
    let sh = shift(hex, j, s);
    let at = |i: i64| inside(i as f64 * s + sh, y);
    let half = (1.0 - y * y).max(0.0).sqrt();
    let mut lo = (((-half - sh) / s).ceil() as i64).clamp(-imax, imax);
    let mut hi = (((half - sh) / s).floor() as i64).clamp(-imax, imax);
    while lo > -imax && at(lo - 1) {
        lo -= 1;
    }
    while lo <= hi && !at(lo) {
        lo += 1;
    }
    while hi < imax && at(hi + 1) {
        hi += 1;
    }
    while hi >= lo && !at(hi) {
        hi -= 1;
    }
    (lo <= hi).then_some((lo, hi))
}

/// How many lattice points (spacing `s`) lie inside the unit disk.
fn lattice_count(hex: bool, s: f64) -> usize {
    let (row, jmax, imax) = rows(hex, s);
    (-jmax..=jmax).filter_map(|j| row_span(hex, s, j, row, imax)).map(|(a, b)| (b - a + 1) as usize).sum()
}

/// Visits the lattice points (spacing `s`) inside the unit disk, row by
/// row; returns how many there are.
fn lattice(hex: bool, s: f64, mut visit: impl FnMut(f64, f64)) -> usize {
    let (row, jmax, imax) = rows(hex, s);
    let mut n = 0;
    for j in -jmax..=jmax {
        let y = j as f64 * row;
        let sh = shift(hex, j, s);
        if let Some((a, b)) = row_span(hex, s, j, row, imax) {
            for i in a..=b {
                visit(i as f64 * s + sh, y);
                n += 1;
            }
        }
    }
    n
}

/// The lattice by testing every candidate point (the definition the row
/// spans must agree with).
#[cfg(test)]
fn lattice_brute(hex: bool, s: f64) -> Vec<[f64; 2]> {
    let (row, jmax, imax) = rows(hex, s);
    let mut out = Vec::new();
    for j in -jmax..=jmax {
        let y = j as f64 * row;
        let sh = shift(hex, j, s);
        for i in -imax..=imax {
            let x = i as f64 * s + sh;
            if inside(x, y) {
                out.push([x, y]);
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn counts_are_close_and_inside() {
        for pat in [Pattern::Hex, Pattern::Grid, Pattern::Random] {
            for n in [1usize, 7, 100, 20000] {
                let p = disk_points(pat, n, 42);
                let rel = (p.len() as f64 - n as f64).abs() / n as f64;
                // Lattices come in whole rings: close for large n, looser for small.
                let tol = if n >= 1000 { 0.03 } else { 0.15 };
                assert!(rel < tol || (n < 10 && p.len() <= 2 * n), "{pat:?} {n} -> {}", p.len());
                assert!(p.x.iter().zip(&p.y).all(|(x, y)| x * x + y * y <= 1.0 + 1e-9));
            }
        }
        assert_eq!(disk_points(Pattern::Random, 50, 9), disk_points(Pattern::Random, 50, 9));
        // Each seed its own sequence (two sources never share rays), even
        // with one set of each kept in the cache; lattices ignore the seed.
        let (a, b) = (disk_points(Pattern::Random, 50, 9), disk_points(Pattern::Random, 50, 10));
        assert_ne!(a, b);
        assert_eq!(disk_points(Pattern::Hex, 50, 9), disk_points(Pattern::Hex, 50, 10));
        assert!(!a.is_empty() && DiskPoints::default().is_empty());
        // Row spans settle on exactly the points the full scan keeps.
        for hex in [true, false] {
            for s in [0.3, 0.1, 0.0371, 0.01, 1.0 / 7.0, 0.5, 2.0] {
                let mut fast = Vec::new();
                let n = lattice(hex, s, |x, y| fast.push([x, y]));
                assert_eq!(fast, lattice_brute(hex, s), "hex {hex} s {s}");
                assert_eq!(n, lattice_count(hex, s));
            }
        }
        assert!((halton(5, 2) - 0.625).abs() < 1e-15);
        // A closed disk: lattice points on the rim count, also where
        // rounding puts them a hair outside ((5/13)² + (12/13)² rounds
        // above 1).
        // The square grid of pitch 1/2 keeps the 13 points with
        // i² + j² ≤ 4 (Gauss's circle problem, N(2) = 13).
        let (a, b) = (5.0 / 13.0, 12.0 / 13.0);
        assert!(a * a + b * b > 1.0);
        assert!(inside(1.0, 0.0) && inside(a, b) && !inside(a, b + 1e-6));
        assert_eq!(lattice_count(false, 0.5), 13);
        // Shirley & Chiu, "A low distortion map between disk and square",
        // Journal of Graphics Tools 2(3), 1997: the square's centre goes to
        // the disk's, the mid-points of its sides (on the axes of the
        // centred square) to the circle where it meets the axes, and a
        // point on a half axis to the same radius along it.
        assert_eq!(square_to_disk(0.5, 0.5), [0.0, 0.0]);
        let near = |p: [f64; 2], q: [f64; 2]| (p[0] - q[0]).abs() < 1e-15 && (p[1] - q[1]).abs() < 1e-15;
        for (u, v, want) in [(1.0, 0.5, [1.0, 0.0]), (0.5, 1.0, [0.0, 1.0]), (0.0, 0.5, [-1.0, 0.0]), (0.5, 0.0, [0.0, -1.0]), (0.75, 0.5, [0.5, 0.0]), (0.5, 0.25, [0.0, -0.5])] {
            let got = square_to_disk(u, v);
            assert!(near(got, want), "({u}, {v}) -> {got:?}, want {want:?}");
        }
        // Bit reversal equals the digit loop.
        for i in [1u64, 2, 3, 12345, 987_654_321, (1 << 52) + 17] {
            assert_eq!(halton2(i), halton_any(i, 2));
            assert_eq!(halton_const::<3>(i), halton_any(i, 3));
        }
    }
}
