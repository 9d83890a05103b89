//! Zonal mask and knife-edge readings for a centre-of-curvature test.
//!
//! # Zones
//!
//! N zones of equal area over a mirror of semi-diameter a have edges
//! a√(X/N), X = 0 … N (Berry, Build Your Own Telescope, 2nd ed. 1994;
//! Texereau). Each zone is represented by the radius that splits it into
//! two equal areas, the RMS of its edges √((h₀²+h₁²)/2) = a√((X−½)/N);
//! readings are computed at that radius (`r_mm`).
//!
//! # Readings
//!
//! Readings are axial positions of the knife edge, mm, **relative to the
//! vertex centre of curvature** (distance R from the vertex); positive is
//! farther from the mirror.
//!
//! * Moving source (source and knife travel together): the knife finds the
//!   zone's normal, which crosses the axis at R − K z(ρ) from the vertex
//!   (exact for a conic), so the reading is −K z(ρ); a paraboloid gives
//!   z(ρ) = ρ²/(2R).
//! * Fixed source (source stays on the axis at the vertex centre of
//!   curvature, the knife moves): the ray from the source to the zone is
//!   reflected about the exact normal; the reading is where it crosses the
//!   axis. About twice the moving-source value (≈ ρ²/R for a paraboloid),
//!   computed exactly here. [`fixed_source_reading`] takes any axial
//!   source position.
//!
//! A source and knife on the same axial spot that both see the zone null
//! would need the ray to return along itself, i.e. along the normal: that
//! is the moving-source reading, not a third kind of test.
//!
//! # Glass to remove
//!
//! Each zone also carries the depth of glass to remove at `r_mm` to turn
//! the best-fit sphere (see [`super::compare::best_fit_sphere`]) into the
//! target conic, and the target's signed departure from that sphere.

use super::compare::best_fit_sphere;
use super::{bad, conic_reaches, conic_sag, conic_sag_slope, finite, finite_result, positive, wavelength};
use crate::error::InputError;
use serde::Serialize;

/// Most zones a table takes.
pub const MAX_ZONES: usize = 100;

/// How the centre-of-curvature test is set up.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TestSource {
    /// Source moves with the knife edge.
    Moving,
    /// Source stays at the vertex centre of curvature.
    Fixed,
}

impl TestSource {
    pub fn name(self) -> &'static str {
        match self {
            TestSource::Moving => "moving",
            TestSource::Fixed => "fixed",
        }
    }
    /// Reads `moving` or `fixed` (field `source`).
    pub fn parse(s: &str) -> Result<Self, InputError> {
        match s {
            "moving" => Ok(TestSource::Moving),
            "fixed" => Ok(TestSource::Fixed),
            _ => Err(bad("source", format!("unknown source \"{s}\"; use moving or fixed"))),
        }
    }
}

/// One zone of the table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Zone {
    pub inner_mm: f64,
    pub outer_mm: f64,
    /// Representative radius √((inner²+outer²)/2).
    pub r_mm: f64,
    /// Knife-edge reading at `r_mm`, relative to the vertex centre of
    /// curvature, positive away from the mirror.
    pub reading_mm: f64,
    /// Depth of glass to remove at `r_mm` from the best-fit sphere, µm.
    pub removal_um: f64,
    /// Target's departure from the best-fit sphere at `r_mm` (sphere placed
    /// midway), µm.
    pub departure_um: f64,
    /// The same departure in waves of the test wavelength, on the surface.
    pub departure_waves: f64,
}

/// The JSON of `catoptric zones`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ZoneTable {
    pub source: String,
    pub zones: Vec<Zone>,
    pub radius_mm: f64,
    pub conic: f64,
    pub diameter_mm: f64,
    pub wavelength_nm: f64,
    pub best_fit_sphere_radius_mm: f64,
    /// Greatest depth of glass to remove over the whole mirror, µm.
    pub removal_depth_um: f64,
}

/// Zone edges a√(X/N), X = 0 … N (N + 1 values from 0 to the rim).
pub fn zone_edges(d: f64, n: usize) -> Vec<f64> {
    let a = 0.5 * d;
    (0..=n).map(|x| a * (x as f64 / n as f64).sqrt()).collect()
}

/// Moving-source reading at `rho`: −K z(ρ), mm from the vertex centre of
/// curvature.
pub fn moving_source_reading(radius: f64, conic: f64, rho: f64) -> f64 {
    -conic * conic_sag(radius, conic, rho)
}

/// Fixed-source reading at `rho` with the source on the axis `source_mm`
/// beyond the vertex centre of curvature: where the reflected ray crosses
/// the axis, mm from the vertex centre of curvature.
pub fn fixed_source_reading(radius: f64, conic: f64, rho: f64, source_mm: f64) -> f64 {
    let s = radius + source_mm;
    let (z, dz) = conic_sag_slope(radius, conic, rho);
    let (dr, dzz) = (rho, z - s);
    let l = (dr * dr + dzz * dzz).sqrt();
    let (d_r, d_z) = (dr / l, dzz / l);
    let nn = (1.0 + dz * dz).sqrt();
    let (n_r, n_z) = (-dz / nn, 1.0 / nn);
    let dn = d_r * n_r + d_z * n_z;
    let (r_r, r_z) = (d_r - 2.0 * dn * n_r, d_z - 2.0 * dn * n_z);
    if r_r.abs() <= 1e-15 {
        // Paraxial limit: the mirror's conjugate of the source.
        let img = 1.0 / (2.0 / radius - 1.0 / s);
        return img - radius;
    }
    let t = -rho / r_r;
    z + t * r_z - radius
}

/// Builds the zone table for a concave conic mirror.
pub fn zone_table(
    radius: f64,
    conic: f64,
    d: f64,
    n: usize,
    source: TestSource,
    wavelength_nm: f64,
) -> Result<ZoneTable, InputError> {
    let radius = positive("radius", radius)?;
    finite("conic", conic)?;
    if conic.abs() > 1.0e6 {
        return Err(bad("conic", "must be between -1e6 and 1e6"));
    }
    let d = positive("diameter", d)?;
    if n == 0 || n > MAX_ZONES {
        return Err(bad("zones", format!("must be between 1 and {MAX_ZONES} (got {n})")));
    }
    let nm = wavelength("wavelength", wavelength_nm)?;
    conic_reaches("diameter", radius, conic, 0.5 * d)?;
    conic_reaches("diameter", radius, 0.0, 0.5 * d)?;
    let edges = zone_edges(d, n);
    let bfs = best_fit_sphere(radius, conic, d);
    let lambda = nm * 1e-6;
    let zones = edges
        .windows(2)
        .map(|e| {
            let r = ((e[0] * e[0] + e[1] * e[1]) / 2.0).sqrt();
            let reading = match source {
                TestSource::Moving => moving_source_reading(radius, conic, r),
                TestSource::Fixed => fixed_source_reading(radius, conic, r, 0.0),
            };
            let dep = bfs.departure_mm(r);
            Zone {
                inner_mm: e[0],
                outer_mm: e[1],
                r_mm: r,
                reading_mm: reading,
                removal_um: bfs.removal_mm(r) * 1e3,
                departure_um: dep * 1e3,
                departure_waves: dep / lambda,
            }
        })
        .collect::<Vec<Zone>>();
    for z in &zones {
        let values = [z.r_mm, z.reading_mm, z.removal_um, z.departure_um, z.departure_waves];
        finite_result("diameter", "zone table", &values)?;
    }
    finite_result("diameter", "best-fit sphere", &[bfs.radius_mm, bfs.removal_depth_mm])?;
    Ok(ZoneTable {
        source: source.name().to_string(),
        zones,
        radius_mm: radius,
        conic,
        diameter_mm: d,
        wavelength_nm: nm,
        best_fit_sphere_radius_mm: bfs.radius_mm,
        removal_depth_um: bfs.removal_depth_mm * 1e3,
    })
}
