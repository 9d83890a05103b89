//! Designers and mirror-testing tables for the page: free functions that
//! take the form's values and return small JSON documents (a handful of
//! rows, or a generated layout of a few kilobytes).
//!
//! Each function's JSON is the document the matching command prints with
//! `--json` (`compare`, `zones`, `design two-mirror`, `design off-axis`),
//! plus, where the page needs them, a few extra keys. Errors are `JsError`s
//! whose message starts with the field name the core uses, which is also the
//! page's form field name (`radius: must be greater than 0`,
//! `conics[2]: …`, `csv line 7 (radius): …`); the page splits it at the
//! first `": "` to mark the field.

use crate::design::{
    self, compare::parse_conics, compare_conics, departures_needing_work, design_off_axis, design_two_mirror,
    knife_picture, knife_view, measured_layout, parse_departure_csv, profile_from_readings, ronchi_picture, ronchigram,
    surface_readings, zonal_mask_svg, zone_table, zones_needing_work, KnifeSpec, MirrorPicture, OffAxisSpec, RonchiSpec, TestSource,
    TwoMirrorKind, TwoMirrorSpec,
};
use crate::geometry::Profile;
use crate::InputError;
use serde::Serialize;
use serde_json::{json, Value};
use wasm_bindgen::prelude::*;

/// Points per profile in the conic comparison's departure plot.
const PLOT_POINTS: usize = 81;

fn input_error(e: InputError) -> JsError {
    JsError::new(&e.to_string())
}

fn to_json<T: Serialize>(v: &T) -> Result<String, JsError> {
    serde_json::to_string(v).map_err(|e| JsError::new(&format!("report: {e}")))
}

fn with_extra<T: Serialize>(v: &T, extra: &[(&str, Value)]) -> Result<String, JsError> {
    let mut doc = serde_json::to_value(v).map_err(|e| JsError::new(&format!("report: {e}")))?;
    if let Value::Object(m) = &mut doc {
        for (k, x) in extra {
            m.insert((*k).to_string(), x.clone());
        }
    }
    to_json(&doc)
}

/// A whole count from a form number (field `field`, 1 … `max`).
fn count(field: &str, v: f64, max: usize) -> Result<usize, JsError> {
    if !v.is_finite() || v.fract() != 0.0 || v < 1.0 || v > max as f64 {
        return Err(input_error(InputError::new(field, format!("must be a whole number from 1 to {max} (got {v})"))));
    }
    Ok(v as usize)
}

/// Conic constants side by side: the JSON of `catoptric compare` plus
/// `profiles` — `rho_mm` (radii from the centre to the rim) and, per conic,
/// `departure_um`, the sag minus the vertex sphere's, µm, for the plot.
/// `conics` is the form's text, a comma-separated list.
#[wasm_bindgen]
pub fn compare_conics_json(radius: f64, diameter: f64, conics: &str, wavelength: f64) -> Result<String, JsError> {
    let ks = parse_conics(conics).map_err(input_error)?;
    let c = compare_conics(radius, diameter, &ks, wavelength).map_err(input_error)?;
    let a = 0.5 * c.diameter_mm;
    let rho: Vec<f64> = (0..PLOT_POINTS).map(|i| a * i as f64 / (PLOT_POINTS - 1) as f64).collect();
    let sphere = Profile::conic(Some(c.radius_mm), 0.0);
    let deps: Vec<Vec<f64>> = ks
        .iter()
        .map(|&k| {
            let p = Profile::conic(Some(c.radius_mm), k);
            rho.iter().map(|&r| (p.conic_sag_slope(r).0 - sphere.conic_sag_slope(r).0) * 1e3).collect()
        })
        .collect();
    with_extra(&c, &[("profiles", json!({ "rho_mm": rho, "departure_um": deps }))])
}

/// Zonal mask and knife-edge readings: the JSON of `catoptric zones`.
/// `zones` must be a whole number; `source` is `moving` or `fixed`.
#[wasm_bindgen]
pub fn zone_table_json(
    radius: f64,
    conic: f64,
    diameter: f64,
    zones: f64,
    source: &str,
    wavelength: f64,
) -> Result<String, JsError> {
    let src = TestSource::parse(source).map_err(input_error)?;
    let n = count("zones", zones, design::zones::MAX_ZONES)?;
    let t = zone_table(radius, conic, diameter, n, src, wavelength).map_err(input_error)?;
    to_json(&t)
}

/// A mirror measured with a moving-source knife-edge test. `readings` is
/// flat `[r_mm, reading_mm, r_mm, reading_mm, …]`, radii increasing.
/// Returns `{"zones": [ZoneWork…], "departure": [[ρ, Δz]…] (mm),
/// "departure_pv_um", "layout": {…}}` — the layout of
/// [`measured_layout`], ready to trace.
#[wasm_bindgen]
pub fn measured_readings_json(
    radius: f64,
    conic: f64,
    diameter: f64,
    readings: &[f64],
    tolerance_nm: f64,
) -> Result<String, JsError> {
    if !readings.len().is_multiple_of(2) {
        return Err(JsError::new("readings: give pairs of zone radius and reading"));
    }
    let pairs: Vec<[f64; 2]> = readings.chunks_exact(2).map(|p| [p[0], p[1]]).collect();
    let work = zones_needing_work(radius, conic, diameter, &pairs, tolerance_nm).map_err(input_error)?;
    let knots = profile_from_readings(radius, conic, diameter, &pairs).map_err(input_error)?;
    let layout = measured_layout("Measured mirror (knife-edge readings)", radius, conic, diameter, &knots)
        .map_err(input_error)?;
    to_json(&json!({
        "zones": work,
        "departure": knots,
        "departure_pv_um": pv_um(&knots),
        "layout": layout,
    }))
}

/// A mirror measured as a table of height departures from the design
/// conic (CSV text: radius, departure; see
/// [`crate::design::parse_departure_csv`]). Errors name the line
/// (`csv line 7 (radius): …`). Returns `{"rows": [DepartureWork…],
/// "departure": [[ρ, Δz]…] (mm), "departure_pv_um", "layout": {…}}`.
#[wasm_bindgen]
pub fn measured_csv_json(
    radius: f64,
    conic: f64,
    diameter: f64,
    csv: &str,
    tolerance_nm: f64,
) -> Result<String, JsError> {
    let knots = parse_departure_csv(csv).map_err(input_error)?;
    let rows = departures_needing_work(&knots, tolerance_nm).map_err(input_error)?;
    let layout = measured_layout("Measured mirror (departure table)", radius, conic, diameter, &knots)
        .map_err(input_error)?;
    to_json(&json!({
        "rows": rows,
        "departure": knots,
        "departure_pv_um": pv_um(&knots),
        "layout": layout,
    }))
}

fn pv_um(knots: &[[f64; 2]]) -> f64 {
    let hi = knots.iter().map(|k| k[1]).fold(f64::NEG_INFINITY, f64::max);
    let lo = knots.iter().map(|k| k[1]).fold(f64::INFINITY, f64::min);
    (hi - lo) * 1e3
}

/// Two-mirror telescope: the JSON of `catoptric design two-mirror`
/// (generated layout under `layout`). `kind` is the `--type` spelling.
#[wasm_bindgen]
pub fn two_mirror_json(
    kind: &str,
    diameter: f64,
    primary_focal: f64,
    focal: f64,
    back_focus: f64,
    field_deg: f64,
) -> Result<String, JsError> {
    let spec = TwoMirrorSpec {
        kind: TwoMirrorKind::parse(kind).map_err(input_error)?,
        diameter,
        primary_focal,
        focal,
        back_focus,
        field_deg,
    };
    to_json(&design_two_mirror(&spec).map_err(input_error)?)
}

/// Off-axis paraboloid segment: the JSON of `catoptric design off-axis`.
#[wasm_bindgen]
pub fn off_axis_json(parent_focal: f64, offset: f64, diameter: f64) -> Result<String, JsError> {
    let spec = OffAxisSpec { parent_focal, offset, diameter };
    to_json(&design_off_axis(&spec).map_err(input_error)?)
}

/// Departure knots from a flat `[ρ, Δz, ρ, Δz, …]` (mm); empty is the
/// target mirror.
fn knots(departure: &[f64]) -> Result<Option<Vec<[f64; 2]>>, JsError> {
    if departure.is_empty() {
        return Ok(None);
    }
    if !departure.len().is_multiple_of(2) {
        return Err(JsError::new("measured: give pairs of radius and departure"));
    }
    Ok(Some(departure.chunks_exact(2).map(|p| [p[0], p[1]]).collect()))
}

/// Picture side from a form number.
fn picture_size(size: f64) -> Result<usize, JsError> {
    count("size", size, design::test_stand::MAX_PICTURE_SIZE)
}

/// A simulated test's figures and picture, made in one call: `json()` is
/// the JSON of `catoptric ronchi` or `catoptric knife`, `rgba()` the
/// picture's pixels, `size()` pixels a side. The page frees it once read.
#[wasm_bindgen]
pub struct TestPicture {
    json: String,
    rgba: Vec<u8>,
    size: usize,
}

#[wasm_bindgen]
impl TestPicture {
    pub fn json(&self) -> String {
        self.json.clone()
    }
    pub fn rgba(&self) -> Vec<u8> {
        self.rgba.clone()
    }
    pub fn size(&self) -> usize {
        self.size
    }
}

/// Figures and picture of one simulated test.
fn test_picture<T: Serialize>(
    figures: Result<T, InputError>,
    picture: impl FnOnce(usize) -> Result<MirrorPicture, InputError>,
    size: f64,
) -> Result<TestPicture, JsError> {
    let size = picture_size(size)?;
    let json = to_json(&figures.map_err(input_error)?)?;
    let rgba = picture(size).map_err(input_error)?.rgba();
    Ok(TestPicture { json, rgba, size })
}

/// The simulated Ronchi test: figures and the Ronchigram, `size` pixels a
/// side. `departure` is flat `[ρ, Δz, …]` in mm (empty for the target).
#[wasm_bindgen]
#[allow(clippy::too_many_arguments)]
pub fn ronchi_test(
    radius: f64,
    conic: f64,
    diameter: f64,
    lines_per_mm: f64,
    offset_mm: f64,
    source: &str,
    departure: &[f64],
    size: f64,
) -> Result<TestPicture, JsError> {
    let source = TestSource::parse(source).map_err(input_error)?;
    let measured = knots(departure)?;
    let spec = RonchiSpec { radius, conic, diameter, lines_per_mm, offset_mm, source, measured: measured.as_deref() };
    test_picture(ronchigram(&spec), |n| ronchi_picture(&spec, n), size)
}

/// The simulated knife-edge test: figures and the picture (arguments as
/// [`ronchi_test`], the knife at `knife_mm` with its edge at `knife_x_mm`).
#[wasm_bindgen]
#[allow(clippy::too_many_arguments)]
pub fn knife_test(
    radius: f64,
    conic: f64,
    diameter: f64,
    knife_mm: f64,
    knife_x_mm: f64,
    source: &str,
    departure: &[f64],
    size: f64,
) -> Result<TestPicture, JsError> {
    let source = TestSource::parse(source).map_err(input_error)?;
    let measured = knots(departure)?;
    let spec = KnifeSpec { radius, conic, diameter, knife_mm, knife_x_mm, source, measured: measured.as_deref() };
    test_picture(knife_view(&spec), |n| knife_picture(&spec, n), size)
}

/// Moving-source readings at radii `rs` of the target (empty `departure`)
/// or the measured mirror, mm from the vertex centre of curvature.
#[wasm_bindgen]
pub fn surface_readings_mm(radius: f64, conic: f64, diameter: f64, departure: &[f64], rs: &[f64]) -> Result<Vec<f64>, JsError> {
    let measured = knots(departure)?;
    surface_readings(radius, conic, diameter, measured.as_deref(), rs).map_err(input_error)
}

/// The zonal mask template, SVG at 1:1 scale in mm.
#[wasm_bindgen]
pub fn zonal_mask_svg_text(diameter: f64, zones: f64) -> Result<String, JsError> {
    let n = count("zones", zones, design::zones::MAX_ZONES)?;
    zonal_mask_svg(diameter, n).map_err(input_error)
}
