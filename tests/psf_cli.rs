//! `catoptric psf` (docs/FORMATS.md §3): its JSON keys, and bad input as
//! exit 2 with one line naming the flag and nothing on stdout.

use std::process::Command;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_catoptric"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("runs");
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into(), String::from_utf8_lossy(&out.stderr).into())
}

fn refusal(args: &[&str], flag: &str) -> String {
    let (code, out, err) = run(args);
    assert_eq!(code, 2, "{args:?}: {err}");
    assert!(out.is_empty(), "{args:?} printed {out}");
    assert_eq!(err.lines().count(), 1, "{args:?}: one line: {err}");
    assert!(err.starts_with(&format!("catoptric: {flag}: ")), "{args:?}: {err}");
    err
}

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
    let err = refusal(&["psf", F5, "--screen", "nowhere"], "--screen");
    assert!(err.contains("focus"), "lists the screens: {err}");
    refusal(&["psf", F5, "--source", "moon"], "--source");
    refusal(&["psf", F5, "--at", "infinity"], "--at");
    for g in ["100", "16", "2048", "0"] {
        let err = refusal(&["psf", F5, "--grid", g], "--grid");
        assert!(err.contains("power of two"), "{err}");
    }
    refusal(&["psf", F5, "--grid", "-5"], "--grid");
    refusal(&["psf", F5, "--grid", "many"], "--grid");
    let err = refusal(&["psf", "www/presets/solar-dish.json"], "--source");
    assert!(err.contains("point source"), "{err}");
    refusal(&["psf", "no/such/file.json"], "no/such/file.json");
}

#[test]
fn a_screen_the_light_misses_is_refused() {
    let mut v: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/www/presets/paraboloid-f5.json")).unwrap()).unwrap();
    v["elements"][1]["center"][0] = serde_json::json!(500.0);
    let dir = std::env::temp_dir().join(format!("catoptric-psf-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join("dark.json");
    std::fs::write(&p, v.to_string()).unwrap();
    let err = refusal(&["psf", p.to_str().unwrap()], "--screen");
    assert!(err.contains("no rays"), "{err}");
}
