//! Layout files and share links: every class of bad input is refused with
//! the offending field named (docs/FORMATS.md §2), round trips are exact, and no
//! input makes the library panic (common practice: fuzz the boundary).

mod common;
use common::{fuzz_scale, Rng};
use catoptric::layout::{decode_link, encode_link, parse_layout};
use catoptric::{trace, Scene, TraceOptions};
use serde_json::{json, Value};

fn base() -> Value {
    json!({
      "format": "catoptric-layout", "version": 1, "name": "t", "notes": "",
      "wavelength_nm": 550, "max_bounces": 16,
      "elements": [
        { "kind": "mirror", "id": "primary", "vertex": [0, 1000], "axis_deg": 180, "form": "revolved",
          "profile": { "radius": 2000, "conic": -1, "aspheric": [], "departure": null },
          "aperture": { "diameter": 200, "offset": 0, "hole": 0 }, "reflectivity": 1.0 },
        { "kind": "screen", "id": "focus", "center": [0, 0], "axis_deg": 0, "size": 20, "shape": "square", "opaque": false }
      ],
      "sources": [
        { "kind": "beam", "id": "star", "center": [0, 500], "direction_deg": 0, "diameter": 200, "rays": 2000,
          "pattern": "hex", "sun_half_angle_mrad": 0, "irradiance_w_m2": 1000 },
        { "kind": "point", "id": "lamp", "center": [0, 0], "direction_deg": 0, "cone_half_angle_deg": 30,
          "rays": 2000, "pattern": "random", "power_w": 100 }
      ]
    })
}

fn field_of(v: &Value) -> String {
    match parse_layout(&v.to_string()) {
        Ok(_) => panic!("accepted a bad layout: {v}"),
        Err(e) => {
            assert!(!e.message.is_empty());
            e.field
        }
    }
}

fn with(f: impl FnOnce(&mut Value)) -> Value {
    let mut v = base();
    f(&mut v);
    v
}

#[test]
fn the_design_example_parses_with_and_without_optional_fields() {
    let l = parse_layout(&base().to_string()).unwrap();
    assert_eq!(l.elements.len(), 2);
    let v = with(|v| {
        let m = &mut v["elements"][0];
        m.as_object_mut().unwrap().remove("reflectivity");
        m["profile"].as_object_mut().unwrap().remove("aspheric");
        m["profile"].as_object_mut().unwrap().remove("departure");
        m["aperture"].as_object_mut().unwrap().remove("hole");
        v["elements"][1].as_object_mut().unwrap().remove("opaque");
        v.as_object_mut().unwrap().remove("notes");
    });
    assert_eq!(parse_layout(&v.to_string()).unwrap(), l);
}

#[test]
fn each_bad_input_class_names_its_field() {
    let cases: Vec<(Value, &str)> = vec![
        (with(|v| v["elements"][0]["profile"]["conic"] = json!("steep")), "elements[0].profile.conic"),
        (with(|v| v["elements"][0]["profile"]["radius"] = json!(0)), "elements[0].profile.radius"),
        (with(|v| v["elements"][0]["aperture"]["diameter"] = json!(-5)), "elements[0].aperture.diameter"),
        (with(|v| v["elements"][0]["aperture"]["diameter"] = json!(0)), "elements[0].aperture.diameter"),
        (with(|v| v["elements"][1]["size"] = json!(0)), "elements[1].size"),
        (with(|v| v["elements"][0]["aperture"]["hole"] = json!(300)), "elements[0].aperture.hole"),
        // Past the conic's domain: a sphere of R = 50 cannot be 200 wide.
        (with(|v| { v["elements"][0]["profile"]["radius"] = json!(50); v["elements"][0]["profile"]["conic"] = json!(0); }), "elements[0].aperture.diameter"),
        // Non-increasing spline knots.
        (with(|v| v["elements"][0]["profile"]["departure"] = json!([[0, 0], [50, 0.001], [50, 0.002]])), "elements[0].profile.departure[2][0]"),
        (with(|v| v["elements"][1]["id"] = json!("primary")), "elements[1].id"),
        (with(|v| v["sources"][0]["id"] = json!("focus")), "sources[0].id"),
        (with(|v| v["sources"][0]["rays"] = json!(100_000_000u64)), "sources[0].rays"),
        (with(|v| v["sources"][0]["rays"] = json!(0)), "sources[0].rays"),
        (with(|v| v["version"] = json!(2)), "version"),
        (with(|v| v["format"] = json!("something-else")), "format"),
        (with(|v| v["elements"][0]["vertex"] = json!([0, "x"])), "elements[0].vertex[1]"),
        (with(|v| v["elements"][0]["vertex"] = json!([0, 1e30])), "elements[0].vertex[1]"),
        (with(|v| v["elements"][0]["colour"] = json!("red")), "elements[0].colour"),
        (with(|v| v["extra"] = json!(1)), "extra"),
        (with(|v| v["elements"][0]["kind"] = json!("lens")), "elements[0].kind"),
        (with(|v| v["sources"][1]["kind"] = json!("laser")), "sources[1].kind"),
        (with(|v| v["elements"][0]["form"] = json!("extruded")), "elements[0].length"),
        (with(|v| v["elements"][0]["length"] = json!(100)), "elements[0].length"),
        (with(|v| v["sources"][1]["cone_half_angle_deg"] = json!(0)), "sources[1].cone_half_angle_deg"),
        (with(|v| v["sources"][0]["pattern"] = json!("spiral")), "sources[0].pattern"),
        (with(|v| v["wavelength_nm"] = json!(-1)), "wavelength_nm"),
        (with(|v| v["max_bounces"] = json!(0)), "max_bounces"),
        (with(|v| v["elements"][0]["reflectivity"] = json!(1.5)), "elements[0].reflectivity"),
        (with(|v| v["sources"][0]["sun_half_angle_mrad"] = json!(-1)), "sources[0].sun_half_angle_mrad"),
        (with(|v| v["elements"][0]["profile"]["aspheric"] = json!([1e-9, null])), "elements[0].profile.aspheric[1]"),
        (with(|v| { v["elements"][0].as_object_mut().unwrap().remove("vertex"); }), "elements[0]"),
    ];
    for (v, want) in cases {
        let got = field_of(&v);
        assert_eq!(got, want, "for {v}");
    }
    // Messages say what is allowed.
    let e = parse_layout(&with(|v| v["sources"][0]["rays"] = json!(0)).to_string()).unwrap_err();
    assert!(e.message.contains("between 1 and"), "{e}");
    let e = parse_layout(&with(|v| v["elements"][0]["colour"] = json!("red")).to_string()).unwrap_err();
    assert!(e.message.contains("colour"), "{e}");
    assert!(parse_layout("{ not json").unwrap_err().message.contains("JSON"));
}

#[test]
fn share_link_round_trip_is_exact() {
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/www/presets");
    let mut n = 0;
    for entry in std::fs::read_dir(dir).unwrap() {
        let p = entry.unwrap().path();
        if p.file_name().unwrap() == "index.json" {
            continue;
        }
        let l = parse_layout(&std::fs::read_to_string(&p).unwrap()).unwrap();
        let frag = encode_link(&l);
        assert!(frag.starts_with("#L="));
        assert!(frag[3..].bytes().all(|b| b.is_ascii_alphanumeric() || b == b'-' || b == b'_'), "base64url, no padding");
        assert_eq!(decode_link(&frag).unwrap(), l);
        assert_eq!(decode_link(&format!("http://127.0.0.1:8000/{frag}")).unwrap(), l);
        n += 1;
    }
    assert!(n >= 7);
    // Awkward numbers survive exactly.
    let l = parse_layout(&with(|v| v["elements"][0]["profile"]["conic"] = json!(-0.1f64 - 0.2f64)).to_string()).unwrap();
    assert_eq!(decode_link(&encode_link(&l)).unwrap(), l);
}

#[test]
fn damaged_links_are_refused_with_a_message() {
    for bad in ["", "#L=", "#L=!!!!", "#L=AAAA", "#L=q1YqSs1JTS4uTc", "garbage"] {
        let e = decode_link(bad).unwrap_err();
        assert!(e.field.starts_with("link"), "{bad}: {e}");
    }
    // A valid deflate stream of a layout with a bad field names that field.
    let bad = with(|v| v["elements"][0]["profile"]["radius"] = json!(0)).to_string();
    let packed = miniz_deflate(bad.as_bytes());
    let e = decode_link(&format!("#L={packed}")).unwrap_err();
    assert_eq!(e.field, "link: elements[0].profile.radius");
}

fn miniz_deflate(b: &[u8]) -> String {
    use base64::Engine as _;
    base64::engine::general_purpose::URL_SAFE_NO_PAD.encode(miniz_oxide::deflate::compress_to_vec(b, 6))
}


/// Replace one leaf (chosen at random) of a JSON tree.
fn mutate(v: &mut Value, rng: &mut Rng) {
    let nasty = [
        json!(0), json!(-1), json!(1e300), json!(-1e300), json!(1e-300), json!(""), json!("x"), json!(null),
        json!([]), json!({}), json!(true), json!(4_000_001), json!(-0.0), json!(0.5), json!([1, 2, 3]),
        json!(1e7), json!(-1e7), json!(89.999), json!(180), json!(1.0000001),
    ];
    match v {
        Value::Object(m) if !m.is_empty() => {
            let keys: Vec<String> = m.keys().cloned().collect();
            let k = rng.pick(&keys);
            match rng.u() % 6 {
                0 => {
                    m.remove(&k);
                }
                1 => {
                    m.insert(k, rng.pick(&nasty));
                }
                _ => mutate(m.get_mut(&k).unwrap(), rng),
            }
        }
        Value::Array(a) if !a.is_empty() => {
            let i = (rng.u() % a.len() as u64) as usize;
            match rng.u() % 6 {
                0 => {
                    a.remove(i);
                }
                1 => a[i] = rng.pick(&nasty),
                2 => a.push(a[i].clone()),
                _ => mutate(&mut a[i], rng),
            }
        }
        _ => *v = rng.pick(&nasty),
    }
}

/// Parse, validate, and trace briefly whatever survives: no input may panic.
fn exercise(text: &str) {
    if let Ok(l) = parse_layout(text) {
        let scene = Scene::compile(&l);
        let r = trace(&scene, TraceOptions { rays: Some(16), ..Default::default() });
        assert_eq!(r.rays_launched, r.rays_escaped + r.rays_absorbed);
        let _ = catoptric::trace::trace_fan(&scene, 8, None);
        let _ = catoptric::analysis::trace_report(&scene, &r);
    }
}

#[test]
fn no_input_panics() {
    let mut rng = Rng(2026);
    let scale = fuzz_scale();
    // Random bytes.
    for _ in 0..300 * scale {
        let n = (rng.u() % 200) as usize;
        let bytes: Vec<u8> = (0..n).map(|_| rng.u() as u8).collect();
        exercise(&String::from_utf8_lossy(&bytes));
        let _ = decode_link(&String::from_utf8_lossy(&bytes));
    }
    // Random link strings from the base64url alphabet.
    let alpha: Vec<char> = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_".chars().collect();
    for _ in 0..300 * scale {
        let n = (rng.u() % 300) as usize;
        let s: String = (0..n).map(|_| rng.pick(&alpha)).collect();
        let _ = decode_link(&format!("#L={s}"));
    }
    // Mutated valid layouts (the base and every preset).
    let mut seeds = vec![base()];
    for entry in std::fs::read_dir(concat!(env!("CARGO_MANIFEST_DIR"), "/www/presets")).unwrap() {
        let p = entry.unwrap().path();
        if p.file_name().unwrap() != "index.json" {
            seeds.push(serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap());
        }
    }
    for i in 0..3000 * scale {
        let mut v = seeds[i % seeds.len()].clone();
        for _ in 0..1 + rng.u() % 3 {
            mutate(&mut v, &mut rng);
        }
        // Keep mutated ray counts small so the test stays quick.
        if let Some(srcs) = v.get_mut("sources").and_then(|s| s.as_array_mut()) {
            for s in srcs {
                if let Some(r) = s.get_mut("rays")
                    && r.as_u64().is_some_and(|n| n > 64) {
                        *r = json!(64);
                    }
            }
        }
        let text = v.to_string();
        exercise(&text);
        // Random truncation of the text.
        let cut = (rng.u() as usize) % (text.len() + 1);
        exercise(text.get(..cut).unwrap_or(""));
        // And through a link.
        let _ = decode_link(&format!("#L={}", miniz_deflate(text.as_bytes())));
    }
}

// ---- caps and degenerate values (common practice: refuse at the boundary
// what would make a mirror vanish or a figure infinite, naming the field) ----

/// The field a bad layout is refused at, with a check that the message is
/// short (no number echoed as hundreds of digits).
fn refused_at(v: &Value) -> String {
    let e = parse_layout(&v.to_string()).expect_err(&format!("accepted {v}"));
    assert!(e.message.len() < 300, "long message: {e}");
    assert!(!e.message.contains("0000000000000"), "a number echoed in full: {e}");
    e.field
}

#[test]
fn degenerate_values_that_passed_before_are_refused_by_field() {
    let cases: Vec<(Value, &str)> = vec![
        // A4 = 1e308: the sag at the rim is infinite and the mirror vanishes.
        (with(|v| v["elements"][0]["profile"]["aspheric"] = json!([1e308])), "elements[0].profile.aspheric[0]"),
        (with(|v| v["elements"][0]["profile"]["aspheric"] = json!([0, 0, 1e-8])), "elements[0].profile.aspheric[2]"),
        // R = 1e-300, K = −1: (1+K)c²ρ² was 0 × ∞ = NaN, which passed the domain check.
        (with(|v| v["elements"][0]["profile"]["radius"] = json!(1e-300)), "elements[0].profile.radius"),
        // 1/R overflows.
        (with(|v| v["elements"][0]["profile"]["radius"] = json!(1e-310)), "elements[0].profile.radius"),
        // A paraboloid 1e-4 mm in radius is 5e7 mm deep at ρ = 100 mm.
        (with(|v| v["elements"][0]["profile"]["radius"] = json!(1e-4)), "elements[0].profile.radius"),
        (with(|v| v["elements"][0]["aperture"]["diameter"] = json!(5e-324)), "elements[0].aperture.diameter"),
        (with(|v| v["elements"][0]["aperture"]["diameter"] = json!(1e-7)), "elements[0].aperture.diameter"),
        (with(|v| v["elements"][1]["size"] = json!(1e-300)), "elements[1].size"),
        (with(|v| v["sources"][0]["diameter"] = json!(5e-324)), "sources[0].diameter"),
        (
            with(|v| {
                v["elements"][0]["form"] = json!("extruded");
                v["elements"][0]["length"] = json!(5e-324);
            }),
            "elements[0].length",
        ),
        // Knots closer than 1e-6 mm, and an end tangent that reaches 1e15 mm at the rim.
        (with(|v| v["elements"][0]["profile"]["departure"] = json!([[0, 0], [1e-9, 0.001]])), "elements[0].profile.departure[1][0]"),
        (with(|v| v["elements"][0]["profile"]["departure"] = json!([[0, 0], [1e-6, 1e7]])), "elements[0].profile.departure"),
        // Long numbers are echoed short.
        (with(|v| v["elements"][1]["size"] = json!(-1e308)), "elements[1].size"),
        (with(|v| v["elements"][1]["id"] = json!(1e308)), "elements[1].id"),
    ];
    for (v, want) in cases {
        assert_eq!(refused_at(&v), want, "for {v}");
    }
    // The smallest sizes allowed still give finite figures.
    let tiny = with(|v| {
        v["elements"][1]["size"] = json!(catoptric::layout::MIN_LENGTH_MM);
        v["sources"][0]["diameter"] = json!(catoptric::layout::MIN_LENGTH_MM);
        v["sources"][0]["center"] = json!([0, 500]);
    });
    let (scene, r) = common::run(&tiny.to_string());
    let report = catoptric::analysis::trace_report(&scene, &r);
    for sc in &report.screens {
        assert!(sc.flux.mean_w_m2.is_finite() && sc.flux.peak_w_m2.is_finite(), "{:?}", sc.flux);
    }
}

#[test]
fn notes_have_a_documented_cap() {
    let cap = catoptric::layout::MAX_NOTES_BYTES;
    assert_eq!(cap, 64 * 1024);
    let ok = with(|v| v["notes"] = json!("n".repeat(cap)));
    assert!(parse_layout(&ok.to_string()).is_ok());
    let long = with(|v| v["notes"] = json!("n".repeat(cap + 1)));
    let e = parse_layout(&long.to_string()).unwrap_err();
    assert_eq!(e.field, "notes");
    assert!(e.message.contains("64 KiB"), "{e}");
}

/// A valid layout whose minified JSON is over the link cap: 256 mirrors
/// with 512 departure knots each.
pub fn layout_past_the_link_cap() -> Value {
    with(|v| {
        let mirror = v["elements"][0].clone();
        let knots: Vec<[f64; 2]> =
            (0..512).map(|i| [i as f64 * 0.19569471624266144, 1e-3 * (i as f64 * 0.123_456_789).sin()]).collect();
        let mut els = Vec::new();
        for i in 0..255 {
            let mut m = mirror.clone();
            m["id"] = json!(format!("mirror-number-{i}"));
            m["vertex"] = json!([i as f64 * 300.0, 1000.0 + i as f64 * 0.123_456_789]);
            m["profile"]["departure"] = json!(knots);
            els.push(m);
        }
        els.push(v["elements"][1].clone());
        v["elements"] = json!(els);
    })
}

#[test]
fn link_refuses_what_unlink_would_refuse() {
    let l = parse_layout(&layout_past_the_link_cap().to_string()).expect("a valid layout");
    let json = l.to_json_compact();
    assert!(json.len() > catoptric::layout::MAX_LINK_LAYOUT_BYTES, "{} bytes", json.len());
    let e = catoptric::layout::checked_link(&l).unwrap_err();
    assert_eq!(e.field, "link");
    assert!(e.message.contains("4 MiB"), "{e}");
    // The unchecked encoding is exactly what decoding refuses.
    assert!(decode_link(&encode_link(&l)).is_err());
    // Under the cap, the checked link is the link.
    let small = parse_layout(&base().to_string()).unwrap();
    assert_eq!(catoptric::layout::checked_link(&small).unwrap(), encode_link(&small));
    // `catoptric link` refuses it too, naming the cap, with nothing on stdout.
    let path = std::env::temp_dir().join(format!("catoptric-link-cap-{}.json", std::process::id()));
    std::fs::write(&path, l.to_json_pretty()).unwrap();
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_catoptric")).arg("link").arg(&path).output().unwrap();
    let _ = std::fs::remove_file(&path);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(out.stdout.is_empty());
    assert!(err.contains("link") && err.contains("4 MiB") && err.lines().count() == 1, "{err}");
}
