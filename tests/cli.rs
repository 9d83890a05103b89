//! The `catoptric` command's contract (docs/FORMATS.md §3): JSON shape, exit
//! codes, nothing on stdout on error, exact link round trip, the psf
//! command's keys and refusals.

use std::process::Command;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_catoptric"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("runs");
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into(), String::from_utf8_lossy(&out.stderr).into())
}

fn temp_file(name: &str, text: &str) -> String {
    let dir = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("cli");
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.to_string_lossy().into_owned()
}

#[test]
fn trace_json_has_the_contract_keys() {
    let (code, out, err) = run(&["trace", "www/presets/paraboloid-f5.json", "--rays", "3000", "--json"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    for k in ["rays_launched", "rays_escaped", "rays_absorbed", "screens"] {
        assert!(v.get(k).is_some(), "missing {k}");
    }
    let launched = v["rays_launched"].as_u64().unwrap();
    assert!((2900..=3100).contains(&launched), "--rays overrides the count: {launched}");
    let s = &v["screens"][0];
    assert_eq!(s["id"], "focus");
    let b = &s["by_source"][0];
    assert_eq!(b["source"], "star");
    for k in ["hits", "centroid_mm", "rms_radius_um", "max_radius_um"] {
        assert!(b.get(k).is_some(), "missing by_source.{k}");
    }
    // A paraboloid on axis: every ray within 1e-9 mm (1e-6 µm) of focus.
    assert!(b["max_radius_um"].as_f64().unwrap() < 1e-6);
}

#[test]
fn readable_table_by_default() {
    let (code, out, _) = run(&["trace", "www/presets/sphere-f5.json", "--rays", "2000"]);
    assert_eq!(code, 0);
    assert!(out.contains("screen focus") && out.contains("RMS radius"));
}

#[test]
fn bad_input_exits_2_with_the_field_and_no_stdout() {
    let bad = temp_file("bad.json", &std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/www/presets/paraboloid-f5.json")).unwrap().replace("\"conic\": -1", "\"conic\": \"steep\""));
    let (code, out, err) = run(&["trace", &bad, "--json"]);
    assert_eq!(code, 2);
    assert!(out.is_empty());
    assert!(err.contains("elements[0].profile.conic"), "{err}");
    assert_eq!(err.trim().lines().count(), 1, "one-line error: {err}");

    let (code, out, err) = run(&["trace", "no/such/file.json"]);
    assert_eq!((code, out.is_empty()), (2, true));
    assert!(err.contains("no/such/file.json"));

    let (code, out, err) = run(&["trace", "www/presets/paraboloid-f5.json", "--rays", "0"]);
    assert_eq!((code, out.is_empty()), (2, true));
    assert!(err.contains("--rays"));

    let (code, out, err) = run(&["unlink", "#L=notalink!"]);
    assert_eq!((code, out.is_empty()), (2, true));
    assert!(err.contains("link"));

    let (code, out, _) = run(&["trace"]);
    assert_eq!((code, out.is_empty()), (2, true));
}

#[test]
fn link_then_unlink_round_trips_exactly() {
    let (code, frag, _) = run(&["link", "www/presets/off-axis-paraboloid.json"]);
    assert_eq!(code, 0);
    let frag = frag.trim();
    assert!(frag.starts_with("#L="));
    let (code, json, _) = run(&["unlink", frag]);
    assert_eq!(code, 0);
    let back = catoptric::parse_layout(&json).unwrap();
    let orig = catoptric::parse_layout(&std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/www/presets/off-axis-paraboloid.json")).unwrap()).unwrap();
    assert_eq!(back, orig);
}

#[test]
fn link_and_unlink_json_carry_the_same_fragment_and_layout() {
    // docs/FORMATS.md §3: `link --json` wraps the fragment as {"fragment"};
    // `unlink` prints the layout JSON with or without --json.
    let (code, plain, err) = run(&["link", "www/presets/off-axis-paraboloid.json"]);
    assert_eq!(code, 0, "{err}");
    let (code, out, err) = run(&["link", "www/presets/off-axis-paraboloid.json", "--json"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v.as_object().unwrap().len(), 1, "{v}");
    assert_eq!(v["fragment"], plain.trim());
    let (code, a, _) = run(&["unlink", plain.trim()]);
    assert_eq!(code, 0);
    let (code, b, err) = run(&["unlink", plain.trim(), "--json"]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(catoptric::parse_layout(&b).unwrap(), catoptric::parse_layout(&a).unwrap());
}

// ---- terminal-safe, one-line messages (common practice for command-line
// tools: never pass a file's control characters to the terminal; ECMA-48
// control functions start with C0/C1 characters) ----

fn preset_with(edit: impl FnOnce(&mut serde_json::Value)) -> String {
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/www/presets/paraboloid-f5.json")).unwrap()).unwrap();
    edit(&mut v);
    v.to_string()
}

fn one_line_refusal(args: &[&str], flag: &str) -> String {
    let (code, out, err) = run(args);
    assert_eq!(code, 2, "{args:?}: {err}");
    assert!(out.is_empty(), "{args:?} printed {out}");
    assert_eq!(err.lines().count(), 1, "{args:?}: one line: {err}");
    assert!(err.starts_with(&format!("catoptric: {flag}: ")), "{args:?}: {err}");
    err
}

#[test]
fn names_and_ids_from_files_cannot_drive_the_terminal() {
    let esc = "\u{1b}[2J\u{1b}[31m";
    let cases = [
        // A duplicate id, an unknown field and an unknown kind are echoed.
        preset_with(|v| {
            v["elements"][0]["id"] = serde_json::json!(format!("dup{esc}"));
            v["elements"][1]["id"] = serde_json::json!(format!("dup{esc}"));
        }),
        preset_with(|v| v["elements"][1][format!("size{esc}")] = serde_json::json!(1)),
        preset_with(|v| v["elements"][0]["kind"] = serde_json::json!(format!("lens{esc}"))),
    ];
    for (i, text) in cases.iter().enumerate() {
        let p = temp_file(&format!("esc{i}.json"), text);
        let (code, out, err) = run(&["trace", &p]);
        assert_eq!(code, 2, "{err}");
        assert!(out.is_empty());
        assert!(!err.contains('\u{1b}'), "raw escape in {err:?}");
        assert!(err.contains("\\x1b[2J"), "escape shown as text: {err:?}");
        assert_eq!(err.trim_end().lines().count(), 1, "{err:?}");
    }
    let p = temp_file("esc-ok.json", &preset_with(|v| {
        v["name"] = serde_json::json!(format!("name{esc}"));
        v["elements"][1]["id"] = serde_json::json!(format!("focus{esc}"));
        v["sources"][0]["id"] = serde_json::json!(format!("star\u{202e}"));
    }));
    let (code, out, e2) = run(&["trace", &p, "--rays", "500"]);
    assert_eq!(code, 0, "{e2}");
    assert!(!out.contains('\u{1b}') && !out.contains('\u{202e}'), "{out:?}");
    assert!(out.contains("name\\x1b[2J") && out.contains("focus\\x1b") && out.contains("star\\u{202e}"), "{out}");
}

#[test]
fn long_numbers_are_echoed_short() {
    for text in [
        preset_with(|v| v["elements"][1]["size"] = serde_json::json!(-1e308)),
        preset_with(|v| v["elements"][1]["id"] = serde_json::json!(1e308)),
        preset_with(|v| v["sources"][0]["rays"] = serde_json::json!(1e308)),
        preset_with(|v| v["elements"][0]["aperture"]["diameter"] = serde_json::json!(5e-324)),
    ] {
        let p = temp_file("long-number.json", &text);
        let (code, _, err) = run(&["trace", &p]);
        assert_eq!(code, 2);
        assert!(err.contains("e308") || err.contains("e+308") || err.contains("e-324"), "{err}");
        assert!(err.len() < 300 && !err.contains("0000000000"), "{err}");
    }
    let err = one_line_refusal(&["compare", "--radius", "2000", "--diameter", "200", "--conics", "0,1e308"], "--conics[1]");
    assert!(err.contains("1e308") && err.len() < 200, "{err}");
}

#[test]
fn a_screen_without_light_reports_zero_watts_without_a_sign() {
    let p = temp_file("dark.json", &preset_with(|v| v["elements"][1]["center"] = serde_json::json!([5000, 0])));
    let (code, out, err) = run(&["trace", &p, "--rays", "500"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("0 hits, 0.0000 W"), "{out}");
    assert!(!out.contains("-0.0"), "{out}");
}

#[test]
fn bad_flag_values_are_one_line_naming_the_flag() {
    let p = "www/presets/sphere-f5.json";
    let err = one_line_refusal(&["trace", p, "--rays", "-1"], "--rays");
    assert!(err.contains("negative"), "{err}");
    one_line_refusal(&["trace", p, "--rays", "many"], "--rays");
    one_line_refusal(&["trace", p, "--rays", "99999999999999999999999"], "--rays");
    one_line_refusal(&["trace", p, "--colour"], "--colour");
    one_line_refusal(&["trace"], "LAYOUT");
    one_line_refusal(&["compare", "--radius", "x", "--diameter", "200", "--conics", "0"], "--radius");
    one_line_refusal(&["compare", "--diameter", "200", "--conics", "0"], "--radius");
    one_line_refusal(&["zones", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--zones", "2.5"], "--zones");
    one_line_refusal(
        &["design", "two-mirror", "--type", "cassegrain", "--diameter", "abc", "--primary-focal", "800", "--focal", "3000", "--back-focus", "150"],
        "--diameter",
    );
    one_line_refusal(&["serve", "--port", "99999"], "--port");
    let err = one_line_refusal(&["design"], "design");
    assert!(err.contains("two-mirror") && err.contains("off-axis"), "{err}");
    let err = one_line_refusal(&["frobnicate"], "frobnicate");
    assert!(err.contains("trace"), "{err}");
    let err = one_line_refusal(&[], "COMMAND");
    assert!(err.contains("trace"), "{err}");
    // Help and version still work, on stdout with exit 0.
    for args in [&["--help"][..], &["--version"], &["trace", "--help"], &["design", "two-mirror", "--help"]] {
        let (code, out, err) = run(args);
        assert_eq!(code, 0, "{args:?}: {err}");
        assert!(!out.is_empty() && err.is_empty(), "{args:?}");
    }
}

// ---- psf: the diffraction image (docs/FORMATS.md §3) ----

const F5: &str = "www/presets/paraboloid-f5.json";

#[test]
fn psf_json_has_the_contract_keys() {
    let (code, out, err) = run(&["psf", F5, "--grid", "64", "--json"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    for k in [
        "screen", "source", "at", "wavelength_nm", "f_number", "strehl", "strehl_marechal", "wavefront_rms_waves", "wavefront_pv_waves",
        "obscuration", "psf", "ee_diffraction", "mtf", "zernike",
    ] {
        assert!(v.get(k).is_some(), "missing {k}");
    }
    assert_eq!(v["at"], "best");
    assert_eq!(v["screen"], "focus");
    assert_eq!(v["source"], "star");
    for k in ["pixel_um", "size", "peak_relative"] {
        assert!(v["psf"].get(k).is_some(), "psf.{k}");
    }
    assert_eq!(v["psf"]["size"], 256, "64 × 4 padding");
    for k in ["radius_um", "fraction", "ee50_um", "ee80_um"] {
        assert!(v["ee_diffraction"].get(k).is_some(), "ee_diffraction.{k}");
    }
    for k in ["cutoff_cyc_mm", "frequency_cyc_mm", "tangential", "sagittal", "diffraction_limited"] {
        assert!(v["mtf"].get(k).is_some(), "mtf.{k}");
    }
    let z = v["zernike"].as_array().unwrap();
    assert_eq!(z.len(), 28);
    for k in ["j", "n", "m", "coefficient_waves"] {
        assert!(z[12].get(k).is_some(), "zernike.{k}");
    }
    assert_eq!((z[12]["n"].as_i64(), z[12]["m"].as_i64()), (Some(4), Some(0)));
    // A perfect paraboloid: Strehl 1 (its definition).
    assert!(v["strehl"].as_f64().unwrap() > 0.99);
    let (code, out, _) = run(&["psf", F5, "--grid", "32", "--at", "screen", "--screen", "focus", "--source", "star", "--json"]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["at"], "screen");
    // The readable table names the Strehl's focus.
    let (code, out, _) = run(&["psf", F5, "--grid", "32"]);
    assert_eq!(code, 0);
    assert!(out.contains("Strehl") && out.contains("best focus") && out.contains("spherical"), "{out}");
}

#[test]
fn bad_psf_requests_name_the_flag() {
    let err = one_line_refusal(&["psf", F5, "--screen", "nowhere"], "--screen");
    assert!(err.contains("focus"), "lists the screens: {err}");
    one_line_refusal(&["psf", F5, "--source", "moon"], "--source");
    one_line_refusal(&["psf", F5, "--at", "infinity"], "--at");
    for g in ["100", "16", "2048", "0"] {
        let err = one_line_refusal(&["psf", F5, "--grid", g], "--grid");
        assert!(err.contains("power of two"), "{err}");
    }
    one_line_refusal(&["psf", F5, "--grid", "-5"], "--grid");
    one_line_refusal(&["psf", F5, "--grid", "many"], "--grid");
    let err = one_line_refusal(&["psf", "www/presets/solar-dish.json"], "--source");
    assert!(err.contains("point source"), "{err}");
    one_line_refusal(&["psf", "no/such/file.json"], "no/such/file.json");
}

#[test]
fn a_screen_the_light_misses_is_refused() {
    let p = temp_file("dark-psf.json", &preset_with(|v| v["elements"][1]["center"][0] = serde_json::json!(500.0)));
    let err = one_line_refusal(&["psf", &p], "--screen");
    assert!(err.contains("no rays"), "{err}");
}

// ---- bench: the JSON contract (the keys docs/FORMATS.md lists), not its speed ----

#[test]
fn bench_json_has_the_contract_keys_and_rates_that_follow_from_them() {
    // Keys and arithmetic only: every rate is a count over the time it
    // reports (common practice for throughput figures); no time is judged.
    let (code, out, err) = run(&["bench", "--rays", "2000", "--threads", "2", "--json"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["threads"], 2);
    assert!(v["machine"].is_object(), "machine");
    // Both sides of the NumPy comparison are best of the same number of runs.
    assert!(v["trace_runs"].as_u64().unwrap() >= v["runs"].as_u64().unwrap());
    let scenes = v["scenes"].as_array().expect("scenes");
    assert_eq!(scenes.len(), 3);
    let num = |s: &serde_json::Value, k: &str| s[k].as_f64().unwrap_or_else(|| panic!("{k} missing or not a number"));
    for s in scenes {
        for k in ["name", "rays", "surface_hits", "seconds", "rays_per_s", "hits_per_s", "hits_per_s_per_thread", "wasm_ratio", "analysis_s_per_mray", "frame_ms_native", "frame_ms_wasm"] {
            assert!(s.get(k).is_some(), "missing {k}");
        }
        let (rays, hits, secs) = (num(s, "rays"), num(s, "surface_hits"), num(s, "seconds"));
        // The pupil lattices land near the count asked for.
        assert!((rays - 2000.0).abs() <= 40.0 && hits > 0.0 && secs > 0.0, "{s}");
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs();
        assert!(close(num(s, "rays_per_s"), rays / secs), "{s}");
        assert!(close(num(s, "hits_per_s"), hits / secs), "{s}");
        assert!(close(num(s, "hits_per_s_per_thread"), hits / secs / 2.0), "{s}");
        assert!(num(s, "hits_per_s_one_thread") > 0.0 && num(s, "end_to_end_s") > 0.0, "{s}");
    }
    // NumPy present: its figure is the script's time over our end to end of scene 1;
    // absent: a note says why.
    match v["numpy"].as_object() {
        Some(n) => {
            let (np, ours) = (n["seconds"].as_f64().unwrap(), n["catoptric_seconds"].as_f64().unwrap());
            assert_eq!(ours, num(&scenes[0], "end_to_end_s"));
            assert!((n["speedup"].as_f64().unwrap() - np / ours).abs() <= 1e-9 * np / ours);
        }
        None => assert!(v["numpy_note"].as_str().is_some_and(|s| !s.is_empty()), "{v}"),
    }
}

#[test]
fn bad_bench_requests_name_the_flag() {
    let err = one_line_refusal(&["bench", "--rays", "0"], "--rays");
    assert!(err.contains("between"), "{err}");
    one_line_refusal(&["bench", "--threads", "0"], "--threads");
    one_line_refusal(&["bench", "--threads", "9999"], "--threads");
}
