//! Two-mirror telescopes from their first-order layout.
//!
//! # Formulas
//!
//! With f₁ the primary's focal length, F the system focal length and B the
//! back focus (from the primary vertex, positive behind it):
//!
//! * secondary magnification m = F/f₁ for the Cassegrain family; for the
//!   Gregorian family the user still gives a **positive** F and this module
//!   sets m = −F/f₁ (the secondary forms an inverted image of the prime
//!   focus). The reported `magnification` carries that sign;
//!   `focal_mm` is the positive F given.
//! * β = B/f₁, k = (1+β)/(m+1) (ratio of marginal ray heights, secondary
//!   over primary; negative for Gregorians, whose rays cross the axis),
//!   separation d = f₁(1−k), secondary vertex radius R₂ = m k R₁/(m−1) with
//!   R₁ = 2f₁.
//! * Classical: K₁ = −1, K₂ = −((m+1)/(m−1))². Aplanatic (Ritchey–Chrétien,
//!   aplanatic Gregorian): K₁ = −1 − 2(1+β)/(m²(m−β)),
//!   K₂ = −((m+1)/(m−1))² − 2m(m+1)/((m−β)(m−1)³). Dall–Kirkham: K₂ = 0,
//!   K₁ = −1 + k(m−1)(m+1)²/m³.
//!
//! (Schroeder, Astronomical Optics, 2nd ed. 2000, ch. 6.)
//!
//! Radii in the output and the layout are signed as in layouts: concave
//! positive, convex negative. In Schroeder's signs the layout radius of the
//! secondary is −m k R₁/(m−1): convex for the Cassegrain family, concave for
//! Gregorians.
//!
//! # Sizing rules
//!
//! * Secondary diameter: the on-axis beam meets the secondary at height
//!   |k|·D/2; a beam at field angle θ (chief ray through the primary vertex,
//!   the aperture stop) is displaced there by d·tan θ, so the secondary's
//!   diameter is |k|·D + 2d·tan θ: no vignetting out to θ.
//! * Primary hole: the cone converging from the secondary to the focus,
//!   for the on-axis beam and the beam at θ, measured where it crosses the
//!   primary's surface (paraxial heights, with the primary's sag at the hole
//!   edge taken into account): hole radius
//!   |k|(D/2)·q/(d+B) + |tan θ|·|m f₁(1 − q/(d+B)) + d q/(d+B)|, q = B + sag.
//!
//! # Layout
//!
//! Light travels along +z. The primary's vertex is at [0, 0] looking back
//! along −z (`axis_deg` 180), the secondary's vertex at [0, −d] looking
//! along +z, the screen `focus` at [0, B] facing the secondary. The beam
//! `on-axis` fills the primary and starts in front of the secondary; with a
//! field angle a beam `off-axis` comes in at θ with its chief ray through
//! the primary vertex.

use super::{bad, checked, conic_reaches, conic_sag, finite, finite_result, new_layout, positive, star_beam, tidy};
use crate::error::{InputError, Num};
use crate::layout::{
    ApertureSpec, Element, Form, Layout, Mirror, ProfileSpec, Screen, ScreenShape,
};
use serde::Serialize;

/// The two-mirror families.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TwoMirrorKind {
    Cassegrain,
    RitcheyChretien,
    DallKirkham,
    Gregorian,
    AplanaticGregorian,
}

impl TwoMirrorKind {
    /// Every family, in the order of [`TwoMirrorKind::name`].
    pub const ALL: [TwoMirrorKind; 5] = [
        TwoMirrorKind::Cassegrain,
        TwoMirrorKind::RitcheyChretien,
        TwoMirrorKind::DallKirkham,
        TwoMirrorKind::Gregorian,
        TwoMirrorKind::AplanaticGregorian,
    ];

    /// Spelling used on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            TwoMirrorKind::Cassegrain => "cassegrain",
            TwoMirrorKind::RitcheyChretien => "ritchey-chretien",
            TwoMirrorKind::DallKirkham => "dall-kirkham",
            TwoMirrorKind::Gregorian => "gregorian",
            TwoMirrorKind::AplanaticGregorian => "aplanatic-gregorian",
        }
    }

    /// Reads a family name (field `type`).
    pub fn parse(s: &str) -> Result<Self, InputError> {
        Self::ALL.into_iter().find(|k| k.name() == s).ok_or_else(|| {
            bad(
                "type",
                format!(
                    "unknown two-mirror type \"{s}\"; use one of {}",
                    Self::ALL.map(|k| k.name()).join(", ")
                ),
            )
        })
    }

    /// The secondary forms an inverted image of the prime focus (m < 0).
    pub fn is_gregorian(self) -> bool {
        matches!(self, TwoMirrorKind::Gregorian | TwoMirrorKind::AplanaticGregorian)
    }

    fn title(self) -> &'static str {
        match self {
            TwoMirrorKind::Cassegrain => "Classical Cassegrain",
            TwoMirrorKind::RitcheyChretien => "Ritchey–Chrétien",
            TwoMirrorKind::DallKirkham => "Dall–Kirkham",
            TwoMirrorKind::Gregorian => "Classical Gregorian",
            TwoMirrorKind::AplanaticGregorian => "Aplanatic Gregorian",
        }
    }
}

/// What the designer is asked for. Lengths in mm, angle in degrees.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoMirrorSpec {
    pub kind: TwoMirrorKind,
    /// Primary clear diameter D.
    pub diameter: f64,
    /// Primary focal length f₁ (> 0).
    pub primary_focal: f64,
    /// System focal length F (> 0 for every family; see the module doc).
    pub focal: f64,
    /// Back focus B from the primary vertex, positive behind it.
    pub back_focus: f64,
    /// Field angle θ for the secondary size, hole and `off-axis` beam;
    /// 0 for none.
    pub field_deg: f64,
}

/// Primary mirror of a design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PrimaryOut {
    pub radius_mm: f64,
    pub conic: f64,
    pub diameter_mm: f64,
    pub hole_mm: f64,
    pub focal_mm: f64,
}

/// Secondary mirror of a design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SecondaryOut {
    pub radius_mm: f64,
    pub conic: f64,
    pub diameter_mm: f64,
}

/// A finished two-mirror design: the JSON of `catoptric design two-mirror`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TwoMirrorDesign {
    #[serde(rename = "type")]
    pub kind: String,
    pub focal_mm: f64,
    /// m, negative for Gregorians.
    pub magnification: f64,
    pub separation_mm: f64,
    pub back_focus_mm: f64,
    pub primary: PrimaryOut,
    pub secondary: SecondaryOut,
    /// F/D.
    pub focal_ratio: f64,
    /// Secondary diameter over primary diameter (linear obstruction).
    pub obstruction_fraction: f64,
    /// k: marginal ray height at the secondary over that at the primary.
    pub height_ratio: f64,
    /// β = B/f₁.
    pub back_focus_ratio: f64,
    pub field_deg: f64,
    /// Plain-language warnings on extreme input (empty when none).
    pub warnings: Vec<String>,
    pub layout: Layout,
}

/// Primary focal ratios f₁/D below this are flagged as extreme: such a
/// primary is hard to figure and test and its alignment tolerances are
/// tight (common practice among telescope makers).
pub const FAST_PRIMARY_F_RATIO: f64 = 1.5;

/// Conic constants (K₁, K₂) of a family for signed magnification `m` and
/// back-focus ratio `beta` (Schroeder, 2nd ed., ch. 6).
pub fn two_mirror_conics(kind: TwoMirrorKind, m: f64, beta: f64) -> (f64, f64) {
    let classical_k2 = -((m + 1.0) / (m - 1.0)).powi(2);
    match kind {
        TwoMirrorKind::Cassegrain | TwoMirrorKind::Gregorian => (-1.0, classical_k2),
        TwoMirrorKind::RitcheyChretien | TwoMirrorKind::AplanaticGregorian => (
            -1.0 - 2.0 * (1.0 + beta) / (m * m * (m - beta)),
            classical_k2 - 2.0 * m * (m + 1.0) / ((m - beta) * (m - 1.0).powi(3)),
        ),
        TwoMirrorKind::DallKirkham => {
            let k = (1.0 + beta) / (m + 1.0);
            (-1.0 + k * (m - 1.0) * (m + 1.0).powi(2) / m.powi(3), 0.0)
        }
    }
}

/// Designs a two-mirror telescope and its layout.
pub fn design_two_mirror(spec: &TwoMirrorSpec) -> Result<TwoMirrorDesign, InputError> {
    let d_prim = positive("diameter", spec.diameter)?;
    let f1 = positive("primary_focal", spec.primary_focal)?;
    let f = positive("focal", spec.focal)?;
    let b = finite("back_focus", spec.back_focus)?;
    let field = finite("field_deg", spec.field_deg)?;
    if !(0.0..=10.0).contains(&field) {
        return Err(bad("field_deg", format!("must be between 0 and 10 degrees (got {})", Num(field))));
    }
    if b <= 0.0 {
        return Err(bad(
            "back_focus",
            format!("must be greater than 0: the focus lies behind the primary, reached through its central hole (got {})", Num(b)),
        ));
    }
    let ratio = f / f1;
    if ratio <= 1.0 + 1e-9 {
        return Err(bad(
            "focal",
            format!(
                "must be longer than the primary focal length {} mm (got {}): the secondary must magnify the prime-focus image (|m| > 1)",
                Num(f1),
                Num(f)
            ),
        ));
    }
    let m = if spec.kind.is_gregorian() { -ratio } else { ratio };
    let beta = b / f1;
    let k = (1.0 + beta) / (m + 1.0);
    let sep = f1 * (1.0 - k);
    if k >= 1.0 - 1e-9 || sep <= 0.0 {
        return Err(bad(
            "back_focus",
            format!(
                "{} mm puts the secondary at or behind the primary (separation {:.4} mm); the back focus must be less than m·f₁ = {:.4} mm",
                Num(b),
                Num(sep),
                Num(m * f1)
            ),
        ));
    }
    let r1 = 2.0 * f1;
    let r2 = -m * k * r1 / (m - 1.0);
    let (k1, k2) = two_mirror_conics(spec.kind, m, beta);
    let tan_t = field.to_radians().tan();
    let d_sec = k.abs() * d_prim + 2.0 * sep * tan_t;
    if d_sec >= d_prim {
        let which = if field > 0.0 && k.abs() * d_prim < d_prim { "field_deg" } else { "back_focus" };
        return Err(bad(
            which,
            format!(
                "the secondary would need a diameter of {d_sec:.3} mm, not smaller than the primary's {d_prim} mm; use a smaller field, a shorter back focus or a faster primary"
            ),
        ));
    }
    // Hole: the converging cone where it crosses the primary's surface.
    let hole_radius_at = |q: f64| {
        let s = q / (sep + b);
        k.abs() * 0.5 * d_prim * s + tan_t * (m * f1 * (1.0 - s) + sep * s).abs()
    };
    let mut rh = hole_radius_at(b);
    for _ in 0..4 {
        let sag = conic_sag(r1, k1, rh.min(0.5 * d_prim));
        rh = hole_radius_at(b + sag);
    }
    let hole = 2.0 * rh;
    if hole >= d_prim {
        return Err(bad(
            "back_focus",
            format!("the central hole would need {hole:.3} mm, not smaller than the primary's {d_prim} mm"),
        ));
    }
    conic_reaches("primary_focal", r1, k1, 0.5 * d_prim)?;
    conic_reaches("back_focus", r2, k2, 0.5 * d_sec)?;
    finite_result("focal", "design", &[m, k, sep, r1, k1, hole, r2, k2, d_sec])?;

    let layout = build_layout(spec.kind, d_prim, f, b, field, sep, (r1, k1, hole), (r2, k2, d_sec))?;
    let mut warnings = Vec::new();
    if f1 / d_prim < FAST_PRIMARY_F_RATIO {
        warnings.push(format!(
            "The primary is f/{} (f₁/D), faster than f/{FAST_PRIMARY_F_RATIO}: hard to figure and test, with very tight alignment \
             and collimation tolerances; common practice keeps primaries at f/{FAST_PRIMARY_F_RATIO} or slower.",
            fmt_num((f1 / d_prim * 100.0).round() / 100.0)
        ));
    }
    Ok(TwoMirrorDesign {
        kind: spec.kind.name().to_string(),
        focal_mm: f,
        magnification: m,
        separation_mm: sep,
        back_focus_mm: b,
        primary: PrimaryOut { radius_mm: r1, conic: k1, diameter_mm: d_prim, hole_mm: hole, focal_mm: f1 },
        secondary: SecondaryOut { radius_mm: r2, conic: k2, diameter_mm: d_sec },
        focal_ratio: f / d_prim,
        obstruction_fraction: d_sec / d_prim,
        height_ratio: k,
        back_focus_ratio: beta,
        field_deg: field,
        warnings,
        layout,
    })
}

#[allow(clippy::too_many_arguments)]
fn build_layout(
    kind: TwoMirrorKind,
    d_prim: f64,
    f: f64,
    b: f64,
    field: f64,
    sep: f64,
    (r1, k1, hole): (f64, f64, f64),
    (r2, k2, d_sec): (f64, f64, f64),
) -> Result<Layout, InputError> {
    let mirror = |id: &str, vertex: [f64; 2], axis_deg: f64, radius: f64, conic: f64, diameter: f64, hole: f64| {
        Element::Mirror(Mirror {
            id: id.to_string(),
            vertex,
            axis_deg,
            form: Form::Revolved,
            length: None,
            profile: ProfileSpec { radius: Some(radius), conic, aspheric: Vec::new(), departure: None },
            aperture: ApertureSpec { diameter, offset: 0.0, hole },
            reflectivity: 1.0,
            slope_error_mrad: 0.0,
        })
    };
    let tan_t = field.to_radians().tan();
    let screen_size = tidy((3.0 * f * tan_t).max(0.02 * d_prim).max(1.0), 0.5);
    let sec_sag = conic_sag(r2, k2, 0.5 * d_sec).abs();
    // Beam launch distance in front of the primary vertex: clear of the
    // secondary's back.
    let launch = tidy(sep + sec_sag + 0.05 * d_prim + 1.0, 1.0);
    let beam = |id: &str, deg: f64| {
        let (s, c) = deg.to_radians().sin_cos();
        star_beam(id, [-launch * s + 0.0, -launch * c], deg, d_prim)
    };
    let mut sources = vec![beam("on-axis", 0.0)];
    if field > 0.0 {
        sources.push(beam("off-axis", field));
    }
    let elements = vec![
        mirror("primary", [0.0, 0.0], 180.0, r1, k1, d_prim, hole),
        mirror("secondary", [0.0, -sep], 0.0, r2, k2, d_sec, 0.0),
        Element::Screen(Screen {
            id: "focus".to_string(),
            center: [0.0, b],
            axis_deg: 180.0,
            size: screen_size,
            shape: ScreenShape::Square,
            opaque: false,
        }),
    ];
    let name = format!("{} {} mm f/{:.2}", kind.title(), fmt_num(d_prim), f / d_prim);
    let notes = format!(
        "Generated by the two-mirror designer: F = {} mm, f1 = {} mm, back focus {} mm behind the primary vertex, field {} deg.",
        fmt_num(f),
        fmt_num(r1 / 2.0),
        fmt_num(b),
        fmt_num(field)
    );
    checked(new_layout(name, notes, elements, sources))
}

/// Short decimal form of a number for names and notes.
pub(crate) fn fmt_num(v: f64) -> String {
    let s = format!("{v:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    s.to_string()
}
