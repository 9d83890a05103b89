//! Deterministic sample points on the unit disk: hexagonal and square
//! lattices, and a seeded low-discrepancy (Halton) sequence.

use crate::layout::Pattern;

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
/// spacing tuned so the count is close to `n`).
pub fn disk_points(pattern: Pattern, n: usize, seed: u64) -> Vec<[f64; 2]> {
    let n = n.max(1);
    match pattern {
        Pattern::Random => {
            let rot = rotation(seed, 1);
            (0..n as u64)
                .map(|i| {
                    let u = wrap01(halton2(i + 1) + rot.0);
                    let v = wrap01(halton_const::<3>(i + 1) + rot.1);
                    square_to_disk(u, v)
                })
                .collect()
        }
        Pattern::Hex | Pattern::Grid => {
            if n == 1 {
                return vec![[0.0, 0.0]];
            }
            let hex = pattern == Pattern::Hex;
            // Area per point: s² (grid) or s²√3/2 (hex).
            let cell = if hex { 3f64.sqrt() / 2.0 } else { 1.0 };
            let mut s = (std::f64::consts::PI / (n as f64 * cell)).sqrt();
            // Tune the spacing on counts alone, then lay the points once.
            let mut count = lattice(hex, s, |_, _| {});
            let (mut best_s, mut best_n) = (s, count);
            for _ in 0..4 {
                if count == n {
                    break;
                }
                s *= (count as f64 / n as f64).sqrt();
                count = lattice(hex, s, |_, _| {});
                if count.abs_diff(n) < best_n.abs_diff(n) {
                    (best_s, best_n) = (s, count);
                }
            }
            let mut pts = Vec::with_capacity(best_n);
            lattice(hex, best_s, |x, y| pts.push([x, y]));
            pts
        }
    }
}

/// Visits the lattice points (spacing `s`) inside the unit disk, row by
/// row; returns how many there are.
fn lattice(hex: bool, s: f64, mut visit: impl FnMut(f64, f64)) -> usize {
    let row = if hex { s * 3f64.sqrt() / 2.0 } else { s };
    let jmax = (1.0 / row).floor() as i64;
    let imax = (1.0 / s).ceil() as i64 + 1;
    let mut n = 0;
    for j in -jmax..=jmax {
        let y = j as f64 * row;
        let shift = if hex && j.rem_euclid(2) == 1 { 0.5 * s } else { 0.0 };
        for i in -imax..=imax {
            let x = i as f64 * s + shift;
            if x * x + y * y <= 1.0 + 1e-12 {
                visit(x, y);
                n += 1;
            }
        }
    }
    n
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
                assert!(p.iter().all(|q| q[0] * q[0] + q[1] * q[1] <= 1.0 + 1e-9));
            }
        }
        assert_eq!(disk_points(Pattern::Random, 50, 9), disk_points(Pattern::Random, 50, 9));
        assert!((halton(5, 2) - 0.625).abs() < 1e-15);
        // Bit reversal equals the digit loop.
        for i in [1u64, 2, 3, 12345, 987_654_321, (1 << 52) + 17] {
            assert_eq!(halton2(i), halton_any(i, 2));
            assert_eq!(halton_const::<3>(i), halton_any(i, 3));
        }
    }
}
