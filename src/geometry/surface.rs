//! Ray–mirror intersection in the mirror's local frame.

use super::aperture::slab;
use super::{
    solve_quadratic, unit, Aperture, Profile, Sag, Vec3, SAG_BRACKET_STEPS, SAG_SOLVE_MAX_ITER, SAG_SOLVE_REL,
};

/// A ray–surface hit in local coordinates: `point = o + t·d`, `normal` unit
/// length and pointing out of the reflective face (toward local +z at the
/// vertex).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hit {
    pub t: f64,
    pub point: Vec3,
    pub normal: Vec3,
}

/// A mirror surface ready for tracing: profile, form and aperture, plus the
/// z-slab that holds the surface over the aperture.
#[derive(Debug, Clone)]
pub struct MirrorSurface {
    pub profile: Profile,
    pub aperture: Aperture,
    /// Extruded (cylindrical along x) instead of revolved.
    pub extruded: bool,
    /// (1+K)c, cached for the quadric form.
    kappa: f64,
    conic: bool,
    z_lo: f64,
    z_hi: f64,
    /// Size of the part, for relative tolerances.
    pub scale: f64,
}

impl MirrorSurface {
    pub fn new(profile: Profile, aperture: Aperture, extruded: bool) -> Self {
        let kappa = (1.0 + profile.k) * profile.c;
        let conic = profile.is_conic();
        let (r0, r1) = aperture.rho_range();
        // Slab bounds from a fine scan plus a Lipschitz pad (max slope × step).
        const SCAN: usize = 1024;
        let step = (r1 - r0) / SCAN as f64;
        let (mut lo, mut hi, mut smax) = (f64::INFINITY, f64::NEG_INFINITY, 0.0f64);
        for i in 0..=SCAN {
            let (z, s) = profile.sag_slope(r0 + step * i as f64);
            lo = lo.min(z);
            hi = hi.max(z);
            if s.is_finite() {
                smax = smax.max(s.abs());
            }
        }
        let scale = aperture.rho_max().max(hi.abs()).max(lo.abs()).max(1e-6);
        let pad = smax * step + 1e-9 * scale;
        MirrorSurface { profile, aperture, extruded, kappa, conic, z_lo: lo - pad, z_hi: hi + pad, scale }
    }

    /// Local z range (with padding) that contains the surface.
    pub fn z_range(&self) -> (f64, f64) {
        (self.z_lo, self.z_hi)
    }

    /// Unit normal at a local surface point.
    #[inline]
    pub fn normal_at(&self, p: &Vec3) -> Vec3 {
        if self.conic {
            // Gradient of the quadric c(x²+y²) − 2z + (1+K)c z², negated.
            let nx = if self.extruded { 0.0 } else { -self.profile.c * p.x };
            unit(&Vec3::new(nx, -self.profile.c * p.y, 1.0 - self.kappa * p.z))
        } else if self.extruded {
            unit(&Vec3::new(0.0, -self.profile.slope(p.y), 1.0))
        } else {
            let rho = (p.x * p.x + p.y * p.y).sqrt();
            if rho == 0.0 {
                return Vec3::new(0.0, 0.0, 1.0);
            }
            let s = self.profile.slope(rho) / rho;
            unit(&Vec3::new(-s * p.x, -s * p.y, 1.0))
        }
    }

    /// First hit with `t` in (`t_min`, `t_max`) of the ray o + t·d (local
    /// frame, `d` unit length), or `None`.
    #[inline]
    pub fn intersect(&self, o: &Vec3, d: &Vec3, t_min: f64, t_max: f64) -> Option<Hit> {
        if self.conic { self.intersect_conic(o, d, t_min, t_max) } else { self.intersect_general(o, d, t_min, t_max) }
    }

    #[inline(always)]
    fn accept(&self, t: f64, o: &Vec3, d: &Vec3) -> Option<Hit> {
        let p = o + d * t;
        if !self.aperture.contains(p.x, p.y) {
            return None;
        }
        Some(Hit { t, point: p, normal: self.normal_at(&p) })
    }

    #[inline(always)]
    fn intersect_conic(&self, o: &Vec3, d: &Vec3, t_min: f64, t_max: f64) -> Option<Hit> {
        let c = self.profile.c;
        let k = self.kappa;
        let (dx, ox) = if self.extruded { (0.0, 0.0) } else { (d.x, o.x) };
        let a = c * (dx * dx + d.y * d.y) + k * d.z * d.z;
        let b = c * (ox * dx + o.y * d.y) - d.z + k * o.z * d.z;
        let cc = c * (ox * ox + o.y * o.y) - 2.0 * o.z + k * o.z * o.z;
        let (n, roots) = solve_quadratic(a, b, cc);
        for &t in &roots[..n] {
            if t <= t_min || t >= t_max {
                continue;
            }
            // The sag branch through the vertex has (1+K)c·z ≤ 1; the other
            // sheet (far half of an ellipsoid, other nappe) does not.
            let z = o.z + t * d.z;
            if k * z >= 1.0 {
                continue;
            }
            if let Some(h) = self.accept(t, o, d) {
                return Some(h);
            }
        }
        None
    }

    fn intersect_general(&self, o: &Vec3, d: &Vec3, t_min: f64, t_max: f64) -> Option<Hit> {
        let (p0, p1) = self.aperture.prism_interval(o, d)?;
        let (s0, s1) = slab(o.z - 0.5 * (self.z_lo + self.z_hi), d.z, 0.5 * (self.z_hi - self.z_lo))?;
        let ta = p0.max(s0).max(t_min);
        let tb = p1.min(s1).min(t_max);
        if ta.partial_cmp(&tb) != Some(std::cmp::Ordering::Less) || !ta.is_finite() || !tb.is_finite() {
            return None;
        }
        let f = |t: f64| -> f64 {
            let x = o.x + t * d.x;
            let y = o.y + t * d.y;
            let rho = if self.extruded { y } else { (x * x + y * y).sqrt() };
            o.z + t * d.z - self.profile.sag(rho)
        };
        let tol = SAG_SOLVE_REL * self.scale;
        let dt = (tb - ta) / SAG_BRACKET_STEPS as f64;
        let mut t0 = ta;
        let mut f0 = f(t0);
        for i in 1..=SAG_BRACKET_STEPS {
            let t1 = if i == SAG_BRACKET_STEPS { tb } else { ta + dt * i as f64 };
            let f1 = f(t1);
            if f0 == 0.0 && t0 > t_min {
                if let Some(h) = self.accept(t0, o, d) {
                    return Some(h);
                }
            } else if f0 * f1 < 0.0 {
                let t = illinois(&f, t0, f0, t1, f1, tol);
                if t > t_min && t < t_max
                    && let Some(h) = self.accept(t, o, d) {
                        return Some(h);
                    }
            }
            t0 = t1;
            f0 = f1;
        }
        if f0 == 0.0 && t0 < t_max { self.accept(t0, o, d) } else { None }
    }
}

/// Illinois (modified regula falsi) root of `f` in [a, b] with f(a)·f(b) <
/// 0; stops when |f| ≤ `tol`, the bracket is narrower than `tol`, or after
/// [`SAG_SOLVE_MAX_ITER`] steps. Always returns a point inside the bracket.
fn illinois(f: &impl Fn(f64) -> f64, mut a: f64, mut fa: f64, mut b: f64, mut fb: f64, tol: f64) -> f64 {
    let mut side = 0i8;
    let mut c = 0.5 * (a + b);
    for _ in 0..SAG_SOLVE_MAX_ITER {
        c = (a * fb - b * fa) / (fb - fa);
        if !(c > a && c < b) {
            c = 0.5 * (a + b);
        }
        let fc = f(c);
        if fc.abs() <= tol || (b - a) <= tol {
            return c;
        }
        if fc * fb > 0.0 {
            b = c;
            fb = fc;
            if side == -1 {
                fa *= 0.5;
            }
            side = -1;
        } else {
            a = c;
            fa = fc;
            if side == 1 {
                fb *= 0.5;
            }
            side = 1;
        }
    }
    c
}
