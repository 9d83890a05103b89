//! Value checks on a parsed layout. The first problem found is reported
//! with its field path and the allowed range.

use super::{Element, Form, Layout, Source};
use crate::error::{InputError, Num};
use crate::geometry::{NaturalSpline, Profile};
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
/// Also the largest sag a mirror may reach at its rim.
pub const MAX_LENGTH_MM: f64 = 1.0e7;
/// Smallest size (aperture diameter, extruded length, screen size, beam
/// diameter) and smallest step between departure knots, mm (1 nm): areas,
/// curvatures and flux densities stay finite and positive.
pub const MIN_LENGTH_MM: f64 = 1.0e-6;
/// Longest `notes`, bytes of UTF-8 (64 KiB).
pub const MAX_NOTES_BYTES: usize = 64 * 1024;
/// Longest `name`, characters.
pub const MAX_NAME_LEN: usize = 200;
/// Most even aspheric coefficients (A4 … A20).
pub const MAX_ASPHERIC_TERMS: usize = 9;
/// Most knots in a departure spline.
pub const MAX_KNOTS: usize = 512;
/// Longest id, characters.
pub const MAX_ID_LEN: usize = 64;
/// Largest fraction of a conic's domain an aperture may use: the sag
/// formula's square root must stay clear of zero, (1+K)c²ρ² ≤ this.
pub const DOMAIN_MARGIN: f64 = 1.0 - 1e-9;
/// Largest mirror slope error σ, mrad: 100 mrad (about 6°) is far past
/// any usable surface; the perturbation model (small tilts of the normal)
/// means nothing beyond it.
pub const MAX_SLOPE_ERROR_MRAD: f64 = 100.0;
/// Largest circumsolar ratio: the Buie et al. (2003) profiles were fitted
/// to measured skies up to about this.
pub const MAX_CSR: f64 = 0.4;

type R = Result<(), InputError>;

fn err(field: impl Into<String>, msg: impl Into<String>) -> R {
    Err(InputError::new(field, msg))
}

fn finite(field: &str, v: f64) -> R {
    if !v.is_finite() {
        return err(field, "must be a finite number");
    }
    if v.abs() > MAX_LENGTH_MM {
        return err(field, format!("magnitude must be at most {MAX_LENGTH_MM:e} (got {})", Num(v)));
    }
    Ok(())
}

/// A size: finite, at least [`MIN_LENGTH_MM`].
fn size(field: &str, v: f64) -> R {
    finite(field, v)?;
    if v <= 0.0 {
        return err(field, format!("must be greater than 0 (got {})", Num(v)));
    }
    if v < MIN_LENGTH_MM {
        return err(field, format!("must be at least {MIN_LENGTH_MM:e} mm (got {})", Num(v)));
    }
    Ok(())
}

/// The area of a square of side `d` or a circle of diameter `d`, mm²,
/// which must be positive and finite (flux densities divide by it).
fn area(field: &str, d: f64, circle: bool) -> R {
    let a = if circle { std::f64::consts::FRAC_PI_4 * d * d } else { d * d };
    if !(a.is_finite() && a > 0.0) {
        return err(field, format!("gives an area of {} mm²; it must be positive and finite", Num(a)));
    }
    Ok(())
}

fn in_range(field: &str, v: f64, lo: f64, hi: f64, what: &str) -> R {
    if !v.is_finite() || v < lo || v > hi {
        return err(field, format!("must be {what} (got {})", Num(v)));
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

/// The conic part of a profile (R finite and non-zero, K in range) at the
/// rim ρ = `rho`: a finite curvature, (1+K)c²ρ² finite and inside the
/// domain, a finite sag of sensible size.
fn conic_part(p: &str, r: f64, k: f64, rho: f64) -> R {
    let rf = format!("{p}.profile.radius");
    let c = 1.0 / r;
    if !c.is_finite() {
        return err(rf, format!("is too small (got {}): the curvature 1/R overflows", Num(r)));
    }
    // (cρ)² first: for K = −1 an overflow would give 0 × ∞ = NaN.
    let q = (1.0 + k) * ((c * rho) * (c * rho));
    if !q.is_finite() {
        return err(rf, format!("is too small for this aperture (got {}): (1+K)c²ρ² overflows at the rim ρ = {} mm", Num(r), Num(rho)));
    }
    if q >= DOMAIN_MARGIN {
        let limit = if k > -1.0 { 1.0 / (c.abs() * (1.0 + k).sqrt()) } else { f64::INFINITY };
        return err(
            format!("{p}.aperture.diameter"),
            format!(
                "reaches ρ = {} mm, past the conic's domain (the surface ends at ρ = {} mm for R = {}, K = {}); make the aperture smaller or the conic constant smaller",
                Num(rho),
                Num(limit),
                Num(r),
                Num(k)
            ),
        );
    }
    let sag = Profile::conic(Some(r), k).conic_sag_slope(rho).0;
    if !(sag.is_finite() && sag.abs() <= MAX_LENGTH_MM) {
        return err(rf, format!("gives a sag of {} mm at the rim ρ = {} mm; at most {MAX_LENGTH_MM:e} mm", Num(sag), Num(rho)));
    }
    Ok(())
}

/// Even aspheric terms (each finite): Σ|A₂ᵢ|ρ²ⁱ, a bound on their sag
/// anywhere inside the rim, at most [`MAX_LENGTH_MM`].
fn aspheric_part(p: &str, coeffs: &[f64], rho: f64) -> R {
    let r2 = rho * rho;
    let (mut power, mut bound) = (r2 * r2, 0.0f64);
    for (j, &a) in coeffs.iter().enumerate() {
        let f = format!("{p}.profile.aspheric[{j}]");
        if a != 0.0 {
            bound += a.abs() * power;
            if !(bound.is_finite() && bound <= MAX_LENGTH_MM) {
                return err(
                    f,
                    format!("is too large (got {}): the aspheric terms reach {} mm at the rim ρ = {} mm; at most {MAX_LENGTH_MM:e} mm", Num(a), Num(bound), Num(rho)),
                );
            }
        }
        power *= r2;
    }
    Ok(())
}

/// Departure knots: finite, ρ increasing by at least [`MIN_LENGTH_MM`]
/// (ρ ≥ 0 when revolved), and a finite departure of sensible size at the
/// rim, where the spline continues along its end tangent.
fn departure_part(p: &str, knots: &[[f64; 2]], form: Form, rho: f64) -> R {
    let kp = format!("{p}.profile.departure");
    if knots.len() < 2 || knots.len() > MAX_KNOTS {
        return err(kp, format!("needs between 2 and {MAX_KNOTS} knots [rho, dz]"));
    }
    for (j, k) in knots.iter().enumerate() {
        finite(&format!("{kp}[{j}][0]"), k[0])?;
        finite(&format!("{kp}[{j}][1]"), k[1])?;
        if form == Form::Revolved && k[0] < 0.0 {
            return err(format!("{kp}[{j}][0]"), "rho must be at least 0 on a revolved mirror");
        }
        if j > 0 && k[0] <= knots[j - 1][0] {
            return err(format!("{kp}[{j}][0]"), "rho must be strictly increasing from knot to knot");
        }
        if j > 0 && k[0] - knots[j - 1][0] < MIN_LENGTH_MM {
            return err(format!("{kp}[{j}][0]"), format!("rho must increase by at least {MIN_LENGTH_MM:e} mm from knot to knot"));
        }
    }
    let spline = match form {
        Form::Revolved => NaturalSpline::even(knots),
        Form::Extruded => NaturalSpline::new(knots),
    };
    let Some(spline) = spline else {
        return err(kp, "cannot be interpolated");
    };
    for at in [-rho, rho] {
        let dz = spline.eval(at).0;
        if !(dz.is_finite() && dz.abs() <= MAX_LENGTH_MM) {
            return err(
                kp,
                format!("reaches {} mm at the rim ρ = {} mm (the spline continues along its end tangent); at most {MAX_LENGTH_MM:e} mm", Num(dz), Num(at)),
            );
        }
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
    if l.name.chars().count() > MAX_NAME_LEN {
        return err("name", format!("must be at most {MAX_NAME_LEN} characters"));
    }
    if l.notes.len() > MAX_NOTES_BYTES {
        return err("notes", format!("must be at most {} KiB (got {} bytes)", MAX_NOTES_BYTES / 1024, l.notes.len()));
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
                    (Form::Extruded, Some(len)) => size(&format!("{p}.length"), len)?,
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
                size(&format!("{p}.aperture.diameter"), a.diameter)?;
                finite(&format!("{p}.aperture.offset"), a.offset)?;
                finite(&format!("{p}.aperture.hole"), a.hole)?;
                if a.hole < 0.0 || a.hole >= a.diameter {
                    return err(
                        format!("{p}.aperture.hole"),
                        format!("must be at least 0 and less than the diameter {} (got {})", Num(a.diameter), Num(a.hole)),
                    );
                }
                let rho_max = a.offset.abs() + 0.5 * a.diameter;
                if let Some(r) = pr.radius {
                    conic_part(&p, r, pr.conic, rho_max)?;
                }
                aspheric_part(&p, &pr.aspheric, rho_max)?;
                if let Some(knots) = &pr.departure {
                    departure_part(&p, knots, m.form, rho_max)?;
                }
                in_range(&format!("{p}.reflectivity"), m.reflectivity, 0.0, 1.0, "between 0 and 1")?;
                in_range(
                    &format!("{p}.slope_error_mrad"),
                    m.slope_error_mrad,
                    0.0,
                    MAX_SLOPE_ERROR_MRAD,
                    &format!("between 0 and {MAX_SLOPE_ERROR_MRAD} mrad"),
                )?;
            }
            Element::Screen(s) => {
                point(&format!("{p}.center"), s.center)?;
                finite(&format!("{p}.axis_deg"), s.axis_deg)?;
                size(&format!("{p}.size"), s.size)?;
                area(&format!("{p}.size"), s.size, s.shape == super::ScreenShape::Circle)?;
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
                size(&format!("{p}.diameter"), b.diameter)?;
                area(&format!("{p}.diameter"), b.diameter, true)?;
                rays(&format!("{p}.rays"), b.rays)?;
                in_range(&format!("{p}.sun_half_angle_mrad"), b.sun_half_angle_mrad, 0.0, 200.0, "between 0 and 200 mrad (4.65 is the mean sun)")?;
                in_range(&format!("{p}.irradiance_w_m2"), b.irradiance_w_m2, 0.0, 1.0e9, "between 0 and 1e9 W/m²")?;
                sun_part(&p, b)?;
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
    if let Some(site) = &l.site {
        site_part(site)?;
    }
    Ok(())
}

/// A sun beam's shape: `limb` and `csr` need a sun (half-angle > 0);
/// `csr` is 0 … [`MAX_CSR`] and only for the `csr` shape.
fn sun_part(p: &str, b: &super::Beam) -> R {
    use super::Sunshape;
    if b.sunshape != Sunshape::Disk && b.sun_half_angle_mrad <= 0.0 {
        return err(format!("{p}.sunshape"), "needs a sun: set sun_half_angle_mrad above 0 (4.65 is the mean sun)");
    }
    in_range(&format!("{p}.csr"), b.csr, 0.0, MAX_CSR, &format!("between 0 and {MAX_CSR}"))?;
    if b.csr != 0.0 && b.sunshape != Sunshape::Csr {
        return err(format!("{p}.csr"), "only allowed when sunshape is \"csr\"");
    }
    Ok(())
}

/// The site: latitude ±90°, longitude ±180°, a finite bearing, an
/// elevation between the Dead Sea shore and well above Everest.
fn site_part(s: &super::Site) -> R {
    in_range("site.latitude_deg", s.latitude_deg, -90.0, 90.0, "between -90 and 90 degrees")?;
    in_range("site.longitude_deg", s.longitude_deg, -180.0, 180.0, "between -180 and 180 degrees")?;
    in_range("site.z_bearing_deg", s.z_bearing_deg, -360.0, 360.0, "between -360 and 360 degrees")?;
    in_range("site.elevation_m", s.elevation_m, -500.0, 10_000.0, "between -500 and 10000 m")?;
    Ok(())
}
