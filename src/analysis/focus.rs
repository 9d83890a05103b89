//! Best focus: the screen shift that makes the RMS spot smallest, in closed
//! form, and the through-focus curve.
//!
//! # Sign convention
//!
//! A shift `s` moves the screen plane by `s` mm **along the screen's axis**
//! (the direction its sensitive face looks). Arriving rays travel against
//! that axis (`dw < 0`), so a positive shift moves the screen back toward
//! the light (toward the mirror that feeds it) and a negative one moves it
//! farther downstream. The ray that met the screen at (u, v) with
//! direction (du, dv, dw) crosses the shifted plane at
//! (u + s·du/dw, v + s·dv/dw): straight lines, no re-trace, so elements
//! between the two planes are ignored.
//!
//! With a = du/dw, b = dv/dw and x, y, p, q the deviations of u, v, a, b
//! from their weighted means, the weighted mean square radius about the
//! (moving) centroid is the quadratic
//! RMS²(s) = A + 2Bs + Cs², A = ⟨x² + y²⟩, B = ⟨xp + yq⟩, C = ⟨p² + q²⟩,
//! whose minimum is at s* = −B/C with RMS² = A − B²/C.

use super::select::Subset;
use crate::trace::ScreenHits;

/// Below this RMS spread of ray slopes (radians) the arriving rays are
/// taken as parallel and there is no focus (a collimated beam on the
/// screen). Directions from the tracer are good to ~1e-15.
pub const MIN_SLOPE_SPREAD: f64 = 1e-12;

/// Smallest half-range of [`default_focus_range`], mm.
pub const MIN_FOCUS_RANGE_MM: f64 = 0.01;

/// The quadratic RMS²(s) of one source's spot versus screen shift.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FocusFit {
    pub hits: usize,
    /// Weighted centroid at the screen (s = 0), mm.
    pub centroid: [f64; 2],
    /// Weighted mean ray slopes (du/dw, dv/dw): the centroid moves by
    /// s·mean_slope when the screen shifts by s.
    pub mean_slope: [f64; 2],
    /// Coefficients of RMS²(s) = a + 2bs + cs² (mm², mm, 1).
    pub a: f64,
    pub b: f64,
    pub c: f64,
}

impl FocusFit {
    /// RMS radius about the centroid after shifting the screen by `s` mm, mm.
    pub fn rms_at(&self, s: f64) -> f64 {
        (self.a + 2.0 * self.b * s + self.c * s * s).max(0.0).sqrt()
    }

    /// Centroid (u, v) on the screen shifted by `s` mm.
    pub fn centroid_at(&self, s: f64) -> [f64; 2] {
        [self.centroid[0] + s * self.mean_slope[0], self.centroid[1] + s * self.mean_slope[1]]
    }

    /// Shift of the smallest RMS spot (mm, along the screen axis), `None`
    /// when the rays arrive parallel.
    pub fn best_shift(&self) -> Option<f64> {
        (self.c.sqrt() >= MIN_SLOPE_SPREAD).then(|| -self.b / self.c).filter(|s| s.is_finite())
    }

    /// RMS radius at the best focus, mm.
    pub fn rms_at_best(&self) -> Option<f64> {
        self.best_shift().map(|s| self.rms_at(s))
    }

    /// The best-focus centroid in the screen frame (u, v, w), mm.
    pub fn best_point(&self) -> Option<[f64; 3]> {
        self.best_shift().map(|s| {
            let [u, v] = self.centroid_at(s);
            [u, v, s]
        })
    }
}

/// Fits RMS²(s) for the hits of `source` (all sources when `None`); `None`
/// with fewer than 3 hits.
pub fn focus_fit(h: &ScreenHits, source: Option<u32>) -> Option<FocusFit> {
    focus_fit_of(&Subset::new(h, source))
}

pub(crate) fn focus_fit_of(sel: &Subset) -> Option<FocusFit> {
    if sel.n < 3 {
        return None;
    }
    let h = &sel.h;
    let w = sel.weights();
    let (u, v) = (sel.col(&h.u), sel.col(&h.v));
    let (du, dv, dw) = (sel.col(&h.du), sel.col(&h.dv), sel.col(&h.dw));
    let mut acc = FocusSums::new(u[0], v[0], du[0] / dw[0], dv[0] / dw[0]);
    for k in 0..sel.n {
        acc.add(w[k], u[k], v[k], du[k], dv[k], dw[k]);
    }
    Some(acc.fit(sel.n, sel.w))
}

/// The one pass behind [`FocusFit`]: weighted sums of the positions and
/// slopes and their squares, each shifted by the first hit's value so the
/// sums hold the spread, not the offset (then centred exactly by the
/// mean's offset from the first hit).
#[derive(Debug, Clone, Copy)]
pub(crate) struct FocusSums {
    pub first: [f64; 4],
    pub s: [f64; 4],
    pub xx: f64,
    pub xp: f64,
    pub pp: f64,
    pub su: f64,
    pub sv: f64,
}

impl FocusSums {
    pub fn new(u0: f64, v0: f64, p0: f64, q0: f64) -> Self {
        FocusSums { first: [u0, v0, p0, q0], s: [0.0; 4], xx: 0.0, xp: 0.0, pp: 0.0, su: 0.0, sv: 0.0 }
    }

    #[inline(always)]
    pub fn add(&mut self, w: f64, u: f64, v: f64, du: f64, dv: f64, dw: f64) {
        let inv = 1.0 / dw;
        let [u0, v0, p0, q0] = self.first;
        let (x, y, p, q) = (u - u0, v - v0, du * inv - p0, dv * inv - q0);
        self.s[0] += w * x;
        self.s[1] += w * y;
        self.s[2] += w * p;
        self.s[3] += w * q;
        self.xx += w * (x * x + y * y);
        self.xp += w * (x * p + y * q);
        self.pp += w * (p * p + q * q);
        self.su += w * u;
        self.sv += w * v;
    }

    /// The fit of `n` hits of total weight `wt`.
    pub fn fit(&self, n: usize, wt: f64) -> FocusFit {
        let m = self.s.map(|v| v / wt);
        let [_, _, p0, q0] = self.first;
        FocusFit {
            hits: n,
            centroid: [self.su / wt, self.sv / wt],
            mean_slope: [p0 + m[2], q0 + m[3]],
            a: (self.xx / wt - (m[0] * m[0] + m[1] * m[1])).max(0.0),
            b: self.xp / wt - (m[0] * m[2] + m[1] * m[3]),
            c: (self.pp / wt - (m[2] * m[2] + m[3] * m[3])).max(0.0),
        }
    }
}

/// RMS spot radius versus screen shift.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ThroughFocus {
    /// Screen shifts, mm (positive along the screen axis).
    pub shift_mm: Vec<f64>,
    /// RMS radius about the centroid at each shift, µm.
    pub rms_radius_um: Vec<f64>,
}

/// The through-focus curve: `n` evenly spaced shifts from `from_mm` to
/// `to_mm` (inclusive). `None` with fewer than 3 hits.
pub fn through_focus(h: &ScreenHits, source: Option<u32>, from_mm: f64, to_mm: f64, n: usize) -> Option<ThroughFocus> {
    let fit = focus_fit(h, source)?;
    Some(through_focus_of(&fit, from_mm, to_mm, n))
}

/// The through-focus curve of a fit (see [`through_focus`]).
pub fn through_focus_of(fit: &FocusFit, from_mm: f64, to_mm: f64, n: usize) -> ThroughFocus {
    let step = if n > 1 { (to_mm - from_mm) / (n - 1) as f64 } else { 0.0 };
    let shift_mm: Vec<f64> = (0..n).map(|k| from_mm + step * k as f64).collect();
    let rms_radius_um = shift_mm.iter().map(|&s| fit.rms_at(s) * 1e3).collect();
    ThroughFocus { shift_mm, rms_radius_um }
}

/// A shift range centred on the best focus that shows the curve's minimum
/// and its rise: ± the depth over which the RMS radius doubles, at least
/// ±[`MIN_FOCUS_RANGE_MM`] (so a perfect focus still shows its cone), or
/// ±1 mm when the rays arrive parallel.
pub fn default_focus_range(fit: &FocusFit) -> (f64, f64) {
    match (fit.best_shift(), fit.rms_at_best()) {
        (Some(s), Some(r)) => {
            // rms(s*+d)² = r² + c·d² = 4r² → d = r√3/√c.
            let d = (r * 3f64.sqrt() / fit.c.sqrt()).max(MIN_FOCUS_RANGE_MM);
            (s - d, s + d)
        }
        _ => (-1.0, 1.0),
    }
}
