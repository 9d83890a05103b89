//! Value checks on a parsed layout. The first problem found is reported
//! with its field path and the allowed range.

use super::{Element, Form, Layout, Source};
use crate::error::InputError;
use std::collections::HashSet;

/// Most rays one source may launch.
pub const MAX_RAYS_PER_SOURCE: u64 = 4_000_000;
/// Most rays a whole layout may launch.
pub const MAX_RAYS_TOTAL: u64 = 8_000_000;
/// Largest `max_bounces`.
pub const MAX_BOUNCES_CAP: u32 = 1000;
/// Most elements (and, separately, sources) in a layout.
pub const MAX_ELEMENTS: usize = 256;
/// Largest coordinate or size, mm (10 km): keeps every product finite.
pub const MAX_LENGTH_MM: f64 = 1.0e7;
/// Most even aspheric coefficients (A4 … A20).
pub const MAX_ASPHERIC_TERMS: usize = 9;
/// Most knots in a departure spline.
pub const MAX_KNOTS: usize = 512;
/// Longest id, characters.
pub const MAX_ID_LEN: usize = 64;
/// Largest fraction of a conic's domain an aperture may use: the sag
/// formula's square root must stay clear of zero, (1+K)c²ρ² ≤ this.
pub const DOMAIN_MARGIN: f64 = 1.0 - 1e-9;

type R = Result<(), InputError>;

fn err(field: impl Into<String>, msg: impl Into<String>) -> R {
    Err(InputError::new(field, msg))
}

fn finite(field: &str, v: f64) -> R {
    if !v.is_finite() {
        return err(field, "must be a finite number");
    }
    if v.abs() > MAX_LENGTH_MM {
        return err(field, format!("magnitude must be at most {MAX_LENGTH_MM:e}"));
    }
    Ok(())
}

fn positive(field: &str, v: f64) -> R {
    finite(field, v)?;
    if v <= 0.0 {
        return err(field, format!("must be greater than 0 (got {v})"));
    }
    Ok(())
}

fn in_range(field: &str, v: f64, lo: f64, hi: f64, what: &str) -> R {
    if !v.is_finite() || v < lo || v > hi {
        return err(field, format!("must be {what} (got {v})"));
    }
    Ok(())
}

fn point(field: &str, p: [f64; 2]) -> R {
    finite(&format!("{field}[0]"), p[0])?;
    finite(&format!("{field}[1]"), p[1])
}

fn rays(field: &str, n: u64) -> R {
    if n == 0 || n > MAX_RAYS_PER_SOURCE {
        return err(field, format!("must be between 1 and {MAX_RAYS_PER_SOURCE} (got {n})"));
    }
    Ok(())
}

fn id(field: &str, s: &str, seen: &mut HashSet<String>) -> R {
    if s.trim().is_empty() {
        return err(field, "must not be empty");
    }
    if s.chars().count() > MAX_ID_LEN {
        return err(field, format!("must be at most {MAX_ID_LEN} characters"));
    }
    if !seen.insert(s.to_string()) {
        return err(field, format!("duplicate id \"{s}\"; every element and source needs its own id"));
    }
    Ok(())
}

/// Checks every value of a layout.
pub fn validate(l: &Layout) -> R {
    if l.format != super::FORMAT_TAG {
        return err("format", format!("must be \"{}\"", super::FORMAT_TAG));
    }
    if l.version != super::FORMAT_VERSION {
        return err("version", format!("unsupported version {}; this build reads version 1", l.version));
    }
    if l.name.chars().count() > 200 {
        return err("name", "must be at most 200 characters");
    }
    in_range("wavelength_nm", l.wavelength_nm, 100.0, 100_000.0, "between 100 and 100000 nm")?;
    if l.max_bounces == 0 || l.max_bounces > MAX_BOUNCES_CAP {
        return err("max_bounces", format!("must be between 1 and {MAX_BOUNCES_CAP}"));
    }
    if l.elements.len() > MAX_ELEMENTS {
        return err("elements", format!("at most {MAX_ELEMENTS} elements"));
    }
    if l.sources.len() > MAX_ELEMENTS {
        return err("sources", format!("at most {MAX_ELEMENTS} sources"));
    }
    let mut seen = HashSet::new();
    for (i, e) in l.elements.iter().enumerate() {
        let p = format!("elements[{i}]");
        id(&format!("{p}.id"), e.id(), &mut seen)?;
        match e {
            Element::Mirror(m) => {
                point(&format!("{p}.vertex"), m.vertex)?;
                finite(&format!("{p}.axis_deg"), m.axis_deg)?;
                match (m.form, m.length) {
                    (Form::Extruded, Some(len)) => positive(&format!("{p}.length"), len)?,
                    (Form::Extruded, None) => {
                        return err(format!("{p}.length"), "required for an extruded mirror (its extent along x, mm)");
                    }
                    (Form::Revolved, Some(_)) => {
                        return err(format!("{p}.length"), "only allowed when form is \"extruded\"");
                    }
                    (Form::Revolved, None) => {}
                }
                let pr = &m.profile;
                if let Some(r) = pr.radius {
                    finite(&format!("{p}.profile.radius"), r)?;
                    if r == 0.0 {
                        return err(format!("{p}.profile.radius"), "must not be 0; leave it out (or null) for a flat");
                    }
                }
                in_range(&format!("{p}.profile.conic"), pr.conic, -1.0e6, 1.0e6, "a finite number between -1e6 and 1e6")?;
                if pr.aspheric.len() > MAX_ASPHERIC_TERMS {
                    return err(format!("{p}.profile.aspheric"), format!("at most {MAX_ASPHERIC_TERMS} coefficients (A4 … A20)"));
                }
                for (j, a) in pr.aspheric.iter().enumerate() {
                    if !a.is_finite() {
                        return err(format!("{p}.profile.aspheric[{j}]"), "must be a finite number");
                    }
                }
                let a = &m.aperture;
                positive(&format!("{p}.aperture.diameter"), a.diameter)?;
                finite(&format!("{p}.aperture.offset"), a.offset)?;
                finite(&format!("{p}.aperture.hole"), a.hole)?;
                if a.hole < 0.0 || a.hole >= a.diameter {
                    return err(format!("{p}.aperture.hole"), format!("must be at least 0 and less than the diameter {}", a.diameter));
                }
                let rho_max = a.offset.abs() + 0.5 * a.diameter;
                if let Some(r) = pr.radius {
                    let c = 1.0 / r;
                    let q = (1.0 + pr.conic) * c * c * rho_max * rho_max;
                    if q >= DOMAIN_MARGIN {
                        let limit = if pr.conic > -1.0 { 1.0 / (c.abs() * (1.0 + pr.conic).sqrt()) } else { f64::INFINITY };
                        return err(
                            format!("{p}.aperture.diameter"),
                            format!(
                                "reaches ρ = {rho_max} mm, past the conic's domain (the surface ends at ρ = {limit:.6} mm for R = {r}, K = {}); make the aperture smaller or the conic constant smaller",
                                pr.conic
                            ),
                        );
                    }
                }
                if let Some(knots) = &pr.departure {
                    let kp = format!("{p}.profile.departure");
                    if knots.len() < 2 || knots.len() > MAX_KNOTS {
                        return err(kp, format!("needs between 2 and {MAX_KNOTS} knots [rho, dz]"));
                    }
                    for (j, k) in knots.iter().enumerate() {
                        finite(&format!("{kp}[{j}][0]"), k[0])?;
                        finite(&format!("{kp}[{j}][1]"), k[1])?;
                        if m.form == Form::Revolved && k[0] < 0.0 {
                            return err(format!("{kp}[{j}][0]"), "rho must be at least 0 on a revolved mirror");
                        }
                        if j > 0 && k[0] <= knots[j - 1][0] {
                            return err(format!("{kp}[{j}][0]"), "rho must be strictly increasing from knot to knot");
                        }
                    }
                }
                in_range(&format!("{p}.reflectivity"), m.reflectivity, 0.0, 1.0, "between 0 and 1")?;
            }
            Element::Screen(s) => {
                point(&format!("{p}.center"), s.center)?;
                finite(&format!("{p}.axis_deg"), s.axis_deg)?;
                positive(&format!("{p}.size"), s.size)?;
            }
        }
    }
    let mut total: u64 = 0;
    for (i, s) in l.sources.iter().enumerate() {
        let p = format!("sources[{i}]");
        id(&format!("{p}.id"), s.id(), &mut seen)?;
        match s {
            Source::Beam(b) => {
                point(&format!("{p}.center"), b.center)?;
                finite(&format!("{p}.direction_deg"), b.direction_deg)?;
                in_range(&format!("{p}.out_of_plane_deg"), b.out_of_plane_deg, -89.0, 89.0, "between -89 and 89 degrees")?;
                positive(&format!("{p}.diameter"), b.diameter)?;
                rays(&format!("{p}.rays"), b.rays)?;
                in_range(&format!("{p}.sun_half_angle_mrad"), b.sun_half_angle_mrad, 0.0, 200.0, "between 0 and 200 mrad (4.65 is the mean sun)")?;
                in_range(&format!("{p}.irradiance_w_m2"), b.irradiance_w_m2, 0.0, 1.0e9, "between 0 and 1e9 W/m²")?;
            }
            Source::Point(q) => {
                point(&format!("{p}.center"), q.center)?;
                finite(&format!("{p}.direction_deg"), q.direction_deg)?;
                if !q.cone_half_angle_deg.is_finite() || q.cone_half_angle_deg <= 0.0 || q.cone_half_angle_deg > 180.0 {
                    return err(format!("{p}.cone_half_angle_deg"), "must be greater than 0 and at most 180 degrees");
                }
                rays(&format!("{p}.rays"), q.rays)?;
                in_range(&format!("{p}.power_w"), q.power_w, 0.0, 1.0e12, "between 0 and 1e12 W")?;
            }
        }
        total += s.rays();
    }
    if total > MAX_RAYS_TOTAL {
        return err("sources", format!("launch {total} rays in all; at most {MAX_RAYS_TOTAL} are allowed"));
    }
    Ok(())
}
