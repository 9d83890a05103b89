//! Where the sun stands: the NREL Solar Position Algorithm (Reda &
//! Andreas, "Solar position algorithm for solar radiation applications",
//! Solar Energy 76 (2004) 577–589; NREL/TP-560-34302) as the
//! `solar-positioning` crate implements it, with atmospheric refraction,
//! and the sun's direction in a layout's frame (docs/FORMATS.md §2, `site`).

use crate::error::InputError;
use crate::geometry::Vec3;
use crate::layout::Site;
use chrono::{DateTime, FixedOffset, NaiveDate, NaiveDateTime, NaiveTime, TimeZone as _};
use serde::Serialize;
use solar_positioning::{delta_t, Location, RefractionCorrection, SolarPositions};

/// The sun as seen from a site: azimuth clockwise from north, apparent
/// elevation above the horizon (refraction included), zenith = 90° −
/// elevation; degrees.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SunPosition {
    pub azimuth_deg: f64,
    pub elevation_deg: f64,
    pub zenith_deg: f64,
}

/// The air the refraction is computed for: pressure (mbar) and
/// temperature (°C).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Atmosphere {
    pub pressure_mbar: f64,
    pub temperature_c: f64,
}

impl Default for Atmosphere {
    /// The standard sea-level atmosphere, 1013.25 mbar and 15 °C.
    fn default() -> Self {
        Atmosphere { pressure_mbar: 1013.25, temperature_c: 15.0 }
    }
}

/// Checks a latitude and a longitude (degrees) under the given names.
pub fn check_place(latitude: f64, longitude: f64, fields: (&str, &str)) -> Result<(), InputError> {
    if !latitude.is_finite() || !(-90.0..=90.0).contains(&latitude) {
        return Err(InputError::new(fields.0, "must be a latitude between -90 and 90 degrees"));
    }
    if !longitude.is_finite() || !(-180.0..=180.0).contains(&longitude) {
        return Err(InputError::new(fields.1, "must be a longitude between -180 and 180 degrees"));
    }
    Ok(())
}

/// The standard offset of a longitude's own clock: round(λ/15) hours.
pub fn standard_offset(longitude: f64) -> FixedOffset {
    let hours = (longitude / 15.0).round().clamp(-12.0, 12.0) as i32;
    FixedOffset::east_opt(hours * 3600).unwrap_or(FixedOffset::east_opt(0).expect("zero offset"))
}

/// Reads an ISO 8601 time: with an offset (`2026-06-21T12:00:00+02:00`,
/// `…Z`) it is taken as written; without one (`2026-06-21T12:00`,
/// seconds optional) it is local standard time at `longitude`.
pub fn parse_time(text: &str, longitude: f64, field: &str) -> Result<DateTime<FixedOffset>, InputError> {
    let t = text.trim();
    if let Ok(d) = DateTime::parse_from_rfc3339(t) {
        return Ok(d);
    }
    for f in ["%Y-%m-%dT%H:%M:%S%.f%:z", "%Y-%m-%dT%H:%M%:z", "%Y-%m-%d %H:%M:%S%.f%:z"] {
        if let Ok(d) = DateTime::parse_from_str(t, f) {
            return Ok(d);
        }
    }
    for f in ["%Y-%m-%dT%H:%M:%S%.f", "%Y-%m-%dT%H:%M", "%Y-%m-%d %H:%M:%S%.f", "%Y-%m-%d %H:%M"] {
        if let Ok(n) = NaiveDateTime::parse_from_str(t, f) {
            return local(n, longitude, field);
        }
    }
    Err(InputError::new(
        field,
        "must be an ISO 8601 date and time such as 2026-06-21T12:00 (local standard time) or 2026-06-21T12:00:00+02:00",
    ))
}

/// A wall-clock time at the standard offset of `longitude`.
pub fn local(n: NaiveDateTime, longitude: f64, field: &str) -> Result<DateTime<FixedOffset>, InputError> {
    standard_offset(longitude)
        .from_local_datetime(&n)
        .single()
        .ok_or_else(|| InputError::new(field, "is not a valid local time"))
}

/// A date and an `HH:MM` clock time of that day.
pub fn parse_date(text: &str, field: &str) -> Result<NaiveDate, InputError> {
    NaiveDate::parse_from_str(text.trim(), "%Y-%m-%d")
        .map_err(|_| InputError::new(field, "must be a date YYYY-MM-DD, such as 2026-06-21"))
}

/// An `HH:MM` clock time (`24:00` is the end of the day, given as None
/// day-overflow by the caller).
pub fn parse_clock(text: &str, field: &str) -> Result<NaiveTime, InputError> {
    NaiveTime::parse_from_str(text.trim(), "%H:%M").map_err(|_| InputError::new(field, "must be a clock time HH:MM, such as 09:30"))
}

/// The sun's position at `time` from a place at `elevation_m` above sea
/// level: SPA with ΔT estimated from the date (Espenak & Meeus
/// polynomials, as the crate provides) and refraction for `air`.
pub fn sun_position(
    latitude: f64,
    longitude: f64,
    elevation_m: f64,
    time: &DateTime<FixedOffset>,
    air: Atmosphere,
    delta_t_s: Option<f64>,
) -> Result<SunPosition, InputError> {
    check_place(latitude, longitude, ("latitude", "longitude"))?;
    if !elevation_m.is_finite() || !(-500.0..=10_000.0).contains(&elevation_m) {
        return Err(InputError::new("elevation_m", "must be between -500 and 10000 m"));
    }
    let dt = match delta_t_s {
        Some(v) => v,
        None => delta_t::estimate_from_date_like(time).map_err(|e| InputError::new("time", format!("{e}")))?,
    };
    let refraction = RefractionCorrection::new(air.pressure_mbar, air.temperature_c)
        .map_err(|e| InputError::new("atmosphere", format!("{e}")))?;
    let p = SolarPositions::new()
        .at(time, Location { latitude, longitude }, elevation_m, dt, Some(refraction))
        .map_err(|e| InputError::new("time", format!("{e}")))?;
    let zenith = p.zenith_angle();
    Ok(SunPosition { azimuth_deg: p.azimuth(), elevation_deg: 90.0 - zenith, zenith_deg: zenith })
}

/// The sun's position seen from a layout's site, standard atmosphere.
pub fn sun_at_site(site: &Site, time: &DateTime<FixedOffset>) -> Result<SunPosition, InputError> {
    sun_position(site.latitude_deg, site.longitude_deg, site.elevation_m, time, Atmosphere::default(), None)
}

/// Unit vector toward the sun in the layout frame: the layout plane is
/// vertical, +y up, +z toward bearing B, +x = y × z toward B − 90°; a sun
/// at azimuth A and elevation h lies along
/// s = (−cos h sin(A − B), sin h, cos h cos(A − B)). Sun rays travel along −s.
pub fn sun_vector(site: &Site, p: &SunPosition) -> Vec3 {
    let h = p.elevation_deg.to_radians();
    let d = (p.azimuth_deg - site.z_bearing_deg).to_radians();
    Vec3::new(-h.cos() * d.sin(), h.sin(), h.cos() * d.cos())
}
