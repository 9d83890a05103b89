//! `catoptric day` (docs/FORMATS.md §3): each step equals a single trace
//! with the sun set by hand to that step's direction, the direction follows
//! the site's axis mapping from the reported azimuth and elevation, steps
//! below the horizon have no screens, `worst` is the highest peak (null when
//! the sun never rises), and bad input exits 2 naming the field or flag.

use serde_json::Value;
use std::process::Command;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_catoptric"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("runs");
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into(), String::from_utf8_lossy(&out.stderr).into())
}

fn json(args: &[&str]) -> Value {
    let (code, out, err) = run(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    serde_json::from_str(&out).unwrap()
}

fn temp_file(name: &str, text: &str) -> String {
    let dir = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("sun_day");
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.to_string_lossy().into_owned()
}

fn preset(name: &str) -> Value {
    let p = format!("{}/www/presets/{name}", env!("CARGO_MANIFEST_DIR"));
    serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap()
}

const DISH: &str = "www/presets/solar-dish.json";

#[test]
fn each_step_equals_a_trace_with_the_sun_set_by_hand() {
    let day = json(&["day", DISH, "--date", "2026-12-21", "--from", "11:55", "--to", "12:15", "--step-min", "5", "--json"]);
    let steps = day["steps"].as_array().unwrap();
    assert_eq!(steps.len(), 5, "inclusive window: 11:55 … 12:15 by 5 min");
    assert_eq!(steps[0]["time"], "2026-12-21T11:55:00+09:00", "local standard time at 133.2° E is +9 h");
    let layout = preset("solar-dish.json");
    let site = &layout["site"];
    let bearing = site["z_bearing_deg"].as_f64().unwrap();
    let mut lit = 0;
    for st in steps {
        let (az, el) = (st["azimuth_deg"].as_f64().unwrap(), st["elevation_deg"].as_f64().unwrap());
        assert!(el > 0.0);
        let b = &st["beams"][0];
        // The contract's mapping: s = (−cos h sin(A − B), sin h, cos h cos(A − B));
        // the beam travels along −s: (sin p, cos p sin a, cos p cos a) in
        // (x, y, z) for direction a and out-of-plane tilt p.
        let (h, d) = (el.to_radians(), (az - bearing).to_radians());
        let s = [-h.cos() * d.sin(), h.sin(), h.cos() * d.cos()];
        let (a, p) = (b["direction_deg"].as_f64().unwrap().to_radians(), b["out_of_plane_deg"].as_f64().unwrap().to_radians());
        let u = [p.sin(), p.cos() * a.sin(), p.cos() * a.cos()];
        for k in 0..3 {
            assert!((u[k] + s[k]).abs() < 1e-9, "{}: beam {u:?} against −s {s:?}", st["time"]);
        }
        // Re-trace that step by hand: the preset with the beam placed as reported.
        let mut by_hand = layout.clone();
        let src = &mut by_hand["sources"][0];
        for k in ["center", "diameter", "direction_deg", "out_of_plane_deg"] {
            src[k] = b[k].clone();
        }
        let path = temp_file(&format!("step-{lit}.json"), &by_hand.to_string());
        let single = json(&["trace", &path, "--json"]);
        let (sc, tr) = (&st["screens"][0], &single["screens"][0]);
        assert_eq!(sc["id"], tr["id"]);
        assert_eq!(sc["peak_w_m2"], tr["flux"]["peak_w_m2"], "{}", st["time"]);
        assert_eq!(sc["peak_suns"], tr["flux"]["peak_suns"], "{}", st["time"]);
        assert_eq!(sc["power_w"], tr["power_w"], "{}", st["time"]);
        let pk = sc["peak_at_mm"].as_array().unwrap();
        let half = 0.5 * layout["elements"][1]["size"].as_f64().unwrap();
        assert!(pk.iter().all(|v| v.as_f64().unwrap().abs() < half), "the peak lies on the screen");
        lit += (sc["power_w"].as_f64().unwrap() > 0.0) as usize;
    }
    assert!(lit >= 3, "the noon sun crosses the parked dish's axis: {lit} lit steps");
    // The worst moment is the highest peak of the day.
    let best = steps.iter().map(|s| s["screens"][0]["peak_suns"].as_f64().unwrap()).fold(0.0, f64::max);
    assert_eq!(day["worst"]["peak_suns"].as_f64().unwrap(), best);
    assert_eq!(day["worst"]["screen"], "receiver");
}

#[test]
fn steps_below_the_horizon_have_no_screens() {
    let day = json(&["day", "www/presets/facade-sun.json", "--date", "2026-03-20", "--from", "00:00", "--to", "23:00", "--step-min", "60", "--json"]);
    let steps = day["steps"].as_array().unwrap();
    assert_eq!(steps.len(), 24);
    let (mut up, mut down) = (0, 0);
    for st in steps {
        let el = st["elevation_deg"].as_f64().unwrap();
        let n = st["screens"].as_array().unwrap().len();
        if el <= 0.0 {
            assert_eq!(n, 0, "{}: the sun is down", st["time"]);
            down += 1;
        } else {
            assert_eq!(n, 1, "{}: the sun is up", st["time"]);
            up += 1;
        }
    }
    // An equinox: about twelve hours of day.
    assert!((11..=13).contains(&up) && up + down == 24, "{up} steps with the sun up");
    assert!(day["worst"].is_object());
}

#[test]
fn the_default_window_runs_from_sunrise_to_sunset() {
    let day = json(&["day", "www/presets/facade-sun.json", "--date", "2026-06-21", "--step-min", "30", "--json"]);
    let steps = day["steps"].as_array().unwrap();
    let els: Vec<f64> = steps.iter().map(|s| s["elevation_deg"].as_f64().unwrap()).collect();
    // Rounded out to the step: at most the first and last step are down.
    assert!(els[1..els.len() - 1].iter().all(|&e| e > 0.0), "{els:?}");
    assert!(els[0] < 7.0 && els[els.len() - 1] < 7.0, "starts and ends near the horizon: {els:?}");
    assert!((28..=34).contains(&steps.len()), "a summer day at 37° N is about 14.5 h: {} steps", steps.len());
}

#[test]
fn worst_is_null_when_the_sun_never_rises() {
    let mut lay = preset("facade-sun.json");
    lay["site"]["latitude_deg"] = Value::from(80.0);
    let path = temp_file("polar-night.json", &lay.to_string());
    let day = json(&["day", &path, "--date", "2026-12-21", "--step-min", "120", "--json"]);
    assert!(day["worst"].is_null());
    assert!(day["steps"].as_array().unwrap().iter().all(|s| s["screens"].as_array().unwrap().is_empty()));
}

#[test]
fn bad_input_exits_2_naming_the_field_or_flag() {
    let mut no_site = preset("solar-dish.json");
    no_site.as_object_mut().unwrap().remove("site");
    let no_site = temp_file("no-site.json", &no_site.to_string());
    let mut bad_lat = preset("solar-dish.json");
    bad_lat["site"]["latitude_deg"] = Value::from(100.0);
    let bad_lat = temp_file("bad-lat.json", &bad_lat.to_string());
    let mut bad_csr = preset("solar-dish.json");
    bad_csr["sources"][0]["csr"] = Value::from(0.5);
    let bad_csr = temp_file("bad-csr.json", &bad_csr.to_string());
    let mut bad_slope = preset("solar-dish.json");
    bad_slope["elements"][0]["slope_error_mrad"] = Value::from(-1.0);
    let bad_slope = temp_file("bad-slope.json", &bad_slope.to_string());
    let mut bad_shape = preset("solar-dish.json");
    bad_shape["sources"][0]["sunshape"] = Value::from("square");
    let bad_shape = temp_file("bad-shape.json", &bad_shape.to_string());
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["day", DISH, "--date", "2026-13-01"], "--date"),
        (vec!["day", DISH, "--date", "2026-06-21", "--step-min", "0"], "--step-min"),
        (vec!["day", DISH, "--date", "2026-06-21", "--from", "25:00", "--to", "26:00"], "--from"),
        (vec!["day", DISH, "--date", "2026-06-21", "--from", "12:00", "--to", "11:00"], "--to"),
        (vec!["day", &no_site, "--date", "2026-06-21"], "site"),
        (vec!["day", &bad_lat, "--date", "2026-06-21"], "site.latitude_deg"),
        (vec!["day", &bad_csr, "--date", "2026-06-21"], "sources[0].csr"),
        (vec!["day", &bad_slope, "--date", "2026-06-21"], "elements[0].slope_error_mrad"),
        (vec!["day", &bad_shape, "--date", "2026-06-21"], "sources[0].sunshape"),
        (vec!["trace", &bad_csr], "sources[0].csr"),
    ];
    for (args, field) in cases {
        let (code, out, err) = run(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?}: nothing on stdout");
        assert!(err.contains(field) && err.lines().count() == 1, "{args:?}: {err}");
    }
}
