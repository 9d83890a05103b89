//! The simulated Ronchi test (docs/FORMATS.md §3, `catoptric ronchi`):
//! band edges of a sphere against the closed forms derived below (common
//! practice of the Ronchi test), of paraboloids, hyperboloids and an
//! oblate ellipsoid against the independent exact trace of
//! tests/stand_support, a measured profile with a turned edge, the
//! picture, and the command's JSON and bad input.

mod stand_support;

use catoptric::design::{ronchi_picture, ronchigram, RonchiSpec, TestSource};
use serde_json::Value;
use stand_support::{band_edges, run, Stand};

const R: f64 = 2000.0;
const D: f64 = 200.0;

fn spec(k: f64, lines: f64, s: f64, source: TestSource) -> RonchiSpec<'static> {
    RonchiSpec { radius: R, conic: k, diameter: D, lines_per_mm: lines, offset_mm: s, source, measured: None }
}

fn edges(spec: &RonchiSpec<'_>) -> Vec<f64> {
    ronchigram(spec).expect("valid spec").band_edges_mm
}

/// Sphere, moving source (source and grating together, S from the centre
/// of curvature). Paraxially the mirror images the source at distance
/// u = R + S at v = R(R+S)/(R+2S) (mirror equation 1/u + 1/v = 2/R); the
/// grating stands (R+S) − v = 2S(R+S)/(R+2S) beyond that image, so a ray
/// from height x lands at X = −x·[(R+S) − v]/v = −2Sx/R. Edges are where
/// |X| is a whole number of half periods p/2: x_k = k·pR/(4|S|), equally
/// spaced straight bands (common practice of the Ronchi test: twice the
/// band count of the fixed-source test).
#[test]
fn sphere_moving_source_gives_equally_spaced_bands_of_the_paraxial_spacing() {
    for (lines, s) in [(4.0, 10.0), (4.0, -10.0), (2.5, 16.0)] {
        let p = 1.0 / lines;
        let spacing = p * R / (4.0 * f64::abs(s));
        let e = edges(&spec(0.0, lines, s, TestSource::Moving));
        let expected = ((0.5 * D) / spacing).floor() as usize;
        assert_eq!(e.len(), expected, "lines {lines}, S {s}: {e:?}");
        for (i, x) in e.iter().enumerate() {
            let xk = (i + 1) as f64 * spacing;
            // Third-order departure from the paraxial spacing is of order
            // (x/R)², 0.25 % at the rim of this f/5 mirror.
            assert!((x - xk).abs() <= 3e-3 * xk, "lines {lines}, S {s}, edge {i}: {x} vs {xk}");
        }
    }
}

/// Sphere, fixed source at the centre of curvature: every ray returns
/// through the centre exactly (the centre is its own image), so a ray
/// from (x, 0, z) lands at X = −x·S/(R − z) = −x·S/√(R² − x²) and the edges
/// are exactly x_k = R(kp/2)/√(S² + (kp/2)²) (elementary geometry; the
/// paraxial spacing pR/(2S) is the common-practice figure).
#[test]
fn sphere_fixed_source_edges_match_the_exact_closed_form() {
    for (lines, s) in [(4.0, 5.0), (4.0, -5.0), (1.0, 30.0)] {
        let p: f64 = 1.0 / lines;
        let e = edges(&spec(0.0, lines, s, TestSource::Fixed));
        assert!(!e.is_empty());
        for (i, x) in e.iter().enumerate() {
            let h = (i + 1) as f64 * p / 2.0;
            let xk = R * h / (s * s + h * h).sqrt();
            assert!((x - xk).abs() < 1e-8, "lines {lines}, S {s}, edge {i}: {x} vs {xk}");
            let paraxial = (i + 1) as f64 * p * R / (2.0 * f64::abs(s));
            assert!((x - paraxial).abs() < 2e-3 * paraxial);
        }
    }
}

/// Regression: a sphere with the grating through its centre of curvature
/// sent every ray to the ruling edge on the axis, and rounding noise of the
/// trace (some 1e-13 mm either side) was reported as hundreds of band
/// edges. Every ray returns to the centre (elementary geometry), so the
/// whole mirror shows one tone: no edge, and a picture of one tone.
#[test]
fn sphere_with_the_grating_at_its_centre_shows_no_band_edge() {
    for source in [TestSource::Moving, TestSource::Fixed] {
        assert_eq!(edges(&spec(0.0, 4.0, 0.0, source)), Vec::<f64>::new(), "{source:?}");
        // The finest grating allowed: the noise is 4000 times more levels.
        assert_eq!(edges(&spec(0.0, 1000.0, 0.0, source)), Vec::<f64>::new(), "{source:?}, 1000 lines per mm");
        let fine = ronchi_picture(&spec(0.0, 1000.0, 0.0, source), 64).unwrap();
        assert!(fine.lit.iter().all(|&l| l == 0.0), "{source:?}, 1000 lines per mm: dark");
        let pic = ronchi_picture(&spec(0.0, 4.0, 0.0, source), 64).unwrap();
        let inside: Vec<f32> = pic.lit.iter().zip(&pic.inside).filter(|(_, i)| **i > 0.0).map(|(l, _)| *l).collect();
        assert!(inside.iter().all(|&l| l == inside[0]), "{source:?}: one tone");
        // X = 0 is the start of an opaque half (kp ≤ X < kp + p/2 with
        // k = 0, the grating convention of docs/FORMATS.md): dark glass.
        assert_eq!(inside[0], 0.0, "{source:?}: every ray ends on the ruling edge, the start of an opaque half");
    }
}

/// Which side is dark: the fixed-source sphere sends the ray from (x, y)
/// to X = −x·S/√(R² − ρ²) (elementary geometry, as above). For S = 10 mm,
/// p = 0.25 mm the first edge lies at |x| ≈ pR/(2S) = 25 mm (|X| = p/2), so within
/// 20 mm of the centre the glass right of it (x > 0: X in (−p/2, 0), an
/// open half) is lit and the glass left of it (X in (0, p/2), opaque)
/// is dark; the picture has the mirror's +x on the right (docs/FORMATS.md).
#[test]
fn the_picture_shows_the_opaque_half_dark() {
    let size = 200; // 1 mm a pixel across the 200 mm mirror
    let pic = ronchi_picture(&spec(0.0, 4.0, 10.0, TestSource::Fixed), size).unwrap();
    let row = size / 2;
    for off in 1..20 {
        assert_eq!(pic.lit[row * size + size / 2 + off], 1.0, "{off} mm right of the centre is lit");
        assert_eq!(pic.lit[row * size + size / 2 - 1 - off], 0.0, "{off} mm left of the centre is dark");
    }
}

/// The sphere's bands are straight: in the picture, every row of the
/// middle of the disk changes from light to dark at the same columns as
/// the middle row (to a pixel; the exact fixed-source landing point
/// −(x, y)S/√(R² − ρ²) bends them by (ρ/R)²/2, far below a pixel here).
#[test]
fn sphere_bands_are_straight_in_the_picture() {
    let size = 200;
    let pic = ronchi_picture(&spec(0.0, 4.0, 10.0, TestSource::Fixed), size).unwrap();
    let changes = |row: usize| -> Vec<usize> {
        let lit: Vec<bool> = (0..size).map(|c| pic.lit[row * size + c] > 0.5).collect();
        (1..size).filter(|&c| pic.inside[row * size + c] == 1.0 && pic.inside[row * size + c - 1] == 1.0 && lit[c] != lit[c - 1]).collect()
    };
    let mid = changes(size / 2);
    assert!(mid.len() >= 6, "{mid:?}");
    for row in (size / 2 - 60)..(size / 2 + 60) {
        let here = changes(row);
        // Rows keep the bands that fit inside their chord.
        for c in &here {
            assert!(mid.iter().any(|m| m.abs_diff(*c) <= 1), "row {row}: change at column {c}, middle row {mid:?}");
        }
    }
}

/// Paraboloid, hyperboloid (K = −4) and oblate ellipsoid (K = 0.5), grating
/// inside and outside the centre of curvature, moving and fixed source:
/// the band edges agree with the independent exact trace.
#[test]
fn conic_band_edges_match_an_independent_exact_trace() {
    for k in [-1.0, -4.0, 0.5] {
        for s in [-6.0, 7.0] {
            for (source, moving) in [(TestSource::Moving, true), (TestSource::Fixed, false)] {
                let lines = 5.0;
                let got = edges(&spec(k, lines, s, source));
                let stand = Stand { r: R, k, s, moving, departure: None };
                let want = band_edges(&stand, 0.5 * D, 1.0 / lines, 20_000);
                assert!(!want.is_empty(), "K {k}, S {s}: too few bands to compare ({want:?})");
                assert_eq!(got.len(), want.len(), "K {k}, S {s}, {source:?}: {got:?} vs {want:?}");
                for (g, w) in got.iter().zip(&want) {
                    assert!((g - w).abs() < 1e-7, "K {k}, S {s}, {source:?}: {g} vs {w}");
                }
                assert!(got.windows(2).all(|w| w[0] < w[1]) && got[0] > 0.0 && *got.last().unwrap() <= 0.5 * D);
            }
        }
    }
}

/// A turned-down edge: the measured departure e(ρ) = −h((ρ − ρ₀)/(a − ρ₀))³
/// beyond ρ₀ = 0.8a (h = 0.2 µm), given as a CSV table like the testing
/// view's. The bands keep their places inside ρ₀ and bend at the rim,
/// where they follow the independent trace of the same analytic profile
/// (the library interpolates the table with a spline: agreement to a small
/// fraction of a band).
#[test]
fn a_turned_edge_bends_the_band_ends() {
    let a = 0.5 * D;
    let (rho0, h) = (0.8 * a, 0.2e-3);
    let dep = move |rho: f64| -> (f64, f64) {
        if rho <= rho0 {
            return (0.0, 0.0);
        }
        let u = (rho - rho0) / (a - rho0);
        (-h * u * u * u, -3.0 * h * u * u / (a - rho0))
    };
    let mut csv = String::from("radius_mm, departure_um\n");
    for i in 0..=80 {
        let rho = a * i as f64 / 80.0;
        csv.push_str(&format!("{rho}, {}\n", dep(rho).0 * 1e3));
    }
    let knots = catoptric::design::parse_departure_csv(&csv).unwrap();
    let (k, lines, s) = (-1.0, 4.0, -8.0);
    let target = edges(&spec(k, lines, s, TestSource::Moving));
    let measured_spec = RonchiSpec { measured: Some(&knots), ..spec(k, lines, s, TestSource::Moving) };
    let measured_report = ronchigram(&measured_spec).expect("valid spec");
    assert!(measured_report.measured, "the report says the mirror carries a measured departure");
    assert!(!ronchigram(&spec(k, lines, s, TestSource::Moving)).unwrap().measured);
    let measured = measured_report.band_edges_mm;
    let dep_fn: &dyn Fn(f64) -> (f64, f64) = &dep;
    let stand = Stand { r: R, k, s, moving: true, departure: Some(dep_fn) };
    let want = band_edges(&stand, a, 1.0 / lines, 20_000);
    assert_eq!(measured.len(), want.len(), "{measured:?} vs {want:?}");
    let spacing = |v: &[f64], i: usize| if i + 1 < v.len() { v[i + 1] - v[i] } else { v[i] - v[i - 1] };
    for (i, (m, w)) in measured.iter().zip(&want).enumerate() {
        assert!((m - w).abs() < 0.02 * spacing(&want, i), "edge {i}: {m} vs {w}");
    }
    // Inside ρ₀ the bands stay where the target has them ...
    for (t, m) in target.iter().zip(&measured).filter(|(t, _)| **t < 0.7 * a) {
        assert!((t - m).abs() < 1e-3, "{t} vs {m}");
    }
    // ... and the band ends near the rim move by a good part of a band.
    let moved = target.iter().zip(&measured).filter(|(t, _)| **t > 0.85 * a).map(|(t, m)| (t - m).abs()).fold(0.0, f64::max);
    let outer = target.len() - 1;
    assert!(moved > 0.1 * spacing(&target, outer), "rim edges moved only {moved} mm");
}

#[test]
fn command_prints_the_contract_json_and_writes_the_picture() {
    let dir = std::env::temp_dir().join(format!("catoptric-ronchi-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let png = dir.join("r.png");
    let (code, out, err) = run(&[
        "ronchi", "--radius", "2000", "--conic", "0", "--diameter", "200", "--lines-per-mm", "4", "--offset-mm", "10",
        "--png", png.to_str().unwrap(), "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    for key in ["source", "offset_mm", "lines_per_mm", "band_edges_mm"] {
        assert!(v.get(key).is_some(), "missing {key}: {v}");
    }
    assert_eq!(v["source"], "moving");
    // pR/(4S) = 0.25·2000/40 = 12.5 mm (derived above): 8 edges to the rim.
    let e: Vec<f64> = v["band_edges_mm"].as_array().unwrap().iter().map(|x| x.as_f64().unwrap()).collect();
    assert_eq!(e.len(), 8);
    assert!((e[0] - 12.5).abs() < 0.01);
    let bytes = std::fs::read(&png).unwrap();
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "a PNG signature");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn bad_input_exits_2_naming_the_flag() {
    let base = ["ronchi", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--lines-per-mm", "4", "--offset-mm", "5"];
    let with = |flag: &str, value: &str| -> Vec<String> {
        let mut v: Vec<String> = base.iter().map(|s| s.to_string()).collect();
        let i = v.iter().position(|a| a == flag).unwrap();
        v[i + 1] = value.to_string();
        v
    };
    let cases: Vec<(Vec<String>, &str)> = vec![
        (with("--lines-per-mm", "-4"), "--lines-per-mm"),
        (with("--lines-per-mm", "0"), "--lines-per-mm"),
        (with("--diameter", "0"), "--diameter"),
        (with("--diameter", "-10"), "--diameter"),
        (with("--radius", "0"), "--radius"),
        // An ellipsoid K = 0.5 of R = 200 ends at ρ = R/√1.5 ≈ 163 mm.
        (vec!["ronchi", "--radius", "200", "--conic", "0.5", "--diameter", "400", "--lines-per-mm", "4", "--offset-mm", "5"].into_iter().map(String::from).collect(), "--diameter"),
        (with("--offset-mm", "-2000"), "--offset-mm"),
        (with("--offset-mm", "nan"), "--offset-mm"),
        ([base.iter().map(|s| s.to_string()).collect::<Vec<_>>(), vec!["--source".into(), "sideways".into()]].concat(), "--source"),
        ([base.iter().map(|s| s.to_string()).collect::<Vec<_>>(), vec!["--measured".into(), "/nonexistent/profile.csv".into()]].concat(), "--measured"),
    ];
    for (args, flag) in cases {
        let refs: Vec<&str> = args.iter().map(String::as_str).collect();
        let (code, out, err) = run(&refs);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?} printed {out}");
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(err.contains(flag), "{args:?}: {err}");
    }
}

/// The grating's ruling density has an inclusive upper limit (docs/FORMATS.md
/// §3): 1000 lines per mm is accepted, anything above refused naming the
/// field. The grating stands 0.01 mm from the centre of curvature so even
/// the finest grating gives a few bands (pR/(4S) = 50 mm apart; common
/// practice, derived in the first test above).
#[test]
fn lines_per_mm_limit_is_inclusive() {
    let at = ronchigram(&spec(0.0, 1000.0, 0.01, TestSource::Moving)).expect("1000 lines per mm is allowed");
    assert_eq!(at.band_edges_mm.len(), 2, "{:?}", at.band_edges_mm);
    let err = ronchigram(&spec(0.0, 1000.5, 0.01, TestSource::Moving)).unwrap_err().to_string();
    assert!(err.contains("lines_per_mm") && err.contains("1000"), "{err}");
    assert!(ronchi_picture(&spec(0.0, 1000.5, 0.01, TestSource::Moving), 32).is_err());
}
