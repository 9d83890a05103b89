//! The command line's number formatter against the case table it shares
//! with the page (tests/format_cases.json; the page's side is
//! tests/browser/format.test.mjs). The expected strings are the formatting
//! rules written out by hand (common practice for figures: significant
//! digits, SI units switched by magnitude, thin-space digit groups as in
//! ISO 80000-1 §7.3.1), not the formatter's own output.

use catoptric::format::{length_mm, position_mm, sig, spot_um};

#[test]
fn shared_cases_print_as_the_table_says() {
    let text = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/tests/format_cases.json")).unwrap();
    let doc: serde_json::Value = serde_json::from_str(&text).unwrap();
    let cases = doc["cases"].as_array().unwrap();
    assert!(cases.len() >= 20);
    for c in cases {
        let v = c["v"].as_f64().unwrap();
        let n = c["n"].as_u64().unwrap() as usize;
        let got = match c["kind"].as_str().unwrap() {
            "sig" => sig(v, n),
            "spot" => spot_um(v, n),
            "length" => length_mm(v, n),
            "position" => position_mm(v, c["scale"].as_f64().unwrap(), n),
            k => panic!("unknown kind {k}"),
        };
        assert_eq!(got, c["want"].as_str().unwrap(), "{c}");
    }
}

#[test]
fn no_signed_zero_and_no_long_digit_runs() {
    for v in [-0.0, -1e-300, -4e-9] {
        assert!(!position_mm(v, 100.0, 5).contains('−'), "{v}");
        assert!(!spot_um(v, 4).contains('−'), "{v}");
    }
    assert!(sig(1e308, 4).len() < 20);
    assert!(sig(5e-324, 4).len() < 20);
    assert_eq!(sig(f64::NAN, 4), "–");
}
