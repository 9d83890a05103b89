//! The cone of arriving light: working f-number and the Airy radius.
//!
//! The working f-number is N = 1 / (2 sin θmax), θmax the largest angle
//! between an arriving ray and the power-weighted mean direction of the
//! rays of that source on that screen (common practice: the image-space
//! numerical aperture NA = sin θmax and N = 1/(2 NA)). For a 200 mm f/5
//! paraboloid the marginal ray meets the focus at sin θ = 100/1002.5, so
//! N = 5.0125. An extended source (the sun's disk) widens the cone by its
//! angular radius; a central hole does not change θmax.

use super::select::Subset;
use crate::geometry::Vec3;
use crate::trace::ScreenHits;

/// Airy first-zero constant used for `airy_radius_um`: the trade's
/// rounded 1.22 (the exact first zero of J₁(πx)/(πx) is at 1.2197 λN;
/// Born & Wolf, Principles of Optics, value from memory). The two differ
/// by 0.03 %.
pub const AIRY_FACTOR: f64 = 1.22;

/// Power-weighted mean direction of the arriving rays (screen frame, unit
/// length); `None` without hits or when the directions cancel.
pub fn mean_direction(h: &ScreenHits, source: Option<u32>) -> Option<Vec3> {
    Subset::new(h, source).mean_dir()
}

pub(crate) fn compute_mean_dir(sel: &Subset) -> Option<Vec3> {
    let h = &sel.h;
    let w = sel.weights();
    let (du, dv, dw) = (sel.col(&h.du), sel.col(&h.dv), sel.col(&h.dw));
    let (mut x, mut y, mut z) = (0.0, 0.0, 0.0);
    for k in 0..sel.n {
        x += du[k] * w[k];
        y += dv[k] * w[k];
        z += dw[k] * w[k];
    }
    let m = Vec3::new(x, y, z);
    let n = m.norm();
    (sel.n > 0 && n > 0.0 && n.is_finite()).then(|| m / n)
}

/// Largest angle (radians) between an arriving ray and the mean direction.
/// The extreme ray is found by its sin² (|d × m|², monotone in the angle
/// up to 90°); only its angle is then taken with atan2, which keeps small
/// angles accurate (acos loses them). Any ray at 90° or more from the mean
/// makes the answer at least 90°.
pub fn cone_half_angle(h: &ScreenHits, source: Option<u32>) -> Option<f64> {
    cone_half_angle_of(&Subset::new(h, source))
}

pub(crate) fn cone_half_angle_of(sel: &Subset) -> Option<f64> {
    let m = sel.mean_dir()?;
    let (du, dv, dw) = (sel.col(&sel.h.du), sel.col(&sel.h.dv), sel.col(&sel.h.dw));
    let mut c = ConeSums::new(m);
    for k in 0..sel.n {
        c.add(k, du[k], dv[k], dw[k]);
    }
    Some(c.angle(du, dv, dw))
}

/// The pass behind [`cone_half_angle`].
#[derive(Debug, Clone, Copy)]
pub(crate) struct ConeSums {
    pub m: Vec3,
    pub best: f64,
    pub at: usize,
    pub back: f64,
}

impl ConeSums {
    pub fn new(m: Vec3) -> Self {
        ConeSums { m, best: -1.0, at: 0, back: f64::NEG_INFINITY }
    }

    #[inline(always)]
    pub fn add(&mut self, k: usize, du: f64, dv: f64, dw: f64) {
        let m = self.m;
        let (cx, cy, cz) = (dv * m.z - dw * m.y, dw * m.x - du * m.z, du * m.y - dv * m.x);
        let s2 = cx * cx + cy * cy + cz * cz;
        let c = du * m.x + dv * m.y + dw * m.z;
        if c > 0.0 && s2 > self.best {
            (self.best, self.at) = (s2, k);
        }
        if c <= 0.0 {
            // Past 90°: the largest angle is the most negative cosine's.
            self.back = self.back.max(-c);
        }
    }

    /// The largest angle, radians (columns as given to `add`).
    pub fn angle(&self, du: &[f64], dv: &[f64], dw: &[f64]) -> f64 {
        if self.back > f64::NEG_INFINITY {
            // Some ray arrives from 90° or more: the widest is the one
            // whose cosine is most negative.
            return std::f64::consts::FRAC_PI_2 + self.back.clamp(0.0, 1.0).asin();
        }
        if self.best < 0.0 {
            return 0.0;
        }
        let k = self.at;
        let d = Vec3::new(du[k], dv[k], dw[k]);
        d.cross(&self.m).norm().atan2(d.dot(&self.m))
    }
}

/// Working f-number N = 1 / (2 sin θmax); `None` with fewer than 3 hits
/// or when the rays arrive parallel.
pub fn f_number(h: &ScreenHits, source: Option<u32>) -> Option<f64> {
    f_number_of(&Subset::new(h, source))
}

pub(crate) fn f_number_of(sel: &Subset) -> Option<f64> {
    if sel.n < 3 {
        return None;
    }
    f_number_from_angle(cone_half_angle_of(sel)?)
}

/// N = 1 / (2 sin θ), θ capped at 90°; `None` for parallel rays.
pub(crate) fn f_number_from_angle(t: f64) -> Option<f64> {
    let s = t.min(std::f64::consts::FRAC_PI_2).sin();
    (s > 0.0).then(|| 0.5 / s)
}

/// Airy disk radius (first dark ring), AIRY_FACTOR · λ · N, in the units
/// of `wavelength`.
pub fn airy_radius(wavelength: f64, f_number: f64) -> f64 {
    AIRY_FACTOR * wavelength * f_number
}
