//! Measured mirrors: a design conic plus the departure a test found.
//!
//! Two kinds of measurement are read:
//!
//! * knife-edge readings from a moving-source centre-of-curvature test,
//!   (r, reading) pairs in mm with readings relative to the design's vertex
//!   centre of curvature, positive away from the mirror (the convention of
//!   [`super::zones`]);
//! * a table of surface height departures from the design conic,
//!   (radius, departure), as CSV text.
//!
//! # From readings to a surface
//!
//! A moving-source reading ζ is where the zone's normal crosses the axis:
//! z + ρ/z′ = R + ζ, so the measured meridian obeys
//! dz/dρ = ρ/(R + ζ(ρ) − z). The difference between measured and design
//! readings is interpolated with a natural cubic spline through the zones
//! (linear beyond the outer ones), added to the exact design reading
//! −K z(ρ), and the equation is integrated from the vertex with fixed-step
//! Runge–Kutta. A perfect mirror therefore comes back exactly as designed.
//! The departure from the design conic is sampled at evenly spaced knots
//! and carried by the mirror's `profile.departure` spline.
//!
//! # Zones needing work
//!
//! The departure is compared with the target after removing piston and a
//! ρ² term (a different radius of curvature is not a figure error), by
//! least squares with area weights. A zone whose residual stands more than
//! the tolerance proud of the target (toward the centre of curvature) is
//! `high` (glass to remove there); one below by more is `low` (its
//! surroundings must come down).

use super::{bad, checked, conic_reaches, conic_sag, finite, fit_piston_focus, new_layout, positive, star_beam, MAX_MM as MAX_LENGTH_MM};
use crate::error::InputError;
use crate::geometry::NaturalSpline;
use crate::layout::{
    ApertureSpec, Element, Form, Layout, Mirror, ProfileSpec, Screen, ScreenShape,
};
use serde::Serialize;

/// Knots in the departure spline of a mirror built from readings.
pub const PROFILE_KNOTS: usize = 41;
/// Most rows a departure table or reading list may have (the layout's knot cap).
pub const MAX_ROWS: usize = 512;
/// Runge–Kutta steps from the vertex to the rim.
const RK_STEPS: usize = 4000;

/// Parses a departure table: one `radius, departure` pair per line
/// (separated by a comma, semicolon, tab or spaces). Blank lines and lines
/// starting with `#` are skipped. Radius in mm; departure in µm unless a
/// header line names the unit of the second column (`departure_mm`,
/// `departure_um`, `departure_nm`). Radii must be at least 0 and strictly
/// increasing. Returns knots (ρ, Δz) in mm. Errors name the line.
pub fn parse_departure_csv(text: &str) -> Result<Vec<[f64; 2]>, InputError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut per_mm = 1e3; // µm per mm unless a header says otherwise
    let mut rows: Vec<[f64; 2]> = Vec::new();
    let mut seen_data = false;
    for (i, raw) in text.lines().enumerate() {
        let line_no = i + 1;
        let line = raw.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        // Comma, semicolon or tab separate the columns when present;
        // otherwise runs of spaces do.
        let fields: Vec<&str> = if line.contains([',', ';', '\t']) {
            line.split([',', ';', '\t']).map(str::trim).collect()
        } else {
            line.split_whitespace().collect()
        };
        let field = |col: &str| format!("csv line {line_no} ({col})");
        if fields.len() != 2 {
            return Err(bad(
                &format!("csv line {line_no}"),
                format!("expected two values (radius, departure), found {}", fields.len()),
            ));
        }
        let (a, b) = (fields[0].trim(), fields[1].trim());
        if !seen_data && a.parse::<f64>().is_err() {
            // A header: the departure column names its unit.
            // The unit ends the name: departure_nm, departure (µm), dz mm.
            let name = b.to_lowercase();
            let name = name.trim_end_matches(|c: char| !c.is_alphanumeric());
            per_mm = if name.ends_with("nm") {
                1e6
            } else if name.ends_with("um") || name.ends_with("µm") || name.ends_with("micron") {
                1e3
            } else if name.ends_with("mm") {
                1.0
            } else {
                return Err(bad(
                    &field("departure"),
                    format!("header \"{b}\" must name the unit: departure_mm, departure_um or departure_nm"),
                ));
            };
            seen_data = true;
            continue;
        }
        seen_data = true;
        let r: f64 = a.parse().map_err(|_| bad(&field("radius"), format!("\"{a}\" is not a number")))?;
        let v: f64 = b.parse().map_err(|_| bad(&field("departure"), format!("\"{b}\" is not a number")))?;
        if !r.is_finite() || !(0.0..=MAX_LENGTH_MM).contains(&r) {
            return Err(bad(&field("radius"), format!("must be a finite number of mm, at least 0 (got {a})")));
        }
        let v = v / per_mm;
        if !v.is_finite() || v.abs() > MAX_LENGTH_MM {
            return Err(bad(&field("departure"), format!("must be a finite number (got {b})")));
        }
        if let Some(last) = rows.last()
            && r <= last[0] {
                return Err(bad(&field("radius"), format!("must be greater than the previous radius {} mm", last[0])));
            }
        if rows.len() == MAX_ROWS {
            return Err(bad(&format!("csv line {line_no}"), format!("at most {MAX_ROWS} rows")));
        }
        rows.push([r, v]);
    }
    if rows.len() < 2 {
        return Err(bad("csv", "needs at least two rows of radius, departure"));
    }
    Ok(rows)
}

fn check_design(radius: f64, conic: f64, d: f64) -> Result<(), InputError> {
    positive("radius", radius)?;
    finite("conic", conic)?;
    if conic.abs() > 1.0e6 {
        return Err(bad("conic", "must be between -1e6 and 1e6"));
    }
    positive("diameter", d)?;
    conic_reaches("diameter", radius, conic, 0.5 * d)
}

fn check_readings(readings: &[[f64; 2]], a: f64) -> Result<(), InputError> {
    if readings.is_empty() || readings.len() > MAX_ROWS {
        return Err(bad("readings", format!("give between 1 and {MAX_ROWS} zone readings")));
    }
    for (i, z) in readings.iter().enumerate() {
        let f = format!("readings[{i}]");
        finite(&format!("{f}.r_mm"), z[0])?;
        finite(&format!("{f}.reading_mm"), z[1])?;
        if z[0] <= 0.0 || z[0] > a {
            return Err(bad(&format!("{f}.r_mm"), format!("must be greater than 0 and at most the semi-diameter {a} mm")));
        }
        if i > 0 && z[0] <= readings[i - 1][0] {
            return Err(bad(&format!("{f}.r_mm"), "zone radii must increase from reading to reading"));
        }
    }
    Ok(())
}

/// Measured meridian on a fine grid: (ρ, z) from the vertex to the rim.
fn integrate_readings(radius: f64, conic: f64, a: f64, readings: &[[f64; 2]]) -> Result<Vec<[f64; 2]>, InputError> {
    let diffs: Vec<[f64; 2]> =
        readings.iter().map(|z| [z[0], z[1] - super::zones::moving_source_reading(radius, conic, z[0])]).collect();
    let spline = if diffs.len() >= 2 { NaturalSpline::new(&diffs) } else { None };
    let delta = |r: f64| spline.as_ref().map_or(diffs[0][1], |s| s.eval(r).0);
    let zeta = |r: f64| super::zones::moving_source_reading(radius, conic, r) + delta(r);
    let slope = |r: f64, z: f64| {
        let den = radius + zeta(r) - z;
        r / den
    };
    let h = a / RK_STEPS as f64;
    let mut out = Vec::with_capacity(RK_STEPS + 1);
    let mut z = 0.0;
    out.push([0.0, 0.0]);
    for i in 0..RK_STEPS {
        let r = i as f64 * h;
        let k1 = slope(r, z);
        let k2 = slope(r + 0.5 * h, z + 0.5 * h * k1);
        let k3 = slope(r + 0.5 * h, z + 0.5 * h * k2);
        let k4 = slope(r + h, z + h * k3);
        z += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
        if !z.is_finite() || radius + zeta(r + h) - z <= 0.0 {
            return Err(bad(
                "readings",
                format!("no surface fits these readings near ρ = {:.3} mm (the normals would cross behind the mirror)", r + h),
            ));
        }
        out.push([r + h, z]);
    }
    Ok(out)
}

/// Departure from the design conic of a mirror measured with a
/// moving-source knife-edge test, as [`PROFILE_KNOTS`] evenly spaced knots
/// (ρ, Δz) in mm from the vertex to the rim. `readings` are (r_mm,
/// reading_mm) pairs, radii increasing.
pub fn profile_from_readings(radius: f64, conic: f64, d: f64, readings: &[[f64; 2]]) -> Result<Vec<[f64; 2]>, InputError> {
    check_design(radius, conic, d)?;
    let a = 0.5 * d;
    check_readings(readings, a)?;
    let grid = integrate_readings(radius, conic, a, readings)?;
    let per = RK_STEPS / (PROFILE_KNOTS - 1);
    Ok((0..PROFILE_KNOTS)
        .map(|j| {
            let [r, z] = grid[j * per];
            [r, z - conic_sag(radius, conic, r)]
        })
        .collect())
}

/// A revolved mirror: design conic plus measured departure knots, vertex
/// at [0, 0] looking along −z (light travelling +z).
pub fn measured_mirror(id: &str, radius: f64, conic: f64, d: f64, departure: &[[f64; 2]]) -> Result<Mirror, InputError> {
    check_design(radius, conic, d)?;
    Ok(Mirror {
        id: id.to_string(),
        vertex: [0.0, 0.0],
        axis_deg: 180.0,
        form: Form::Revolved,
        length: None,
        profile: ProfileSpec { radius: Some(radius), conic, aspheric: Vec::new(), departure: Some(departure.to_vec()) },
        aperture: ApertureSpec { diameter: d, offset: 0.0, hole: 0.0 },
        reflectivity: 1.0,
        slope_error_mrad: 0.0,
    })
}

/// A layout to trace a measured mirror: the mirror (`mirror`), a screen
/// `focus` at the design focus R/2 facing it (square, 2 % of the
/// diameter across, at least 1 mm), and a beam `on-axis` filling it.
/// Validated.
pub fn measured_layout(name: &str, radius: f64, conic: f64, d: f64, departure: &[[f64; 2]]) -> Result<Layout, InputError> {
    let m = measured_mirror("mirror", radius, conic, d, departure)?;
    let screen = Element::Screen(Screen {
        id: "focus".to_string(),
        center: [0.0, -0.5 * radius],
        axis_deg: 0.0,
        size: (0.02 * d).max(1.0),
        shape: ScreenShape::Square,
        opaque: false,
    });
    let beam = star_beam("on-axis", [0.0, -0.25 * radius], 0.0, d);
    let notes = "Design conic plus the departure found by a test.".to_string();
    checked(new_layout(name.to_string(), notes, vec![Element::Mirror(m), screen], vec![beam]))
}

/// Whether a zone is on figure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ZoneVerdict {
    /// Stands proud of the target: remove glass here.
    High,
    /// Below the target: its surroundings must come down.
    Low,
    Ok,
}

/// Figure of one measured zone against the target.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ZoneWork {
    pub r_mm: f64,
    pub reading_mm: f64,
    /// Reading a perfect mirror would give (moving source).
    pub target_reading_mm: f64,
    /// Surface error after removing piston and a change of radius, nm
    /// (positive: proud of the target).
    pub surface_error_nm: f64,
    pub verdict: ZoneVerdict,
}

/// Judges measured moving-source readings against the design conic:
/// which zones are high or low by more than `tolerance_nm` of surface.
pub fn zones_needing_work(
    radius: f64,
    conic: f64,
    d: f64,
    readings: &[[f64; 2]],
    tolerance_nm: f64,
) -> Result<Vec<ZoneWork>, InputError> {
    check_design(radius, conic, d)?;
    let a = 0.5 * d;
    check_readings(readings, a)?;
    let tol = finite("tolerance_nm", tolerance_nm)?;
    if tol < 0.0 {
        return Err(bad("tolerance_nm", "must be at least 0"));
    }
    let grid = integrate_readings(radius, conic, a, readings)?;
    // Area-weighted least squares of Δz ≈ p + q ρ² over the grid.
    let (p, q) = fit_piston_focus(grid.iter().map(|&[r, z]| (r.max(1e-12), r * r, z - conic_sag(radius, conic, r))));
    let step = a / RK_STEPS as f64;
    Ok(readings
        .iter()
        .map(|&[r, reading]| {
            // Linear interpolation on the fine grid.
            let i = ((r / step).floor() as usize).min(RK_STEPS - 1);
            let t = (r - grid[i][0]) / step;
            let z = grid[i][1] * (1.0 - t) + grid[i + 1][1] * t;
            let e = (z - conic_sag(radius, conic, r) - p - q * r * r) * 1e6;
            let verdict = if e > tol {
                ZoneVerdict::High
            } else if e < -tol {
                ZoneVerdict::Low
            } else {
                ZoneVerdict::Ok
            };
            ZoneWork {
                r_mm: r,
                reading_mm: reading,
                target_reading_mm: super::zones::moving_source_reading(radius, conic, r),
                surface_error_nm: e,
                verdict,
            }
        })
        .collect())
}

/// Figure of one row of a measured departure table against the target.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DepartureWork {
    pub r_mm: f64,
    /// Measured departure from the design conic, µm.
    pub departure_um: f64,
    /// Departure after removing piston and a change of radius, nm
    /// (positive: proud of the target).
    pub surface_error_nm: f64,
    pub verdict: ZoneVerdict,
}

/// Judges a departure table (knots (ρ, Δz) in mm, as from
/// [`parse_departure_csv`]) the way [`zones_needing_work`] judges readings:
/// piston and a ρ² term are removed by least squares with area weights
/// (each row stands for the annulus halfway to its neighbours), and a row
/// more than `tolerance_nm` proud of the target is `high`, below it `low`.
pub fn departures_needing_work(knots: &[[f64; 2]], tolerance_nm: f64) -> Result<Vec<DepartureWork>, InputError> {
    let tol = finite("tolerance_nm", tolerance_nm)?;
    if tol < 0.0 {
        return Err(bad("tolerance_nm", "must be at least 0"));
    }
    if knots.len() < 2 || knots.len() > MAX_ROWS {
        return Err(bad("csv", format!("needs between 2 and {MAX_ROWS} rows of radius, departure")));
    }
    let n = knots.len();
    let (p, q) = fit_piston_focus((0..n).map(|i| {
        let [r, y] = knots[i];
        let lo = if i == 0 { r } else { 0.5 * (r + knots[i - 1][0]) };
        let hi = if i + 1 == n { r } else { 0.5 * (r + knots[i + 1][0]) };
        // Annulus area between the midpoints (over π); the innermost row
        // keeps a sliver so a lone centre sample still counts.
        ((hi * hi - lo * lo).max(1e-12 * r.max(1.0)), r * r, y)
    }));
    Ok(knots
        .iter()
        .map(|&[r, y]| {
            let e = (y - p - q * r * r) * 1e6;
            let verdict = if e > tol {
                ZoneVerdict::High
            } else if e < -tol {
                ZoneVerdict::Low
            } else {
                ZoneVerdict::Ok
            };
            DepartureWork { r_mm: r, departure_um: y * 1e3, surface_error_nm: e, verdict }
        })
        .collect())
}
