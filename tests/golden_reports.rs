//! Stored expected values: the `trace --json` report (docs/FORMATS.md §3)
//! of a few small deterministic layouts, kept in tests/golden/*.json and
//! compared key by key, numbers to 1e-9 relative, plus an absolute floor
//! for values that are zero up to rounding (1e-6 µm, 1e-9 mm, 1e-8 waves,
//! 1e-12 otherwise). Any change to a reported figure shows up here, even
//! where no formula pins it down. The screens stand off the focus, so no
//! spot is a point sitting on a flux-pixel corner, where rounding alone
//! could move rays between pixels.
//!
//! Each stored report was reviewed once against outside formulas, and
//! those checks run on the stored file every time (`review_*` below), so
//! a regenerated file that drifts from the physics is refused too.
//!
//! To regenerate after an intended change: `CATOPTRIC_BLESS=1 cargo test
//! --test golden_reports`, then review the diff.

mod analysis_support;
use analysis_support::*;
use catoptric::analysis::trace_report;
use serde_json::Value;

const REL: f64 = 1e-9;

/// Absolute floor for a key, by its unit.
fn floor(key: &str) -> f64 {
    if key.ends_with("_um") {
        1e-6
    } else if key.ends_with("_mm") {
        1e-9
    } else if key.ends_with("_waves") {
        1e-8
    } else {
        1e-12
    }
}

fn path(name: &str) -> String {
    format!("{}/tests/golden/{name}.json", env!("CARGO_MANIFEST_DIR"))
}

/// Differences between two JSON documents, as "path: got vs want" lines;
/// `key` is the nearest object key (it names the unit).
fn diff(got: &Value, want: &Value, at: &str, key: &str, out: &mut Vec<String>) {
    match (got, want) {
        (Value::Number(a), Value::Number(b)) => {
            let (a, b) = (a.as_f64().unwrap(), b.as_f64().unwrap());
            if (a - b).abs() > REL * b.abs() + floor(key) {
                out.push(format!("{at}: {a} vs {b}"));
            }
        }
        (Value::Array(a), Value::Array(b)) if a.len() == b.len() => {
            for (i, (x, y)) in a.iter().zip(b).enumerate() {
                diff(x, y, &format!("{at}[{i}]"), key, out);
            }
        }
        (Value::Object(a), Value::Object(b)) if a.keys().eq(b.keys()) => {
            for (k, x) in a {
                diff(x, &b[k], &format!("{at}.{k}"), k, out);
            }
        }
        (a, b) if a == b => {}
        (a, b) => out.push(format!("{at}: {a} vs {b}")),
    }
}

/// Traces `text`, compares its report with the stored one (or stores it
/// when blessing) and returns the stored report for review.
fn golden(name: &str, text: &str) -> Value {
    let (scene, res) = run(text);
    let got = serde_json::to_value(trace_report(&scene, &res)).unwrap();
    if std::env::var_os("CATOPTRIC_BLESS").is_some() {
        std::fs::write(path(name), serde_json::to_string_pretty(&got).unwrap() + "\n").unwrap();
    }
    let stored = std::fs::read_to_string(path(name)).unwrap_or_else(|e| panic!("{}: {e}", path(name)));
    let want: Value = serde_json::from_str(&stored).unwrap();
    let mut out = Vec::new();
    diff(&got, &want, name, "", &mut out);
    assert!(out.is_empty(), "report differs from {}:\n{}", path(name), out.join("\n"));
    want
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

#[test]
fn paraboloid_f5_off_axis_star_at_632_8_nm() {
    // 200 mm f/5 paraboloid (vertex z = 1000, focus z = 0), a star 0.2°
    // out of the layout plane, He-Ne wavelength, the screen 2 mm short of
    // the focus.
    let (f, n, alpha, lambda) = (1000.0f64, 5.0f64, 0.2f64, 632.8e-6f64);
    let text = layout(
        &[mirror("m", 1000.0, 2000.0, -1.0, 200.0, None), screen("s", 0.0, 2.0, 20.0, "square", false)],
        &[beam("star", 0.0, 500.0, 210.0, 4000, "hex", 0.0)],
    )
    .replace("\"wavelength_nm\": 550,", "\"wavelength_nm\": 632.8,")
    .replace("\"direction_deg\": 0,", &format!("\"direction_deg\": 0, \"out_of_plane_deg\": {alpha},"));
    assert!(text.contains("632.8") && text.contains("out_of_plane_deg"));
    let r = golden("paraboloid_f5_off_axis", &text);
    let b = &r["screens"][0]["by_source"][0];
    // Third-order coma with the stop at the mirror (Schroeder, Astronomical
    // Optics, 2nd ed., ch. 5, value from memory): sagittal coma
    // S = θf/(16N²), W131 = θf/(32N³), RMS with tilt removed W131/√72
    // (as in analysis_edge_cases.rs); Strehl exp(−(2πσ)²) (Mahajan, JOSA
    // 72, 1258 (1982)).
    let theta = alpha.to_radians();
    let rms = num(&b["wavefront_rms_waves"]);
    let want = theta * f / (32.0 * n.powi(3)) / 72f64.sqrt() / lambda;
    assert!(rel(rms, want) < 0.03, "RMS {rms} vs {want} waves");
    assert!(rel(num(&b["strehl_estimate"]), (-(std::f64::consts::TAU * rms).powi(2)).exp()) < 1e-12);
    // Least-RMS plane at the medial focus, z ≈ f cos θ from the vertex
    // (Coddington's equations for a mirror, value from memory): the screen
    // at 2 mm from the focus must move (2 − f(1 − cos θ)) mm away from the
    // light; allow S/10.
    let s_coma = theta * f / (16.0 * n * n);
    let shift = -(2.0 - f * (1.0 - theta.cos()));
    assert!((num(&b["best_focus_shift_mm"]) - shift).abs() < 0.1 * s_coma, "{} vs {shift}", b["best_focus_shift_mm"]);
    // Working f-number 1/(2 sin θm), sin θm = 100/1002.5 on axis
    // (focus–directrix), little changed at 0.2°; Airy radius 1.22 λN
    // (Born & Wolf, 7th ed., value from memory).
    let nw = num(&b["f_number"]);
    assert!(rel(nw, 1002.5 / 200.0) < 5e-3, "N {nw}");
    assert!(rel(num(&b["airy_radius_um"]), 1.22 * lambda * 1e3 * nw) < 1e-12);
    // The mirror takes irradiance × its aperture area (1000 W/m², 200 mm;
    // the beam is wider), all of it reaching the screen; the hex cells,
    // ~3.2 mm across, make the rim ragged by up to half a cell (1.6 % of
    // the area at most).
    let power = 1000.0 * std::f64::consts::PI * 0.1f64.powi(2);
    assert!(rel(num(&b["power_w"]), power) < 0.016, "{}", b["power_w"]);
}

#[test]
fn sphere_f8_spherical_aberration() {
    // f/8 sphere, D = 150 mm, R = 2400 mm, screen at the paraxial focus.
    let (d, big_r, n) = (150.0f64, 2400.0f64, 8.0f64);
    let text = layout(
        &[mirror("m", 2000.0, big_r, 0.0, d, None), screen("s", 0.0, 800.0, 10.0, "square", false)],
        &[beam("star", 0.0, 1000.0, d, 4000, "hex", 0.0)],
    );
    let r = golden("sphere_f8", &text);
    let b = &r["screens"][0]["by_source"][0];
    // Third-order spherical aberration (value from memory, re-derived from
    // the ρ⁴ term of the circle's series): W040 = D/(512 N³); with defocus
    // removed the RMS is W040/(6√5), P-V W040/4.
    let w040 = d / (512.0 * n.powi(3)) / 550e-6;
    assert!(rel(num(&b["wavefront_rms_waves"]), w040 / (6.0 * 5f64.sqrt())) < 0.03, "{}", b["wavefront_rms_waves"]);
    assert!(rel(num(&b["wavefront_pv_waves"]), w040 / 4.0) < 0.03, "{}", b["wavefront_pv_waves"]);
    // Least-RMS spot 2/3 of the way from the paraxial to the marginal
    // focus (third order, as in analysis_focus.rs), LSA = a²/(4R),
    // positive: toward the mirror.
    let lsa = (0.5 * d).powi(2) / (4.0 * big_r);
    assert!(rel(num(&b["best_focus_shift_mm"]), 2.0 / 3.0 * lsa) < 0.03, "{}", b["best_focus_shift_mm"]);
    // Strehl exp(−(2πσ)²) (Mahajan, JOSA 72, 1258 (1982)).
    let s = (-(std::f64::consts::TAU * num(&b["wavefront_rms_waves"])).powi(2)).exp();
    assert!(rel(num(&b["strehl_estimate"]), s) < 1e-12);
}

#[test]
fn solar_dish_with_a_rabl_receiver() {
    // A paraboloidal dish of rim angle 45° (focal length 1000, vertex at
    // z = 1000) under the mean sun (4.65 mrad, common practice), with a
    // flat circular receiver at the focus sized to the rim's sun image,
    // radius ρ_rim sin θs / cos(φ + θs), ρ_rim = 2F/(1 + cos φ) (Rabl,
    // Solar Energy 18, 93–111 (1976), value from memory; as in
    // analysis_flux.rs). The receiver shades the dish's centre.
    let (f, theta_s, phi) = (1000.0f64, 4.65e-3f64, 45f64.to_radians());
    let rim = 2.0 * f / (1.0 + phi.cos());
    let a = rim * phi.sin();
    let r = rim * theta_s.sin() / (phi + theta_s).cos();
    let text = layout(
        &[mirror("dish", f, 2.0 * f, -1.0, 2.0 * a, None), screen("receiver", 0.0, 0.0, 2.0 * r, "circle", true)],
        &[beam("sun", 0.0, -50.0, 2.0 * a + 40.0, 4000, "random", 4.65)],
    );
    let rep = golden("solar_dish", &text);
    let sc = &rep["screens"][0];
    // An extended source has no single wavefront (docs/FORMATS.md §3).
    assert!(sc["by_source"][0]["wavefront_rms_waves"].is_null() && sc["by_source"][0]["strehl_estimate"].is_null());
    // Every reflected ray lands on the receiver: the intercept is the
    // dish's unshaded share of the beam, (a² − r²)/(a + 20)²; the mean
    // concentration Rabl's sin²φ cos²(φ+θs)/sin²θs − 1 (sampling with 4000
    // rays: 2 %); peak suns are the peak flux over the 1000 W/m² incident
    // (docs/FORMATS.md §3). (With 4000 rays the binned peak is too noisy
    // to hold against the 3-D limit 1/sin²θs; analysis_flux.rs does that
    // with enough rays per pixel.)
    let intercept = (a * a - r * r) / (a + 20.0).powi(2);
    assert!(rel(num(&sc["flux"]["intercept"]), intercept) < 0.02, "{} vs {intercept}", sc["flux"]["intercept"]);
    let c = phi.sin().powi(2) * (phi + theta_s).cos().powi(2) / theta_s.sin().powi(2) - 1.0;
    assert!(rel(num(&sc["flux"]["mean_w_m2"]) / 1000.0, c) < 0.02, "{} vs {c}", sc["flux"]["mean_w_m2"]);
    assert!(rel(num(&sc["flux"]["peak_suns"]), num(&sc["flux"]["peak_w_m2"]) / 1000.0) < 1e-12);
}
