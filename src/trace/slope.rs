//! Mirror slope errors: the surface normal at each reflection tilted by a
//! Gaussian error, independently along two axes of the local tangent
//! plane, σ per axis (docs/FORMATS.md §2, `slope_error_mrad`).
//!
//! The reflection itself is left as it is; for a mirror with σ > 0 one
//! extra step re-reflects the ray about the tilted normal. Its random
//! numbers come from a counter-based hash of (the mirror's seed, source,
//! ray number, event number), never from a running stream, so a ray's
//! fate depends only on its number and the scene: the scalar reference
//! and the batched tracer call this same function with the same inputs and
//! get the same bits, whatever the batches, threads and slices. No fused
//! multiply–add.

use crate::geometry::{reflect, unit, Frame, Vec3};

/// A mirror's slope error as the tracers use it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SlopeError {
    /// σ per tangent axis, radians.
    pub sigma: f64,
    /// The mirror's own seed (from its id), so two mirrors draw
    /// independent errors for the same ray.
    pub seed: u64,
}

/// SplitMix64's finaliser: a bijective 64-bit mix (Steele, Lea & Flood,
/// "Fast splittable pseudorandom number generators", OOPSLA 2014).
#[inline]
fn mix(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// Two independent standard normal deviates for one reflection, by the
/// Box–Muller transform of two uniforms hashed from the counters.
pub fn gauss_pair(seed: u64, src: u32, ray: u64, event: u32) -> (f64, f64) {
    let h1 = mix(seed ^ mix(ray ^ mix(((src as u64) << 32) | event as u64)));
    let h2 = mix(h1);
    const TWO_M53: f64 = 1.0 / 9_007_199_254_740_992.0;
    let u1 = ((h1 >> 11) + 1) as f64 * TWO_M53; // (0, 1]
    let u2 = (h2 >> 11) as f64 * TWO_M53; // [0, 1)
    let r = (-2.0 * u1.ln()).sqrt();
    let (s, c) = (std::f64::consts::TAU * u2).sin_cos();
    (r * c, r * s)
}

impl SlopeError {
    /// The direction of a ray that has just reflected (unit world
    /// direction `out`) off the ideal surface with local unit normal `n`,
    /// re-reflected about the normal tilted by this error: the incoming
    /// direction is recovered (reflection is its own inverse), the normal
    /// tilted by σ·g along two tangent axes, and the ray reflected again.
    pub fn perturb(&self, frame: &Frame, n: &Vec3, out: &Vec3, src: u32, ray: u64, event: u32) -> Vec3 {
        let (g1, g2) = gauss_pair(self.seed, src, ray, event);
        let r = frame.to_local_dir(out);
        let d = reflect(&r, n);
        // Tangent axes: local x (else local y, near a normal along x)
        // with its normal part removed, and n × that.
        let a = if n.x.abs() < 0.9 { Vec3::new(1.0, 0.0, 0.0) } else { Vec3::new(0.0, 1.0, 0.0) };
        let t1 = unit(&(a - n * a.dot(n)));
        let t2 = n.cross(&t1);
        let tilted = unit(&(n + t1 * (self.sigma * g1) + t2 * (self.sigma * g2)));
        unit(&frame.to_world_dir(&reflect(&d, &tilted)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand_xoshiro::rand_core::{Rng, SeedableRng};
    use rand_xoshiro::SplitMix64;

    /// SplitMix64's first output from state `s`, by the rand_xoshiro crate
    /// (checked there against Vigna's reference splitmix64.c).
    fn splitmix(s: u64) -> u64 {
        SplitMix64::seed_from_u64(s).next_u64()
    }

    #[test]
    fn mix_is_the_splitmix64_finaliser() {
        let mut s = 0x0123_4567_89ab_cdef_u64;
        for seed in [0, 1, 42, 1 << 63, u64::MAX] {
            assert_eq!(mix(seed), splitmix(seed), "state {seed}");
        }
        for _ in 0..1000 {
            s = splitmix(s);
            assert_eq!(mix(s), splitmix(s), "state {s}");
        }
    }

    #[test]
    fn gauss_pair_is_box_muller_of_the_hashed_counters() {
        // The counters hashed as documented (mirror seed, then ray, then
        // source in the high and event in the low 32 bits), two uniforms
        // of 53 bits, and the Box–Muller transform (Box & Muller, Ann.
        // Math. Statist. 29, 1958): √(−2 ln u1)·(cos, sin)(2π u2).
        for (seed, src, ray, event) in [(7u64, 0u32, 0u64, 0u32), (0x9e37, 3, 123_456_789, 5), (u64::MAX, 65_535, u64::MAX, 17)] {
            let h1 = splitmix(seed ^ splitmix(ray ^ splitmix((u64::from(src) << 32) | u64::from(event))));
            let h2 = splitmix(h1);
            let u1 = ((h1 >> 11) + 1) as f64 / 2f64.powi(53);
            let u2 = (h2 >> 11) as f64 / 2f64.powi(53);
            let r = (-2.0 * u1.ln()).sqrt();
            let a = 2.0 * std::f64::consts::PI * u2;
            let (g1, g2) = gauss_pair(seed, src, ray, event);
            assert_eq!((g1.to_bits(), g2.to_bits()), ((r * a.cos()).to_bits(), (r * a.sin()).to_bits()), "{seed} {src} {ray} {event}");
        }
    }

    #[test]
    fn perturb_tilts_the_vertex_normal_along_local_x_and_y() {
        // At the vertex (normal +z) the tangent axes are local x and
        // n × x = y: the normal tilts to (σ·g1, σ·g2, 1)/norm and the ray
        // leaves by the law of reflection about it (r = d − 2(d·n)n, Hecht,
        // Optics, 5th ed., §4.3 in vector form).
        let frame = Frame::in_plane([0.0, 0.0], 0.0);
        let err = SlopeError { sigma: 0.01, seed: 99 };
        let d = [0.0, 0.6, -0.8];
        let out = Vec3::new(0.0, 0.6, 0.8); // d reflected by the ideal surface
        for (src, ray, event) in [(0u32, 5u64, 1u32), (2, 77, 3)] {
            let (g1, g2) = gauss_pair(err.seed, src, ray, event);
            let m = [err.sigma * g1, err.sigma * g2, 1.0];
            let len = (m[0] * m[0] + m[1] * m[1] + m[2] * m[2]).sqrt();
            let m = m.map(|x| x / len);
            let dm = d[0] * m[0] + d[1] * m[1] + d[2] * m[2];
            let want: [f64; 3] = std::array::from_fn(|k| d[k] - 2.0 * dm * m[k]);
            let got = err.perturb(&frame, &Vec3::new(0.0, 0.0, 1.0), &out, src, ray, event);
            for k in 0..3 {
                assert!((got[k] - want[k]).abs() < 1e-14, "{src} {ray} {event}: {got:?} against {want:?}");
            }
            assert!(g1.abs() > 1e-3 && g2.abs() > 1e-3, "both tilts matter here: {g1} {g2}");
        }
    }
}
