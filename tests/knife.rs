//! The simulated knife-edge test (docs/FORMATS.md §3, `catoptric knife`):
//! the null zone agrees with the zone table's readings and the published
//! readings, a sphere at its centre darkens all at once, the lit fraction
//! of a sphere past its centre is a circular segment, and the command's
//! JSON and bad input.

mod stand_support;

use catoptric::design::{knife_picture, knife_view, surface_readings, zone_table, KnifeSpec, TestSource};
use serde_json::Value;
use stand_support::{run, Stand};

const R: f64 = 2000.0;
const D: f64 = 200.0;

fn spec(k: f64, s: f64, kx: f64, source: TestSource) -> KnifeSpec<'static> {
    KnifeSpec { radius: R, conic: k, diameter: D, knife_mm: s, knife_x_mm: kx, source, measured: None }
}

/// Published readings of an R = 2000 mm paraboloid: moving source
/// ρ²/(2R) (exact; Texereau, How to Make a Telescope, 2nd Eng. ed. 1984),
/// fixed source from an exact trace worked independently of this code
/// (≈ ρ²/R, the textbooks' approximation).
#[test]
fn paraboloid_null_zone_is_the_zone_of_the_published_reading() {
    let moving = [(30.0, 0.225), (50.0, 0.625), (70.0, 1.225), (90.0, 2.025)];
    let fixed = [(30.0, 0.45005), (50.0, 1.25039), (70.0, 2.45150), (90.0, 4.05410)];
    for (rho, reading) in moving {
        let v = knife_view(&spec(-1.0, reading, 0.0, TestSource::Moving)).unwrap();
        let r = v.null_radius_mm.expect("a zone nulls");
        assert!((r - rho).abs() < 1e-9 * rho, "moving {rho}: {r}");
    }
    for (rho, reading) in fixed {
        let v = knife_view(&spec(-1.0, reading, 0.0, TestSource::Fixed)).unwrap();
        let r = v.null_radius_mm.expect("a zone nulls");
        // The readings carry 5 decimals; dReading/dρ ≈ 2ρ/R.
        assert!((r - rho).abs() < 1e-5 / (2.0 * rho / R), "fixed {rho}: {r}");
    }
}

/// The zone table and the picture agree: a knife set at each zone's
/// reading nulls that zone, for the paraboloid and for a hyperboloid
/// (K = −4), moving and fixed source.
#[test]
fn knife_at_a_zone_reading_nulls_that_zone() {
    for k in [-1.0, -4.0] {
        for source in [TestSource::Moving, TestSource::Fixed] {
            let t = zone_table(R, k, D, 6, source, 550.0).unwrap();
            for z in &t.zones {
                let v = knife_view(&spec(k, z.reading_mm, 0.0, source)).unwrap();
                let r = v.null_radius_mm.unwrap_or(f64::NAN);
                assert!((r - z.r_mm).abs() < 1e-7 * z.r_mm, "K {k}, {source:?}, zone r {}: null at {r}", z.r_mm);
                assert!(!v.whole_mirror_nulls);
            }
        }
    }
}

/// Moving source on a conic: the zone whose normal meets the axis at
/// R − K z(ρ) from the vertex nulls (exact for a conic: the normal at
/// (ρ, z) crosses the axis at z + ρ/z′ and z′ = ρ/(R − (1+K)z)), checked
/// on the independent trace too: the ray from that zone crosses the axis
/// in the knife's plane.
#[test]
fn hyperboloid_null_zone_is_where_its_normal_meets_the_axis() {
    let k = -4.0;
    let rho = 60.0;
    let s = -k * stand_support::conic_z(R, k, rho);
    let v = knife_view(&spec(k, s, 0.0, TestSource::Moving)).unwrap();
    assert!((v.null_radius_mm.unwrap() - rho).abs() < 1e-8);
    let stand = Stand { r: R, k, s, moving: true, departure: None };
    assert!(stand.land(rho, 0.0).0.abs() < 1e-9);
}

/// A sphere with source and knife at its centre of curvature returns
/// every ray to the centre (elementary geometry): the whole mirror goes
/// dark at once as the knife crosses the axis — lit fraction from 1 to 0.
#[test]
fn sphere_at_its_centre_darkens_all_at_once() {
    for source in [TestSource::Moving, TestSource::Fixed] {
        let before = knife_view(&spec(0.0, 0.0, -0.001, source)).unwrap();
        let after = knife_view(&spec(0.0, 0.0, 0.001, source)).unwrap();
        assert!(before.lit_fraction > 0.9999, "{source:?}: {}", before.lit_fraction);
        assert!(after.lit_fraction < 1e-4, "{source:?}: {}", after.lit_fraction);
        assert!(before.whole_mirror_nulls && before.null_radius_mm.is_none());
        let pic = knife_picture(&spec(0.0, 0.0, 0.001, source), 64).unwrap();
        assert!(pic.lit.iter().all(|&l| l == 0.0));
        // Edge drawn back: every inside pixel fully lit, the vertex too (an
        // odd size puts a sub-sample on the axis, where the normal is +z).
        let pic = knife_picture(&spec(0.0, 0.0, -0.001, source), 63).unwrap();
        let centre = 31 * 63 + 31;
        assert_eq!(pic.inside[centre], 1.0);
        assert!(pic.lit.iter().zip(&pic.inside).all(|(&l, &i)| i == 0.0 || l == 1.0), "{source:?}: all lit");
    }
}

/// A sphere, fixed source, knife S past the centre with its edge at X = c:
/// a ray from (x, y) passes the centre and lands at X = −xS/√(R² − ρ²), so
/// the lit part is x ≤ −c√(R² − ρ²)/S, very nearly the chord x ≤ −cR/S;
/// the area of the disk on one side of a chord at distance e from the
/// centre, a² acos(−e/a) + e√(a² − e²) over πa² (elementary geometry),
/// gives the lit fraction.
#[test]
fn sphere_past_its_centre_shows_a_circular_segment_lit() {
    let a = 0.5 * D;
    let s = 5.0;
    for c in [0.0, 0.1, -0.2] {
        let e: f64 = -c * R / s;
        let want = (a * a * (-e / a).acos() + e * (a * a - e * e).sqrt()) / (std::f64::consts::PI * a * a);
        let v = knife_view(&spec(0.0, s, c, TestSource::Fixed)).unwrap();
        // The chord bends by (ρ/R)²/2 of e: a few 1e-4 of the area here.
        assert!((v.lit_fraction - want).abs() < 1e-3, "c {c}: {} vs {want}", v.lit_fraction);
        assert!(v.null_radius_mm.is_none() && !v.whole_mirror_nulls);
    }
}

#[test]
fn command_prints_the_contract_json() {
    // Zone ρ = 50 of an R = 2000 paraboloid reads 0.625 mm (Texereau, as above).
    let (code, out, err) =
        run(&["knife", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--knife-mm", "0.625", "--json"]);
    assert_eq!(code, 0, "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    assert!((v["null_radius_mm"].as_f64().unwrap() - 50.0).abs() < 1e-6);
    assert_eq!(v["measured"], Value::Bool(false), "no measured departure given");
    // With the edge on the axis, X(−x, −y) = −X(x, y): half the disk is lit.
    assert!((v["lit_fraction"].as_f64().unwrap() - 0.5).abs() < 1e-3);
    let (code, out, _) =
        run(&["knife", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--knife-mm", "-3", "--json"]);
    assert_eq!(code, 0);
    let v: Value = serde_json::from_str(&out).unwrap();
    assert!(v["null_radius_mm"].is_null(), "a paraboloid has no null inside its centre: {v}");
}

/// A measured profile from the testing view's CSV moves the null: a
/// departure −h(ρ/a)⁴ lowers the outer zones more and more, flattening
/// their slope, so their normals meet the axis farther out and the null
/// moves in; the independent trace of the same profile says where.
#[test]
fn measured_profile_moves_the_null_zone() {
    let dir = std::env::temp_dir().join(format!("catoptric-knife-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("profile.csv");
    let a = 0.5 * D;
    let h = 0.1e-3;
    let mut csv = String::from("radius_mm,departure_um\n");
    for i in 0..=50 {
        let rho = a * i as f64 / 50.0;
        csv.push_str(&format!("{rho},{}\n", -h * (rho / a).powi(4) * 1e3));
    }
    std::fs::write(&path, csv).unwrap();
    let s = 0.625;
    let (code, out, err) = run(&[
        "knife", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--knife-mm", "0.625", "--measured",
        path.to_str().unwrap(), "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    let got = v["null_radius_mm"].as_f64().unwrap();
    assert_eq!(v["measured"], Value::Bool(true), "the report says the mirror carries a measured departure");
    let dep = move |rho: f64| (-h * (rho / a).powi(4), -4.0 * h * rho.powi(3) / a.powi(4));
    let dep_fn: &dyn Fn(f64) -> (f64, f64) = &dep;
    let stand = Stand { r: R, k: -1.0, s, moving: true, departure: Some(dep_fn) };
    let want = stand_support::bisect(&|x| stand.land(x, 0.0).0, 1.0, a);
    assert!((got - want).abs() < 0.05, "{got} vs {want}");
    assert!(got < 49.0, "the null moved in from 50 mm: {got}");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn bad_input_exits_2_naming_the_flag() {
    let ok = ["knife", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--knife-mm", "1"];
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["knife", "--radius", "0", "--conic", "-1", "--diameter", "200", "--knife-mm", "1"], "--radius"),
        (vec!["knife", "--radius", "2000", "--conic", "-1", "--diameter", "0", "--knife-mm", "1"], "--diameter"),
        // An ellipsoid K = −0.5 of R = 100 ends at ρ = R/√0.5 ≈ 141 mm.
        (vec!["knife", "--radius", "100", "--conic", "-0.5", "--diameter", "300", "--knife-mm", "1"], "--diameter"),
        (vec!["knife", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--knife-mm", "-1999"], "--knife-mm"),
        (vec!["knife", "--radius", "2000", "--conic", "-1", "--diameter", "200", "--knife-mm", "1", "--knife-x-mm", "inf"], "--knife-x-mm"),
        ([&ok[..], &["--measured", "/nonexistent/p.csv"]].concat(), "--measured"),
    ];
    for (args, flag) in cases {
        let (code, out, err) = run(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(out.is_empty());
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(err.contains(flag), "{args:?}: {err}");
    }
}

/// The lit fraction is the share of the disk whose reflected rays pass
/// the knife: counted here on a fine grid of pupil points (area by
/// counting, common practice) through the independent trace
/// (`stand_support`, from the law of reflection), for knives off the axis, where
/// the dark part depends on the zone (so on both x and y), not just on x.
#[test]
fn lit_fraction_is_the_share_of_pupil_points_passing_the_knife() {
    let a = 0.5 * D;
    let n = 600;
    let cases = [(-1.0, 1.225, 0.02, true), (-1.0, 2.0, -0.05, true), (-4.0, 3.0, 0.1, false)];
    for (k, s, kx, moving) in cases {
        let stand = Stand { r: R, k, s, moving, departure: None };
        let (mut inside, mut lit) = (0usize, 0usize);
        for i in 0..n {
            for j in 0..n {
                let (x, y) = (a * (2.0 * (i as f64 + 0.5) / n as f64 - 1.0), a * (2.0 * (j as f64 + 0.5) / n as f64 - 1.0));
                if x.hypot(y) <= a {
                    inside += 1;
                    lit += usize::from(stand.land(x, y).0 >= kx);
                }
            }
        }
        let want = lit as f64 / inside as f64;
        let source = if moving { TestSource::Moving } else { TestSource::Fixed };
        let got = knife_view(&spec(k, s, kx, source)).unwrap().lit_fraction;
        // A 600 × 600 grid: the edge pixels of the lit region move the
        // count by a few 1e-4 at most.
        assert!((got - want).abs() < 2e-3, "K {k}, S {s}, X {kx}: {got} vs grid {want}");
        assert!(want > 0.05 && want < 0.95, "the case should show both light and shadow: {want}");
    }
}

/// A ray landing on the knife's edge itself (to rounding) passes: with a
/// sphere, its source and the knife at its centre, every ray returns to
/// the centre (elementary geometry: each normal passes through it), so an
/// edge exactly on the axis leaves the mirror lit.
#[test]
fn rays_grazing_the_edge_pass() {
    for source in [TestSource::Moving, TestSource::Fixed] {
        let v = knife_view(&spec(0.0, 0.0, 0.0, source)).unwrap();
        assert!(v.lit_fraction > 0.9999, "{source:?}: {}", v.lit_fraction);
    }
}

/// A null is |X/x| below 1e-11 (the ray crosses the axis at the knife to
/// that relative precision): a sphere with the knife a few 1e-9 mm from
/// its centre still nulls as a whole (X = −2xS/R for the moving source,
/// elementary geometry, so X/x = 1e-12 here), while 1e-3 mm does not.
#[test]
fn whole_mirror_null_is_judged_on_the_relative_crossing() {
    let near = knife_view(&spec(0.0, 1e-9, 0.0, TestSource::Moving)).unwrap();
    assert!(near.whole_mirror_nulls, "{near:?}");
    let off = knife_view(&spec(0.0, 1e-3, 0.0, TestSource::Moving)).unwrap();
    assert!(!off.whole_mirror_nulls && off.null_radius_mm.is_none(), "{off:?}");
}

/// Moving-source readings of the target surface: ρ²/(2R) for a
/// paraboloid (Texereau, as above) and −K z(ρ) for other conics (the
/// normal's axis crossing, as above); a bad radius is named by its index.
#[test]
fn surface_readings_are_the_normal_crossings() {
    let rs = [20.0, 45.0, 90.0];
    let got = surface_readings(R, -1.0, D, None, &rs).unwrap();
    assert_eq!(got.len(), 3);
    for (r, g) in rs.iter().zip(&got) {
        assert!((g - r * r / (2.0 * R)).abs() < 1e-9, "ρ {r}: {g}");
    }
    let got = surface_readings(R, -4.0, D, None, &rs).unwrap();
    for (r, g) in rs.iter().zip(&got) {
        let want = 4.0 * stand_support::conic_z(R, -4.0, *r);
        assert!((g - want).abs() < 1e-9, "ρ {r}: {g} vs {want}");
    }
    let e = surface_readings(R, -1.0, D, None, &[10.0, f64::NAN]).unwrap_err();
    assert!(e.to_string().contains("radii[1]"), "{e}");
}

/// Off the horizontal diameter too, the stand's landing point (X, Y) is the
/// independent exact trace's (tests/stand_support: the law of reflection
/// on the conic's normal, r = d − 2(d·n)n, common practice): paraboloid,
/// hyperboloid and oblate ellipsoid, moving and fixed source, points in
/// every quadrant.
#[test]
fn landing_points_off_the_diameter_match_the_independent_trace() {
    use catoptric::design::test_stand::{StandSpec, TestStand};
    for (k, s, source) in [(-1.0, 0.6, TestSource::Moving), (-4.0, -3.0, TestSource::Fixed), (0.5, 2.0, TestSource::Moving)] {
        let stand = TestStand::new(StandSpec {
            radius: R,
            conic: k,
            diameter: D,
            offset_field: "knife_mm",
            offset_mm: s,
            source,
            measured: None,
        })
        .unwrap();
        let indep = Stand { r: R, k, s, moving: source == TestSource::Moving, departure: None };
        for (x, y) in [(30.0, 40.0), (-70.0, 20.0), (-10.0, -90.0), (55.0, -55.0), (0.0, 80.0)] {
            let (gx, gy) = stand.landing(x, y).expect("the ray reaches the plane");
            let (wx, wy) = indep.land(x, y);
            assert!((gx - wx).abs() < 1e-9 && (gy - wy).abs() < 1e-9, "K {k}, ({x}, {y}): ({gx}, {gy}) vs ({wx}, {wy})");
        }
    }
}

/// Departure knots handed to the library directly (not through the CSV
/// reader) are checked too: at least two rows, radii from 0 or more and
/// increasing, finite numbers; the message names the row (common practice).
#[test]
fn bad_departure_knots_are_refused_naming_the_row() {
    let cases: [(&[[f64; 2]], &str); 5] = [
        (&[[0.0, 0.0]], "measured"),
        (&[[0.0, 0.0], [50.0, 1e-4], [50.0, 2e-4]], "measured[2]"),
        (&[[-1.0, 0.0], [50.0, 1e-4]], "measured[0]"),
        (&[[0.0, 0.0], [f64::NAN, 1e-4]], "measured[1]"),
        (&[[0.0, 0.0], [50.0, f64::INFINITY]], "measured[1]"),
    ];
    let view = |knots: &[[f64; 2]]| knife_view(&KnifeSpec { measured: Some(knots), ..spec(-1.0, 0.6, 0.0, TestSource::Moving) });
    for (knots, field) in cases {
        let e = view(knots).unwrap_err();
        assert_eq!(e.field, field, "{knots:?}: {e}");
    }
    assert!(view(&[[0.0, 0.0], [100.0, 1e-4]]).is_ok());
    // The row limit is inclusive.
    let max = catoptric::design::measured::MAX_ROWS;
    let rows = |n: usize| -> Vec<[f64; 2]> { (0..n).map(|i| [100.0 * i as f64 / (n - 1) as f64, 0.0]).collect() };
    assert!(view(&rows(max)).is_ok());
    assert_eq!(view(&rows(max + 1)).unwrap_err().field, "measured");
}
