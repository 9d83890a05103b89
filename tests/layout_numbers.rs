//! Numbers in layout files: decimal text is read correctly rounded, so a
//! file or link carries every double exactly, and whole numbers written
//! with a fraction part (`1.0`, `2000.0`) are read where an integer is
//! expected, as JSON does not tell the two apart (RFC 8259 §6: a number is
//! a number; common practice for JSON readers).

mod common;
use catoptric::layout::{decode_link, encode_link, parse_layout};
use common::Rng;
use serde_json::{json, Value};

fn base() -> Value {
    json!({
      "format": "catoptric-layout", "version": 1, "name": "t",
      "wavelength_nm": 550, "max_bounces": 16,
      "elements": [
        { "kind": "mirror", "id": "m", "vertex": [0, 1000], "axis_deg": 180, "form": "revolved",
          "profile": { "radius": 2000, "conic": -1 }, "aperture": { "diameter": 200 } },
        { "kind": "screen", "id": "s", "center": [0, 0], "axis_deg": 0, "size": 20, "shape": "square" }
      ],
      "sources": [
        { "kind": "beam", "id": "b", "center": [0, 500], "direction_deg": 0, "diameter": 200, "rays": 2000,
          "pattern": "hex" }
      ]
    })
}

/// The layout text with `conic` and `vertex[0]` written as the given
/// decimal strings (17 significant digits, as a shortest round trip needs
/// at most that many: IEEE 754-2019 §5.12.2).
fn with_digits(conic: &str, y: &str) -> String {
    base()
        .to_string()
        .replace("\"conic\":-1", &format!("\"conic\":{conic}"))
        .replace("\"vertex\":[0,1000]", &format!("\"vertex\":[{y},1000]"))
}

#[test]
fn seventeen_digit_values_are_read_correctly_rounded_and_survive_a_link() {
    // Rust's own `str::parse::<f64>` is correctly rounded (IEEE 754 round to
    // nearest); the layout reader must agree with it digit for digit.
    let mut cases: Vec<(String, String)> = vec![
        ("-0.99999999999999989".into(), "1234.5678901234567".into()),
        ("-1.0000000000000002".into(), "0.30000000000000004".into()),
        ("-0.12345678901234567".into(), "-8765432.1098765437".into()),
    ];
    let mut rng = Rng(17);
    for _ in 0..400 {
        let k = rng.range(-3.0, 3.0);
        let y = rng.range(-9.0e6, 9.0e6);
        cases.push((format!("{k:.16e}"), format!("{y:.16e}")));
    }
    for (k, y) in &cases {
        let text = with_digits(k, y);
        let l = parse_layout(&text).unwrap_or_else(|e| panic!("{k}, {y}: {e}"));
        let catoptric::layout::Element::Mirror(m) = &l.elements[0] else { panic!() };
        assert_eq!(m.profile.conic.to_bits(), k.parse::<f64>().unwrap().to_bits(), "conic {k}");
        assert_eq!(m.vertex[0].to_bits(), y.parse::<f64>().unwrap().to_bits(), "vertex {y}");
        let back = decode_link(&encode_link(&l)).unwrap();
        assert_eq!(back, l, "link round trip of {k}, {y}");
        let again = parse_layout(&l.to_json_pretty()).unwrap();
        assert_eq!(again, l, "file round trip of {k}, {y}");
    }
}

#[test]
fn whole_number_floats_are_read_where_integers_are_expected() {
    let mut v = base();
    v["version"] = json!(1.0);
    v["max_bounces"] = json!(16.0);
    v["sources"][0]["rays"] = json!(2000.0);
    let l = parse_layout(&v.to_string()).expect("1.0, 16.0 and 2000.0 are whole numbers");
    assert_eq!(l, parse_layout(&base().to_string()).unwrap());
    assert_eq!(l.sources[0].rays(), 2000);
    // Written back as integers.
    let text = l.to_json_compact();
    assert!(text.contains("\"rays\":2000") && text.contains("\"version\":1"), "{text}");
    // 2e3 is the same number.
    let text = base().to_string().replace("\"rays\":2000", "\"rays\":2e3");
    assert_eq!(parse_layout(&text).unwrap().sources[0].rays(), 2000);
}

#[test]
fn fractional_negative_or_huge_counts_are_refused_with_the_field() {
    for (path, bad) in [
        ("rays", json!(2000.5)),
        ("rays", json!(-1)),
        ("rays", json!(-1.0)),
        ("rays", json!(1e300)),
        ("rays", json!(1.8446744073709552e19)),
        ("max_bounces", json!(4294967296.0)),
        ("max_bounces", json!(16.25)),
        ("version", json!(1.5)),
    ] {
        let mut v = base();
        if path == "rays" {
            v["sources"][0]["rays"] = bad.clone();
        } else {
            v[path] = bad.clone();
        }
        let e = parse_layout(&v.to_string()).expect_err(&format!("{path} = {bad}"));
        let want = if path == "rays" { "sources[0].rays" } else { path };
        assert_eq!(e.field, want, "{path} = {bad}: {e}");
        assert!(e.message.len() < 200, "short message: {e}");
        assert!(!e.message.contains("000000000000"), "no long digit runs: {e}");
    }
}
