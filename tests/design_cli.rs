//! The `design`, `compare` and `zones` commands: JSON keys of the contract
//! (docs/FORMATS.md §3), numbers worked independently from the published
//! closed forms named beside each check, and bad input refused with exit
//! code 2 and nothing on stdout.

use serde_json::Value;
use std::process::Command;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_catoptric")).args(args).output().expect("runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn json(args: &[&str]) -> Value {
    let (code, out, err) = run(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    serde_json::from_str(&out).expect("JSON on stdout")
}

fn has_keys(v: &Value, keys: &[&str]) {
    for k in keys {
        assert!(v.get(k).is_some(), "missing key {k} in {v}");
    }
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

#[test]
fn two_mirror_json_contract() {
    // Computed independently of this code from the closed forms of
    // Schroeder, Astronomical Optics, 2nd ed. (2000), ch. 6 (from memory).
    let v = json(&[
        "design", "two-mirror", "--type", "ritchey-chretien", "--diameter", "300", "--primary-focal", "1200",
        "--focal", "3200", "--back-focus", "250", "--field-deg", "0.2", "--json",
    ]);
    has_keys(&v, &["type", "focal_mm", "magnification", "separation_mm", "back_focus_mm", "primary", "secondary", "layout"]);
    has_keys(&v["primary"], &["radius_mm", "conic", "diameter_mm", "hole_mm"]);
    has_keys(&v["secondary"], &["radius_mm", "conic", "diameter_mm"]);
    assert_eq!(v["type"], "ritchey-chretien");
    assert!(rel(v["separation_mm"].as_f64().unwrap(), 804.545) < 1e-6);
    assert!(rel(v["primary"]["conic"].as_f64().unwrap(), -1.138242) < 1e-6);
    assert!(rel(v["secondary"]["conic"].as_f64().unwrap(), -6.558237) < 1e-6);
    assert!(rel(v["secondary"]["radius_mm"].as_f64().unwrap(), -1265.455) < 1e-6);
    let ids: Vec<&str> = v["layout"]["sources"].as_array().unwrap().iter().map(|s| s["id"].as_str().unwrap()).collect();
    assert_eq!(ids, ["on-axis", "off-axis"]);
}

/// Runs a designer with `--layout FILE` (args end with "--layout"), then
/// `trace FILE --rays 5000 --json`; returns the first screen's report.
fn design_then_trace(name: &str, args: &[&str]) -> Value {
    let dir = std::env::temp_dir().join(format!("catoptric-design-{name}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(format!("{name}.json"));
    let p = path.to_str().unwrap();
    let (code, _, err) = run(&[args, &[p]].concat());
    assert_eq!(code, 0, "{err}");
    let v = json(&["trace", p, "--rays", "5000", "--json"]);
    let _ = std::fs::remove_dir_all(&dir);
    let screen = v["screens"][0].clone();
    assert_eq!(screen["id"], "focus");
    screen
}

#[test]
fn two_mirror_writes_a_layout_the_trace_command_reads() {
    let screen = design_then_trace(
        "cass",
        &["design", "two-mirror", "--type", "cassegrain", "--diameter", "200", "--primary-focal", "800", "--focal", "3000", "--back-focus", "150", "--layout"],
    );
    let rms = screen["by_source"][0]["rms_radius_um"].as_f64().unwrap();
    assert!(rms < 0.01, "classical Cassegrain on axis: {rms} µm");
}

#[test]
fn off_axis_writes_a_layout_the_trace_command_reads() {
    // Focal property of the parabola (any analytic-geometry text): the
    // written segment brings its on-axis beam to a point at `focus`.
    let screen = design_then_trace("oap", &["design", "off-axis", "--parent-focal", "500", "--offset", "200", "--diameter", "100", "--layout"]);
    assert_eq!(screen["by_source"][0]["source"], "on-axis");
    assert!(screen["hits"].as_u64().unwrap() > 4000, "{}", screen["hits"]);
    let rms = screen["by_source"][0]["rms_radius_um"].as_f64().unwrap();
    assert!(rms < 0.01, "off-axis paraboloid on axis: {rms} µm");
}

#[test]
fn off_axis_json_contract() {
    // Focus–directrix property of the parabola, computed independently:
    // f = 500, h = 200 → 22.6199°, 520 mm.
    let v = json(&["design", "off-axis", "--parent-focal", "500", "--offset", "200", "--diameter", "100", "--json"]);
    has_keys(&v, &["off_axis_angle_deg", "reflected_focal_mm", "layout"]);
    assert!(rel(v["off_axis_angle_deg"].as_f64().unwrap(), 22.6199) < 5e-6);
    assert!(rel(v["reflected_focal_mm"].as_f64().unwrap(), 520.0) < 1e-12);
}

#[test]
fn off_axis_text_output_carries_the_sunlight_caution() {
    // Regression: the text report of the off-axis (offset dish) designer had
    // no sunlight caution while the page's card showed one; the JSON output
    // (a contract) stays free of prose.
    let (code, out, err) = run(&["design", "off-axis", "--parent-focal", "500", "--offset", "200", "--diameter", "100"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("Caution:") && out.contains("sunlight") && out.contains("local codes"), "{out}");
    let (_, json_out, _) = run(&["design", "off-axis", "--parent-focal", "500", "--offset", "200", "--diameter", "100", "--json"]);
    assert!(!json_out.contains("Caution"));
}

#[test]
fn compare_json_contract() {
    // Third-order theory, sphere P-V D/(2048 N³) ≤ λ/4 (value from memory,
    // re-derived): D = 150, λ = 550 nm → N = 8.106.
    let v = json(&["compare", "--radius", "2400", "--diameter", "150", "--conics", "0,-1,-0.5", "--json"]);
    has_keys(&v, &["conics", "sphere_fastest_f_ratio"]);
    let rows = v["conics"].as_array().unwrap();
    assert_eq!(rows.len(), 3);
    for r in rows {
        has_keys(r, &["conic", "edge_sag_mm", "departure_pv_um", "wavefront_pv_waves", "wavefront_rms_waves", "strehl_estimate"]);
    }
    assert!(rel(v["sphere_fastest_f_ratio"].as_f64().unwrap(), 8.106) < 1e-4);
    // A leading minus sign is a value, not a flag.
    let v = json(&["compare", "--radius", "2400", "--diameter", "150", "--conics", "-1", "--json"]);
    assert_eq!(v["conics"][0]["conic"], -1.0);
}

#[test]
fn zones_json_contract() {
    // Normal intercept ρ²/(2R) (Texereau, How to Make a Telescope, 2nd
    // Eng. ed. 1984) and equal-area zones (Berry, Build Your Own Telescope,
    // 2nd ed. 1994), both values from memory: R = 2000 paraboloid,
    // D = 200, 5 zones.
    let v = json(&["zones", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--zones", "5", "--json"]);
    assert_eq!(v["source"], "moving");
    let z = v["zones"].as_array().unwrap();
    assert_eq!(z.len(), 5);
    for r in z {
        has_keys(r, &["inner_mm", "outer_mm", "r_mm", "reading_mm"]);
    }
    assert!(rel(z[0]["outer_mm"].as_f64().unwrap(), 44.72) < 1e-4);
    let v = json(&["zones", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--zones", "5", "--source", "fixed", "--json"]);
    assert_eq!(v["source"], "fixed");
}

#[test]
fn wavelength_flags_reach_every_figure_in_waves() {
    // Third-order theory as above: the fastest sphere keeping λ/4 P-V has
    // N = (D/(512 λ))^(1/3), so it is slower at a shorter wavelength;
    // wavefronts in waves are path differences over λ, so they scale as
    // 1/λ; a zone's departure in waves is its departure in µm over λ in
    // µm (definition of the unit).
    let cmp = |nm: &str| json(&["compare", "--radius", "2400", "--diameter", "150", "--conics", "0,-0.5", "--wavelength", nm, "--json"]);
    let (a, b) = (cmp("550"), cmp("632.8"));
    assert_eq!(b["wavelength_nm"], 632.8);
    let n = (150.0f64 / (512.0 * 632.8e-6)).cbrt();
    assert!(rel(b["sphere_fastest_f_ratio"].as_f64().unwrap(), n) < 1e-4, "{} vs {n}", b["sphere_fastest_f_ratio"]);
    for k in 0..2 {
        for key in ["wavefront_pv_waves", "wavefront_rms_waves"] {
            let (x, y) = (a["conics"][k][key].as_f64().unwrap(), b["conics"][k][key].as_f64().unwrap());
            assert!(rel(y * 632.8, x * 550.0) < 1e-9, "conic {k} {key}: {y} at 632.8 nm vs {x} at 550 nm");
        }
    }
    let zones = |nm: &str| json(&["zones", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--zones", "4", "--wavelength", nm, "--json"]);
    for nm in ["550", "1064"] {
        let v = zones(nm);
        let lambda_um = nm.parse::<f64>().unwrap() * 1e-3;
        let zs = v["zones"].as_array().unwrap();
        assert_eq!(zs.len(), 4);
        for z in zs {
            let (um, waves) = (z["departure_um"].as_f64().unwrap(), z["departure_waves"].as_f64().unwrap());
            assert!(um != 0.0 && rel(waves * lambda_um, um) < 1e-12, "{nm} nm: {waves} waves vs {um} µm");
        }
    }
}

#[test]
fn bad_input_exits_2_naming_the_flag() {
    let cases: [(&[&str], &str); 8] = [
        (
            &["design", "two-mirror", "--type", "cassegrain", "--diameter", "0", "--primary-focal", "1200", "--focal", "3200", "--back-focus", "250", "--json"],
            "--diameter",
        ),
        (
            &["design", "two-mirror", "--type", "cassegrain", "--diameter", "300", "--primary-focal", "1200", "--focal", "3200", "--back-focus", "4000", "--json"],
            "--back-focus",
        ),
        (
            &["design", "two-mirror", "--type", "cassegrain", "--diameter", "300", "--primary-focal", "1200", "--focal", "1200", "--back-focus", "250"],
            "--focal",
        ),
        (
            &["design", "two-mirror", "--type", "schmidt", "--diameter", "300", "--primary-focal", "1200", "--focal", "3200", "--back-focus", "250"],
            "--type",
        ),
        (&["design", "off-axis", "--parent-focal", "-5", "--offset", "200", "--diameter", "100", "--json"], "--parent-focal"),
        (&["compare", "--radius", "2400", "--diameter", "150", "--conics", "0,zero", "--json"], "--conics[1]"),
        (&["zones", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--zones", "0", "--json"], "--zones"),
        (&["zones", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--zones", "5", "--source", "lamp"], "--source"),
    ];
    for (args, flag) in cases {
        let (code, out, err) = run(args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?} printed {out}");
        assert!(err.contains(flag), "{args:?}: {err}");
    }
}

// Sizes down to the smallest float passed the range checks and came out as
// -inf or NaN in the table; the designers now take lengths of at least
// 1e-6 mm (the layout's smallest size) and say so in one line naming the
// flag (common practice: refuse, never print a non-finite figure).
#[test]
fn degenerate_sizes_are_refused_naming_the_flag() {
    let cases: [(&[&str], &str); 5] = [
        (&["zones", "--radius", "2000", "--conic", "-1", "--diameter", "5e-324", "--zones", "3"], "--diameter"),
        (&["zones", "--radius", "1e-300", "--conic", "-1", "--diameter", "1e-300", "--zones", "3", "--json"], "--radius"),
        (&["compare", "--radius", "2000", "--diameter", "5e-324", "--conics", "0,-1"], "--diameter"),
        (&["design", "off-axis", "--parent-focal", "500", "--offset", "0", "--diameter", "1e-9"], "--diameter"),
        (
            &["design", "two-mirror", "--type", "cassegrain", "--diameter", "5e-324", "--primary-focal", "800", "--focal", "3000", "--back-focus", "150"],
            "--diameter",
        ),
    ];
    for (args, flag) in cases {
        let (code, out, err) = run(args);
        assert_eq!(code, 2, "{args:?}: {out}");
        assert!(out.is_empty(), "{args:?} printed {out}");
        assert!(err.starts_with(&format!("catoptric: {flag}: ")) && err.lines().count() == 1, "{args:?}: {err}");
        assert!(err.contains("1e-6") && err.len() < 200, "{args:?}: {err}");
    }
    // The smallest allowed size gives finite numbers and no signed zeros.
    let (code, out, err) = run(&["zones", "--radius", "2000", "--conic", "-1", "--diameter", "1e-6", "--zones", "3"]);
    assert_eq!(code, 0, "{err}");
    for bad in ["inf", "NaN", "-0.000 ", "-0.0000 "] {
        assert!(!out.contains(bad), "{bad} in {out}");
    }
}
