//! Sag profiles: conic + even asphere (ISO 10110-12) + departure spline.

use super::NaturalSpline;

/// A meridian curve z(ρ): one required method.
pub trait Sag {
    /// Sag z and slope dz/dρ at signed radial coordinate ρ.
    fn sag_slope(&self, rho: f64) -> (f64, f64);
    /// Sag alone.
    fn sag(&self, rho: f64) -> f64 {
        self.sag_slope(rho).0
    }
    /// Slope alone.
    fn slope(&self, rho: f64) -> f64 {
        self.sag_slope(rho).1
    }
}

/// z(ρ) = cρ²/(1 + √(1 − (1+K)c²ρ²)) + Σ A₂ᵢρ²ⁱ (i ≥ 2) + departure(ρ).
#[derive(Debug, Clone, PartialEq)]
pub struct Profile {
    /// Vertex curvature 1/R (0 for a flat).
    pub c: f64,
    /// Conic constant K.
    pub k: f64,
    /// A4, A6, … in order.
    pub aspheric: Vec<f64>,
    pub departure: Option<NaturalSpline>,
}

impl Profile {
    pub fn conic(radius: Option<f64>, k: f64) -> Self {
        Profile { c: radius.map_or(0.0, |r| 1.0 / r), k, aspheric: Vec::new(), departure: None }
    }

    /// True when the surface is a pure conic (closed-form intersection).
    pub fn is_conic(&self) -> bool {
        self.aspheric.iter().all(|&a| a == 0.0) && self.departure.is_none()
    }

    /// Conic sag and slope only.
    #[inline]
    pub fn conic_sag_slope(&self, rho: f64) -> (f64, f64) {
        let c = self.c;
        let r2 = rho * rho;
        let arg = (1.0 - (1.0 + self.k) * c * c * r2).max(0.0);
        let root = arg.sqrt();
        let z = c * r2 / (1.0 + root);
        let dz = if root > 0.0 { c * rho / root } else { f64::INFINITY.copysign(c * rho) };
        (z, dz)
    }
}

impl Sag for Profile {
    #[inline]
    fn sag_slope(&self, rho: f64) -> (f64, f64) {
        let (mut z, mut dz) = self.conic_sag_slope(rho);
        if !self.aspheric.is_empty() {
            let r2 = rho * rho;
            // ρ^(2i) for i = 2, 3, …: start at ρ⁴.
            let mut p = r2 * r2;
            let mut n = 4.0;
            for &a in &self.aspheric {
                z += a * p;
                dz += a * n * p / rho.abs().max(f64::MIN_POSITIVE) * rho.signum();
                p *= r2;
                n += 2.0;
            }
        }
        if let Some(s) = &self.departure {
            let (v, d) = s.eval(rho);
            z += v;
            dz += d;
        }
        (z, dz)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn slope_matches_finite_difference() {
        let mut p = Profile::conic(Some(800.0), -0.7);
        p.aspheric = vec![1e-10, -2e-15];
        p.departure = NaturalSpline::new(&[[0.0, 0.0], [40.0, 1e-4], [90.0, -2e-4]]);
        for rho in [-70.0, -3.0, 5.0, 33.0, 88.0] {
            let h = 1e-5;
            let fd = (p.sag(rho + h) - p.sag(rho - h)) / (2.0 * h);
            assert!((fd - p.slope(rho)).abs() < 1e-8, "rho {rho}: {fd} vs {}", p.slope(rho));
        }
    }

    #[test]
    fn slope_at_the_rim_of_the_conic_is_infinite_with_the_inner_sign() {
        // dz/dρ = cρ / √(1 − (1+K)c²ρ²) (the derivative of the ISO 10110-12
        // conic sag) grows without bound at the rim ρ² = 1/((1+K)c²), where
        // the meridian turns parallel to the axis; there the slope is ±∞
        // with the sign it has just inside. Concave and convex, both sides
        // of the axis, sphere, prolate and oblate.
        for radius in [800.0, -800.0] {
            for k in [0.0, -0.5, 2.0] {
                let p = Profile::conic(Some(radius), k);
                let rim = 1.0 / ((1.0 + k) * p.c * p.c).sqrt();
                for side in [1.0, -1.0] {
                    let inside = p.conic_sag_slope(side * rim * (1.0 - 1e-6)).1;
                    let at = p.conic_sag_slope(side * rim * (1.0 + 1e-12)).1;
                    assert!(inside.abs() > 100.0, "R {radius} K {k}: {inside}");
                    assert!(at.is_infinite() && at.signum() == inside.signum(), "R {radius} K {k} side {side}: {at} vs {inside}");
                }
            }
        }
    }
}
