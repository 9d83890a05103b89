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
    mean_dir(&Subset::new(h, source))
}

pub(crate) fn mean_dir(sel: &Subset) -> Option<Vec3> {
    let h = sel.h;
    let mut m = Vec3::zeros();
    for (i, w) in sel.iter() {
        m += Vec3::new(h.du[i], h.dv[i], h.dw[i]) * w;
    }
    let n = m.norm();
    (sel.n > 0 && n > 0.0 && n.is_finite()).then(|| m / n)
}

/// Largest angle (radians) between an arriving ray and the mean direction.
pub fn cone_half_angle(h: &ScreenHits, source: Option<u32>) -> Option<f64> {
    let sel = Subset::new(h, source);
    let m = mean_dir(&sel)?;
    let mut best = 0.0f64;
    for (i, _) in sel.iter() {
        let d = Vec3::new(h.du[i], h.dv[i], h.dw[i]);
        // atan2 keeps small angles accurate (acos loses them).
        best = best.max(d.cross(&m).norm().atan2(d.dot(&m)));
    }
    Some(best)
}

/// Working f-number N = 1 / (2 sin θmax); `None` with fewer than 3 hits
/// or when the rays arrive parallel.
pub fn f_number(h: &ScreenHits, source: Option<u32>) -> Option<f64> {
    if Subset::new(h, source).n < 3 {
        return None;
    }
    let t = cone_half_angle(h, source)?.min(std::f64::consts::FRAC_PI_2);
    let s = t.sin();
    (s > 0.0).then(|| 0.5 / s)
}

/// Airy disk radius (first dark ring), AIRY_FACTOR · λ · N, in the units
/// of `wavelength`.
pub fn airy_radius(wavelength: f64, f_number: f64) -> f64 {
    AIRY_FACTOR * wavelength * f_number
}
