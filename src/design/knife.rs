//! The knife-edge (Foucault) test simulated: what the eye behind a knife
//! edge near the centre of curvature sees on the mirror (geometric optics:
//! a point source, no diffraction).
//!
//! The knife stands S mm from the vertex centre of curvature (+ away from
//! the mirror), its edge parallel to the mirror's vertical diameter at
//! lateral position X = `knife_x_mm`, covering X < that. A pupil point is
//! dark where its reflected ray ([`super::test_stand`]) meets the knife.
//!
//! * `null_radius_mm`: the zone whose reflected ray crosses the axis in
//!   the knife's plane — with the moving source, the zone whose normal
//!   meets the axis there (the reading of [`super::zones`]); with the fixed
//!   source, the zone whose reflected ray does. It is the root of X(x)/x
//!   along the horizontal diameter, 0 < x ≤ D/2 (the smallest when there
//!   are several), and `None` when no zone nulls. When the whole diameter
//!   nulls at once (a sphere with its source and knife at its centre),
//!   `whole_mirror_nulls` says so and the radius is `None`.
//! * `lit_fraction`: the area of the disk seen lit over the disk's area,
//!   integrated row by row (rows evenly spaced in θ with y = a sin θ; along
//!   each row the lit length from the knife's crossings, found as in
//!   [`super::test_stand`]).

use super::test_stand::{sign_changes, MirrorPicture, StandSpec, TestStand};
use super::{finite, TestSource};
use crate::error::InputError;
use serde::Serialize;

/// Rows over the disk for the lit fraction.
pub const LIT_ROWS: usize = 400;
/// Scan steps along one row for the lit fraction.
pub const LIT_ROW_STEPS: usize = 256;
/// |X/x| below this counts as a null (the ray crosses the axis at the
/// knife to this relative precision).
pub const NULL_SLOPE_TOL: f64 = 1e-11;

/// A knife-edge test: the mirror, the knife and the source.
#[derive(Debug, Clone, Copy)]
pub struct KnifeSpec<'a> {
    pub radius: f64,
    pub conic: f64,
    pub diameter: f64,
    pub knife_mm: f64,
    pub knife_x_mm: f64,
    pub source: TestSource,
    /// Measured departure knots (ρ, Δz) in mm, or `None` for the target.
    pub measured: Option<&'a [[f64; 2]]>,
}

/// The JSON of `catoptric knife`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KnifeView {
    pub source: String,
    pub knife_mm: f64,
    pub knife_x_mm: f64,
    /// Zone that nulls, mm from the centre (`null` when none does).
    pub null_radius_mm: Option<f64>,
    /// Whether every zone of the horizontal diameter nulls at once.
    pub whole_mirror_nulls: bool,
    /// Fraction of the mirror's area seen lit.
    pub lit_fraction: f64,
    /// Whether the mirror carries a measured departure.
    pub measured: bool,
}

fn setup(spec: &KnifeSpec<'_>) -> Result<TestStand, InputError> {
    finite("knife_x_mm", spec.knife_x_mm)?;
    TestStand::new(StandSpec {
        radius: spec.radius,
        conic: spec.conic,
        diameter: spec.diameter,
        offset_field: "knife_mm",
        offset_mm: spec.knife_mm,
        source: spec.source,
        measured: spec.measured,
    })
}

/// Whether pupil point (x, y) is seen lit past a knife covering X < kx (a
/// ray grazing the edge, within the stand's tolerance, passes).
#[inline]
fn lit(stand: &TestStand, kx: f64, x: f64, y: f64) -> bool {
    stand.landing(x, y).is_some_and(|(lx, _)| lx >= kx - stand.landing_tol())
}

/// Null zone and lit fraction.
pub fn knife_view(spec: &KnifeSpec<'_>) -> Result<KnifeView, InputError> {
    let stand = setup(spec)?;
    let a = stand.semi_diameter();
    let kx = spec.knife_x_mm;
    // X(x)/x along the horizontal diameter: its roots are the nulls.
    let lo = a * 1e-6;
    let q = |x: f64| stand.landing_x(x) / x;
    let nulls = sign_changes(q, lo, a, crate::design::test_stand::SCAN_STEPS, NULL_SLOPE_TOL);
    let whole = nulls.is_empty() && (0..=64).all(|i| {
        let v = q(lo + (a - lo) * i as f64 / 64.0);
        v.is_finite() && v.abs() <= NULL_SLOPE_TOL
    });
    // Lit area, row by row.
    let dtheta = std::f64::consts::PI / LIT_ROWS as f64;
    let mut area = 0.0;
    for j in 0..LIT_ROWS {
        let theta = -0.5 * std::f64::consts::PI + (j as f64 + 0.5) * dtheta;
        let (y, w) = (a * theta.sin(), a * theta.cos());
        let f = |x: f64| stand.landing(x, y).map_or(f64::NAN, |(lx, _)| lx - kx);
        let mut cuts = vec![-w];
        cuts.extend(sign_changes(f, -w, w, LIT_ROW_STEPS, stand.landing_tol()));
        cuts.push(w);
        let length: f64 = cuts.windows(2).filter(|c| lit(&stand, kx, 0.5 * (c[0] + c[1]), y)).map(|c| c[1] - c[0]).sum();
        area += length * a * theta.cos() * dtheta;
    }
    let fraction = (area / (std::f64::consts::PI * a * a)).clamp(0.0, 1.0);
    Ok(KnifeView {
        source: spec.source.name().to_string(),
        knife_mm: spec.knife_mm,
        knife_x_mm: kx,
        null_radius_mm: if whole { None } else { nulls.first().copied() },
        whole_mirror_nulls: whole,
        lit_fraction: fraction,
        measured: stand.is_measured(),
    })
}

/// The knife-edge picture as the eye sees it, `size` pixels a side.
pub fn knife_picture(spec: &KnifeSpec<'_>, size: usize) -> Result<MirrorPicture, InputError> {
    let stand = setup(spec)?;
    MirrorPicture::render(size, stand.semi_diameter(), |x, y| lit(&stand, spec.knife_x_mm, x, y))
}

/// Moving-source readings of a mirror (the target, or the target with a
/// measured departure) at radii `rs`: where each zone's normal meets the
/// axis, mm from the vertex centre of curvature, + outside.
pub fn surface_readings(
    radius: f64,
    conic: f64,
    diameter: f64,
    measured: Option<&[[f64; 2]]>,
    rs: &[f64],
) -> Result<Vec<f64>, InputError> {
    let stand = TestStand::new(StandSpec {
        radius,
        conic,
        diameter,
        offset_field: "offset_mm",
        offset_mm: 0.0,
        source: TestSource::Moving,
        measured,
    })?;
    rs.iter()
        .enumerate()
        .map(|(i, &r)| {
            let r = finite(&format!("radii[{i}]"), r)?;
            Ok(stand.normal_reading(r))
        })
        .collect()
}
