//! Closed-form designers and mirror-testing tables; each designer emits a
//! validated [`Layout`] that the tracer can confirm.
//!
//! * [`two_mirror`]: Cassegrain, Ritchey–Chrétien, Dall–Kirkham, Gregorian
//!   and aplanatic Gregorian telescopes from focal lengths and back focus.
//! * [`off_axis`]: an off-axis paraboloid segment (and the offset-fed dish).
//! * [`compare`]: conic constants side by side — sag, departure from the
//!   vertex sphere, exact wavefront at best focus, best-fit sphere.
//! * [`zones`]: zonal mask and knife-edge readings (moving or fixed source)
//!   for a centre-of-curvature test, glass to remove per zone.
//! * [`measured`]: a mirror built from measured readings or a departure
//!   table, and which zones need work.
//! * [`ronchi`] and [`knife`]: the Ronchi and knife-edge tests simulated
//!   on the [`test_stand`] (exact 3D trace; band edges, null zone, lit
//!   fraction, pictures), for the target or a measured mirror.
//! * [`mask`]: the zonal mask template as SVG at 1:1 scale.
//! * [`tolerance`]: a seeded Monte Carlo of making and alignment errors
//!   and a sensitivity table; [`optimise`]: damped least squares over
//!   layout fields named by path; [`merit`]: the figures both measure.
//!
//! Errors are [`InputError`]s whose `field` is the snake_case name of the
//! offending parameter (`back_focus`, `conics[2]`, `csv line 7`); front ends
//! translate them to their own spelling (`--back-focus`).

pub mod compare;
pub mod knife;
pub mod mask;
pub mod measured;
pub mod merit;
pub mod optimise;
pub mod off_axis;
pub mod ronchi;
pub mod test_stand;
pub mod tolerance;
pub mod two_mirror;
pub mod zones;

pub use compare::{
    best_fit_sphere, collimated_wavefront, compare_conics, conic_tolerance_quarter_wave, sphere_fastest_f_ratio,
    BestFitSphere, Comparison, ConicRow, Wavefront,
};
pub use measured::{
    departures_needing_work, measured_layout, measured_mirror, parse_departure_csv, profile_from_readings, zones_needing_work, DepartureWork, ZoneVerdict,
    ZoneWork,
};
pub use knife::{knife_picture, knife_view, surface_readings, KnifeSpec, KnifeView};
pub use mask::zonal_mask_svg;
pub use off_axis::{design_off_axis, Feed, OffAxisDesign, OffAxisSpec};
pub use ronchi::{ronchi_picture, ronchigram, RonchiSpec, Ronchigram};
pub use test_stand::MirrorPicture;
pub use two_mirror::{design_two_mirror, two_mirror_conics, TwoMirrorDesign, TwoMirrorKind, TwoMirrorSpec};
pub use zones::{
    fixed_source_reading, moving_source_reading, zone_edges, zone_table, TestSource, Zone, ZoneTable,
};

use crate::error::{InputError, Num};
use crate::geometry::Profile;
use crate::layout::{validate, Beam, Element, Layout, Pattern, Source, FORMAT_TAG, FORMAT_VERSION};

/// Wavelength of generated layouts and the default test wavelength, nm.
pub const DEFAULT_WAVELENGTH_NM: f64 = 550.0;
/// Rays per beam in generated layouts.
pub const LAYOUT_RAYS: u64 = 20_000;
/// Largest length the layout accepts (10 km), from the validator.
pub(crate) const MAX_MM: f64 = crate::layout::MAX_LENGTH_MM;
/// Smallest length (diameter, radius, focal length) the designers take,
/// the layout's smallest size.
pub(crate) const MIN_MM: f64 = crate::layout::MIN_LENGTH_MM;
use crate::layout::DOMAIN_MARGIN;

pub(crate) fn bad(field: &str, message: impl Into<String>) -> InputError {
    InputError::new(field, message)
}

/// A finite value of sensible magnitude.
pub(crate) fn finite(field: &str, v: f64) -> Result<f64, InputError> {
    if !v.is_finite() {
        return Err(bad(field, format!("must be a finite number (got {v})")));
    }
    if v.abs() > MAX_MM {
        return Err(bad(field, format!("magnitude must be at most {MAX_MM:e} (got {})", Num(v))));
    }
    Ok(v)
}

/// A length greater than 0: finite, at least [`MIN_MM`].
pub(crate) fn positive(field: &str, v: f64) -> Result<f64, InputError> {
    finite(field, v)?;
    if v <= 0.0 {
        return Err(bad(field, format!("must be greater than 0 (got {})", Num(v))));
    }
    if v < MIN_MM {
        return Err(bad(field, format!("must be at least {MIN_MM:e} mm (got {})", Num(v))));
    }
    Ok(v)
}

/// Refuses a result that came out infinite or NaN: the parameters are
/// within their ranges but too extreme together for the arithmetic. The
/// field named is the one to change; `what` names the result.
pub(crate) fn finite_result(field: &str, what: &str, values: &[f64]) -> Result<(), InputError> {
    if values.iter().all(|v| v.is_finite()) {
        return Ok(());
    }
    Err(bad(field, format!("gives a {what} that is not a finite number; these parameters are too extreme together")))
}

/// Wavelength in nm, checked like a layout's `wavelength_nm`.
pub(crate) fn wavelength(field: &str, nm: f64) -> Result<f64, InputError> {
    if !nm.is_finite() || !(100.0..=100_000.0).contains(&nm) {
        return Err(bad(field, format!("must be between 100 and 100000 nm (got {})", Num(nm))));
    }
    Ok(nm)
}

/// Checks that a concave conic of vertex radius `radius` and conic `conic`
/// reaches the semi-diameter `a` (its sag formula stays real, with margin).
pub(crate) fn conic_reaches(field: &str, radius: f64, conic: f64, a: f64) -> Result<(), InputError> {
    let c = 1.0 / radius;
    if (1.0 + conic) * c * c * a * a >= DOMAIN_MARGIN {
        let limit = 1.0 / (c.abs() * (1.0 + conic).sqrt());
        return Err(bad(
            field,
            format!(
                "a conic with R = {} mm and K = {} ends at ρ = {} mm; the semi-diameter {} mm must stay below that: use a smaller diameter or conic constant",
                Num(radius),
                Num(conic),
                Num(limit),
                Num(a)
            ),
        ));
    }
    Ok(())
}

/// Sag and slope of a conic meridian (exact).
#[inline]
pub(crate) fn conic_sag_slope(radius: f64, conic: f64, rho: f64) -> (f64, f64) {
    Profile::conic(Some(radius), conic).conic_sag_slope(rho)
}

/// Sag of a conic meridian (exact).
#[inline]
pub(crate) fn conic_sag(radius: f64, conic: f64, rho: f64) -> f64 {
    conic_sag_slope(radius, conic, rho).0
}

/// A layout shell with the defaults designers use.
pub(crate) fn new_layout(name: String, notes: String, elements: Vec<Element>, sources: Vec<Source>) -> Layout {
    Layout {
        format: FORMAT_TAG.to_string(),
        version: FORMAT_VERSION,
        name,
        notes,
        wavelength_nm: DEFAULT_WAVELENGTH_NM,
        max_bounces: 16,
        elements,
        sources,
        site: None,
    }
}

/// Validates a generated layout. A failure means the parameters produced
/// an impossible geometry; it is reported under `layout.<field>`.
pub(crate) fn checked(layout: Layout) -> Result<Layout, InputError> {
    validate(&layout).map_err(|e| {
        InputError::new(
            format!("layout.{}", e.field),
            format!("these parameters give an invalid layout: {}", e.message),
        )
    })?;
    Ok(layout)
}

/// Rounds up to a multiple of `step`, for tidy screen sizes and beam
/// distances. Values that drive the optics (radii, conics, vertex
/// positions) are never rounded.
pub(crate) fn tidy(v: f64, step: f64) -> f64 {
    (v / step).ceil() * step
}

/// The collimated test beam (a star: no solar disk, 1000 W/m²) every
/// designer puts in its layout.
pub(crate) fn star_beam(id: &str, center: [f64; 2], direction_deg: f64, diameter: f64) -> Source {
    Source::Beam(Beam {
        id: id.to_string(),
        center,
        direction_deg,
        out_of_plane_deg: 0.0,
        diameter,
        rays: LAYOUT_RAYS,
        pattern: Pattern::Hex,
        sun_half_angle_mrad: 0.0,
        irradiance_w_m2: 1000.0,
        sunshape: Default::default(),
        csr: 0.0,
    })
}

/// Weighted least squares of y ≈ p + q·x over (w, x, y) samples; returns
/// (p, q), with q = 0 when the xs do not spread (a single zone). Used with
/// x = ρ² to take piston and focus out of a surface departure.
pub(crate) fn fit_piston_focus(samples: impl Iterator<Item = (f64, f64, f64)>) -> (f64, f64) {
    let (mut sw, mut sx, mut sxx, mut sy, mut sxy) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for (w, x, y) in samples {
        sw += w;
        sx += w * x;
        sxx += w * x * x;
        sy += w * y;
        sxy += w * x * y;
    }
    let det = sw * sxx - sx * sx;
    let q = if det.abs() > 1e-30 * sxx.max(1.0) { (sw * sxy - sx * sy) / det } else { 0.0 };
    (if sw > 0.0 { (sy - q * sx) / sw } else { 0.0 }, q)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn piston_and_focus_fit_is_weighted_least_squares() {
        // Weighted least squares of a line by its normal equations (common
        // practice): exact data y = 2 + 3x come back exactly, also with
        // weights summing to 1 and x spread below 1; samples at one x only
        // give the weighted mean and no slope; no weight at all gives
        // (0, 0).
        let (p, q) = fit_piston_focus([(0.2, 0.0, 2.0), (0.5, 0.5, 3.5), (0.3, 1.0, 5.0)].into_iter());
        assert!((p - 2.0).abs() < 1e-12 && (q - 3.0).abs() < 1e-12, "p = {p}, q = {q}");
        let (p, q) = fit_piston_focus([(1.0, 0.4, 1.0), (3.0, 0.4, 2.0)].into_iter());
        assert_eq!(q, 0.0);
        assert!((p - 1.75).abs() < 1e-15, "p = {p}");
        assert_eq!(fit_piston_focus([(0.0, 1.0, 5.0)].into_iter()), (0.0, 0.0));
    }

    #[test]
    fn values_and_results_are_held_to_their_limits() {
        // The design commands' own input rules, each side of each bound
        // (common practice): a value is finite with |v| ≤ MAX_MM, and a
        // result with any value not finite is refused, naming the field
        // to change and the result.
        assert_eq!(finite("x", MAX_MM).expect("the largest allowed"), MAX_MM);
        assert_eq!(finite("x", -MAX_MM).expect("the most negative allowed"), -MAX_MM);
        assert_eq!(finite("x", 2.0 * MAX_MM).unwrap_err().field, "x");
        assert_eq!(finite("x", f64::NAN).unwrap_err().field, "x");
        assert!(finite_result("d", "mirror", &[1.0, -2.0, 0.0]).is_ok());
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            let e = finite_result("d", "mirror", &[1.0, bad]).unwrap_err();
            assert_eq!(e.field, "d");
            assert!(e.message.contains("mirror"), "{}", e.message);
        }
    }
}
