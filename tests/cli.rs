//! The `catoptric` command's contract (DESIGN.md §5): JSON shape, exit
//! codes, nothing on stdout on error, exact link round trip.

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
    let dir = std::env::temp_dir().join(format!("catoptric-cli-{}", std::process::id()));
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
