//! The Ronchi test simulated: what the eye behind a coarse grating near
//! the centre of curvature sees on the mirror (geometric optics: no
//! diffraction).
//!
//! The grating stands S mm from the vertex centre of curvature (+ away
//! from the mirror), its rulings parallel to the mirror's vertical
//! diameter, so the bands cross the horizontal diameter. Period p = 1/L mm
//! for L lines per mm; a ruling edge passes through the axis, and the
//! opaque halves are kp ≤ X < kp + p/2 (k whole). A pupil point is dark
//! where its reflected ray crosses the grating on an opaque half
//! ([`super::test_stand`] traces it). Light and dark change where
//! 2X/p crosses a whole number; the band edges along the horizontal
//! diameter are those points, 0 < x ≤ D/2, ascending (x = 0 lies on the
//! ruling edge through the axis and is never reported).

use super::test_stand::{level_crossings, MirrorPicture, StandSpec, TestStand};
use super::{bad, TestSource};
use crate::error::{InputError, Num};
use serde::Serialize;

/// Most band edges reported along a radius.
pub const MAX_BAND_EDGES: usize = 20_000;
/// Most lines per mm a grating may have.
pub const MAX_LINES_PER_MM: f64 = 1000.0;

/// A Ronchi test: the mirror, the grating and the source.
#[derive(Debug, Clone, Copy)]
pub struct RonchiSpec<'a> {
    pub radius: f64,
    pub conic: f64,
    pub diameter: f64,
    pub lines_per_mm: f64,
    pub offset_mm: f64,
    pub source: TestSource,
    /// Measured departure knots (ρ, Δz) in mm, or `None` for the target.
    pub measured: Option<&'a [[f64; 2]]>,
}

/// The JSON of `catoptric ronchi`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Ronchigram {
    pub source: String,
    pub offset_mm: f64,
    pub lines_per_mm: f64,
    /// Radii along the horizontal diameter where light and dark change,
    /// mm, ascending, 0 < x ≤ D/2.
    pub band_edges_mm: Vec<f64>,
    /// Whether the mirror carries a measured departure.
    pub measured: bool,
}

/// The stand and the grating period of a checked spec.
fn setup(spec: &RonchiSpec<'_>) -> Result<(TestStand, f64), InputError> {
    let l = spec.lines_per_mm;
    if !l.is_finite() || l <= 0.0 || l > MAX_LINES_PER_MM {
        return Err(bad(
            "lines_per_mm",
            format!("must be greater than 0 and at most {MAX_LINES_PER_MM} (got {})", Num(l)),
        ));
    }
    let stand = TestStand::new(StandSpec {
        radius: spec.radius,
        conic: spec.conic,
        diameter: spec.diameter,
        offset_field: "offset_mm",
        offset_mm: spec.offset_mm,
        source: spec.source,
        measured: spec.measured,
    })?;
    Ok((stand, 1.0 / l))
}

/// Whether a landing point X on the grating falls on an opaque half; a
/// point within `snap` half-periods of a ruling edge counts as on it.
#[inline]
fn opaque(x: f64, period: f64, snap: f64) -> bool {
    let g = 2.0 * x / period;
    let k = g.round();
    let g = if (g - k).abs() <= snap { k } else { g };
    g.floor().rem_euclid(2.0) == 0.0
}

/// Band edges along the horizontal diameter.
pub fn ronchigram(spec: &RonchiSpec<'_>) -> Result<Ronchigram, InputError> {
    let (stand, p) = setup(spec)?;
    let a = stand.semi_diameter();
    let snap = 2.0 * stand.landing_tol() / p;
    let edges = level_crossings(|x| 2.0 * stand.landing_x(x) / p, 0.0, a, snap, MAX_BAND_EDGES).ok_or_else(|| {
        bad(
            "lines_per_mm",
            format!(
                "gives more than {MAX_BAND_EDGES} band edges across the radius; use fewer lines per mm or a grating nearer the centre of curvature"
            ),
        )
    })?;
    Ok(Ronchigram {
        source: spec.source.name().to_string(),
        offset_mm: spec.offset_mm,
        lines_per_mm: spec.lines_per_mm,
        // level_crossings reports points of (0, a] only: x = 0 never.
        band_edges_mm: edges,
        measured: stand.is_measured(),
    })
}

/// The Ronchigram as the eye sees it, `size` pixels a side.
pub fn ronchi_picture(spec: &RonchiSpec<'_>, size: usize) -> Result<MirrorPicture, InputError> {
    let (stand, p) = setup(spec)?;
    let snap = 2.0 * stand.landing_tol() / p;
    MirrorPicture::render(size, stand.semi_diameter(), |x, y| {
        stand.landing(x, y).is_some_and(|(lx, _)| !opaque(lx, p, snap))
    })
}
