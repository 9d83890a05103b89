//! The sun's radiance across the sky: a uniform disk, a limb-darkened disk,
//! or a disk with its circumsolar aureole (Buie, Monger & Dey, "Sunshape
//! distributions for terrestrial solar simulations", Solar Energy 74
//! (2003) 113–122).
//!
//! A sun beam's directions are the seeded Halton disk samples of
//! [`sun_points`] moved radially: a sample at radius r (area fraction r²
//! of the unit disk) goes to the angle θ whose share of the sun's power
//! inside θ is r², so each ray carries the same power and the traced
//! radiance follows the profile. The emitter then maps the moved sample
//! onto the cap of half-angle [`Shape::outer`] exactly as it maps a uniform
//! disk (docs/FORMATS.md §2).

use super::sampling::{cached_points, sun_points, DiskPoints, Set};
use crate::layout::Sunshape;
use std::sync::Arc;

/// Half-angle of the solar disk in the Buie et al. (2003) model, mrad.
pub const BUIE_DISK_MRAD: f64 = 4.65;
/// Where the Buie et al. (2003) aureole ends, mrad.
pub const BUIE_AUREOLE_MRAD: f64 = 43.6;
/// Points of the tabulated power fraction against angle.
const TABLE_POINTS: usize = 8192;

/// Limb darkening I(μ)/I(1) = (2 + 3μ)/5, μ the cosine of the angle
/// between the line of sight and the solar surface normal: the grey
/// atmosphere in the Eddington approximation (Mihalas, Stellar
/// Atmospheres, 2nd ed. 1978, ch. 3; Chandrasekhar, Radiative Transfer,
/// 1950), close to the Sun's visible limb darkening.
pub fn limb_intensity(mu: f64) -> f64 {
    (2.0 + 3.0 * mu) / 5.0
}

/// The Buie et al. (2003) aureole parameters (κ, γ) for the model's χ:
/// κ = 0.9 ln(13.5χ) χ^−0.3, γ = 2.2 ln(0.52χ) χ^0.43 − 0.1.
pub fn buie_kappa_gamma(chi: f64) -> (f64, f64) {
    let kappa = 0.9 * (13.5 * chi).ln() * chi.powf(-0.3);
    let gamma = 2.2 * (0.52 * chi).ln() * chi.powf(0.43) - 0.1;
    (kappa, gamma)
}

/// Relative radiance of the Buie et al. (2003) sun at θ mrad from the
/// centre: cos(0.326θ)/cos(0.308θ) on the disk (θ ≤ 4.65), e^κ θ^γ in the
/// aureole (4.65 < θ ≤ 43.6), 0 beyond.
pub fn buie_radiance(theta_mrad: f64, chi: f64) -> f64 {
    if theta_mrad <= BUIE_DISK_MRAD {
        (0.326 * theta_mrad).cos() / (0.308 * theta_mrad).cos()
    } else if theta_mrad <= BUIE_AUREOLE_MRAD && chi > 0.0 {
        let (k, g) = buie_kappa_gamma(chi);
        k.exp() * theta_mrad.powf(g)
    } else {
        0.0
    }
}

/// Power of the Buie disk, ∫₀^4.65 φ(θ) θ dθ (small-angle sky; Simpson's
/// rule, far finer than the profile varies), computed once.
fn buie_disk_power() -> f64 {
    static POWER: std::sync::OnceLock<f64> = std::sync::OnceLock::new();
    *POWER.get_or_init(buie_disk_integral)
}

fn buie_disk_integral() -> f64 {
    let n = 2000;
    let h = BUIE_DISK_MRAD / n as f64;
    let f = |t: f64| buie_radiance(t, 0.0) * t;
    let mut s = f(0.0) + f(BUIE_DISK_MRAD);
    for i in 1..n {
        s += f(i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 };
    }
    s * h / 3.0
}

/// Power of the aureole, ∫ e^κ θ^γ θ dθ from 4.65 to 43.6 mrad (closed
/// form).
fn buie_aureole_power(chi: f64) -> f64 {
    if chi <= 0.0 {
        return 0.0;
    }
    let (k, g) = buie_kappa_gamma(chi);
    let p = g + 2.0;
    if p.abs() < 1e-12 {
        return k.exp() * (BUIE_AUREOLE_MRAD / BUIE_DISK_MRAD).ln();
    }
    k.exp() * (BUIE_AUREOLE_MRAD.powf(p) - BUIE_DISK_MRAD.powf(p)) / p
}

/// The circumsolar ratio the model gives for χ: aureole power over total.
pub fn buie_csr_of_chi(chi: f64) -> f64 {
    let a = buie_aureole_power(chi);
    a / (a + buie_disk_power())
}

/// The model's χ whose circumsolar ratio is `csr` (bisection on ln χ; the
/// ratio grows with χ). `csr` ≤ 0 gives 0 (no aureole).
pub fn buie_chi_for(csr: f64) -> f64 {
    if csr <= 0.0 {
        return 0.0;
    }
    let (mut lo, mut hi) = ((1e-9f64).ln(), (0.99f64).ln());
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if buie_csr_of_chi(mid.exp()) < csr {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    (0.5 * (lo + hi)).exp()
}

/// A sun's shape ready for sampling: the tabulated power fraction
/// `cdf[k]` inside angle `theta[k]` (radians), and the outer half-angle.
#[derive(Debug, Clone)]
pub struct Shape {
    theta: Vec<f64>,
    cdf: Vec<f64>,
    /// Outermost angle the sun sends light from, radians.
    pub outer: f64,
}

impl Shape {
    /// The shape of a sun of disk half-angle `half` (radians). For `csr`
    /// the Buie profile is scaled so its 4.65 mrad disk edge lands on
    /// `half` (for the mean sun, 4.65 mrad, it is the published profile).
    pub fn new(shape: Sunshape, csr: f64, half: f64) -> Shape {
        let m = TABLE_POINTS;
        match shape {
            Sunshape::Disk => Shape { theta: vec![0.0, half], cdf: vec![0.0, 1.0], outer: half },
            Sunshape::Limb => {
                // ∫ I(μ(ρ)) ρ dρ with ρ dρ = −μ dμ: F = (2 − μ² − μ³)/2.
                let mut theta = Vec::with_capacity(m + 1);
                let mut cdf = Vec::with_capacity(m + 1);
                for k in 0..=m {
                    let rho = k as f64 / m as f64;
                    let mu = (1.0 - rho * rho).max(0.0).sqrt();
                    theta.push(rho * half);
                    cdf.push((2.0 - mu * mu - mu * mu * mu) / 2.0);
                }
                Shape { theta, cdf, outer: half }
            }
            Sunshape::Csr => {
                let chi = buie_chi_for(csr);
                let scale = half / BUIE_DISK_MRAD; // radians per model mrad
                let top = if chi > 0.0 { BUIE_AUREOLE_MRAD } else { BUIE_DISK_MRAD };
                // Cumulative trapezoids of φ(θ)θ on a grid that puts a node
                // exactly on the disk edge (the profile jumps there).
                let edge = (m as f64 * BUIE_DISK_MRAD / top).round() as usize;
                let node = |k: usize| {
                    if k <= edge {
                        BUIE_DISK_MRAD * k as f64 / edge.max(1) as f64
                    } else {
                        BUIE_DISK_MRAD + (top - BUIE_DISK_MRAD) * (k - edge) as f64 / (m - edge).max(1) as f64
                    }
                };
                let mut theta = vec![0.0];
                let mut cdf = vec![0.0];
                let mut acc = 0.0;
                for k in 1..=m {
                    let (a, b) = (node(k - 1), node(k));
                    // Left and right limits across the disk edge.
                    let fa = if k - 1 == edge { buie_radiance(a * (1.0 + 1e-12), chi) } else { buie_radiance(a, chi) };
                    let fb = buie_radiance(b, chi);
                    acc += 0.5 * (fa * a + fb * b) * (b - a);
                    theta.push(b * scale);
                    cdf.push(acc);
                }
                for c in cdf.iter_mut() {
                    *c /= acc;
                }
                Shape { theta, cdf, outer: top * scale }
            }
        }
    }

    /// The angle (radians) inside which a share `u` of the power lies.
    pub fn angle_at(&self, u: f64) -> f64 {
        let u = u.clamp(0.0, 1.0);
        let k = self.cdf.partition_point(|&c| c <= u).clamp(1, self.cdf.len() - 1);
        let (c0, c1) = (self.cdf[k - 1], self.cdf[k]);
        let (t0, t1) = (self.theta[k - 1], self.theta[k]);
        if c1 > c0 { t0 + (t1 - t0) * (u - c0) / (c1 - c0) } else { t0 }
    }
}

/// The direction samples of a sun beam on the unit disk (mapped by the
/// emitter onto the cap of half-angle `outer`), and `outer` in radians.
/// A uniform disk is [`sun_points`] itself.
pub fn sun_directions(shape: Sunshape, csr: f64, half: f64, n: usize, seed: u64) -> (Arc<DiskPoints>, f64) {
    let base = sun_points(n, seed);
    if shape == Sunshape::Disk {
        return (base, half);
    }
    let sh = Shape::new(shape, csr, half);
    let omc_outer = 1.0 - sh.outer.cos();
    let tag = Set::ShapedSun(shape as u8, csr.to_bits(), half.to_bits());
    let pts = cached_points(tag, n, seed, || {
        let mut out = DiskPoints::default();
        for i in 0..base.len() {
            let [x, y] = base.get(i);
            let r2 = x * x + y * y;
            if r2 == 0.0 {
                out.x.push(0.0);
                out.y.push(0.0);
                continue;
            }
            let theta = sh.angle_at(r2);
            // Cap coordinate of θ: the emitter's cos θ = 1 − r²(1 − cos outer).
            let r_new = ((1.0 - theta.cos()) / omc_outer).sqrt();
            let s = r_new / r2.sqrt();
            out.x.push(x * s);
            out.y.push(y * s);
        }
        out
    });
    (pts, sh.outer)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn limb_darkening_is_the_eddington_law() {
        // I(μ)/I(1) = (2 + 3μ)/5: 1 at the centre, 2/5 at the limb
        // (Mihalas, Stellar Atmospheres, 2nd ed. 1978, ch. 3).
        for (mu, want) in [(1.0, 1.0), (0.0, 0.4), (0.5, 0.7), (0.2, 0.52)] {
            assert!((limb_intensity(mu) - want).abs() < 1e-15, "I({mu}) = {}", limb_intensity(mu));
        }
    }

    #[test]
    fn the_limb_darkened_power_fraction_integrates_the_limb_law() {
        // The sampler's closed form F(ρ) = (2 − μ² − μ³)/2 against
        // Simpson's rule on ∫₀^ρ I(μ(r)) r dr / ∫₀^1 I(μ(r)) r dr, with
        // μ = √(1 − r²) on a small-angle disk of unit radius.
        let shape = Shape::new(Sunshape::Limb, 0.0, 1.0);
        let f = |r: f64| limb_intensity((1.0 - r * r).max(0.0).sqrt()) * r;
        let simpson = |b: f64| {
            let n = 4000;
            let h = b / n as f64;
            let s: f64 = (1..n).map(|i| f(i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 }).sum();
            (s + f(0.0) + f(b)) * h / 3.0
        };
        let total = simpson(1.0);
        for k in [512, 2048, 4096, 6144, 8000] {
            let (rho, cdf) = (shape.theta[k], shape.cdf[k]);
            assert!((cdf - simpson(rho) / total).abs() < 1e-6, "ρ = {rho}: {cdf} against {}", simpson(rho) / total);
        }
    }

    #[test]
    fn the_buie_profile_is_zero_outside_its_disk_and_aureole() {
        // Buie, Monger & Dey (2003): the aureole spans 4.65–43.6 mrad and
        // nothing lies beyond it; χ = 0 is the sun without an aureole.
        for chi in [0.01, 0.05, 0.2] {
            assert_eq!(buie_radiance(43.7, chi), 0.0, "χ = {chi}");
            assert_eq!(buie_radiance(80.0, chi), 0.0, "χ = {chi}");
            assert!(buie_radiance(43.5, chi) > 0.0, "χ = {chi}");
        }
        for theta in [4.7, 10.0, 43.0] {
            assert_eq!(buie_radiance(theta, 0.0), 0.0, "θ = {theta}");
        }
        // At the centre of the disk the profile is 1 (cos 0 / cos 0).
        assert_eq!(buie_radiance(0.0, 0.1), 1.0);
    }

    #[test]
    fn the_disk_power_matches_a_fine_independent_quadrature() {
        // ∫₀^4.65 φ(θ) θ dθ of the Buie disk profile by the composite
        // midpoint rule on 400,000 panels (error ~1e-12 relative for this
        // smooth integrand; the composite midpoint rule, common practice).
        let n = 400_000;
        let h = BUIE_DISK_MRAD / n as f64;
        let fine: f64 = (0..n)
            .map(|i| {
                let t = (i as f64 + 0.5) * h;
                (0.326 * t).cos() / (0.308 * t).cos() * t
            })
            .sum::<f64>()
            * h;
        let ours = buie_disk_integral();
        assert!(((ours - fine) / fine).abs() < 1e-9, "{ours} against {fine}");
    }

    #[test]
    fn the_aureole_power_at_gamma_minus_two_is_the_logarithmic_limit() {
        // ∫ e^κ θ^γ θ dθ over [4.65, 43.6] is e^κ (b^p − a^p)/p with
        // p = γ + 2, and e^κ ln(b/a) in the limit p → 0 (calculus). Find
        // the χ where the published γ(χ) = 2.2 ln(0.52χ) χ^0.43 − 0.1
        // (Buie et al. 2003) is −2 by bisection (γ falls as χ grows here).
        let gamma = |chi: f64| 2.2 * (0.52 * chi).ln() * chi.powf(0.43) - 0.1;
        let (mut lo, mut hi) = (0.01f64, 0.05f64);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if gamma(mid) > -2.0 { lo = mid } else { hi = mid }
        }
        let chi = 0.5 * (lo + hi);
        assert!((gamma(chi) + 2.0).abs() < 1e-13, "γ = {}", gamma(chi));
        let kappa = 0.9 * (13.5 * chi).ln() * chi.powf(-0.3);
        let limit = kappa.exp() * (BUIE_AUREOLE_MRAD / BUIE_DISK_MRAD).ln();
        let at = buie_aureole_power(chi);
        assert!(((at - limit) / limit).abs() < 1e-9, "{at} against {limit}");
        // And the general form joins it on either side.
        for f in [1.0 - 1e-4, 1.0 + 1e-4] {
            let near = buie_aureole_power(chi * f);
            assert!(((near - limit) / limit).abs() < 1e-3, "χ·{f}: {near} against {limit}");
        }
    }

    #[test]
    fn angle_at_inverts_the_limb_darkened_power_fraction() {
        // Inverse-transform sampling (Devroye, Non-Uniform Random Variate
        // Generation, 1986, §II.2): the angle holding a share
        // F(ρ) = (2 − μ² − μ³)/2 of the limb-darkened disk's power
        // (μ = √(1 − ρ²), the Eddington law integrated) is ρ·half; between
        // the table's 8192 nodes the interpolation is good to ~1e-8.
        let half = 4.65e-3;
        let shape = Shape::new(Sunshape::Limb, 0.0, half);
        for rho in [0.1234f64, 0.3, 0.5, 0.777, 0.9, 0.99] {
            let mu = (1.0 - rho * rho).sqrt();
            let u = (2.0 - mu * mu - mu * mu * mu) / 2.0;
            let got = shape.angle_at(u);
            assert!((got - rho * half).abs() < 1e-6 * half, "ρ = {rho}: {got} against {}", rho * half);
        }
        assert_eq!(shape.angle_at(0.0), 0.0);
        assert_eq!(shape.angle_at(1.0), half, "all the power lies inside the disk");
    }
}
