//! Measured mirrors: departure tables, surfaces rebuilt from moving-source
//! readings, and the zones that need work.
//!
//! Reference: the moving-source reading is the normal intercept
//! z + ρ/z′ − R (where the normal at (ρ, z) meets the axis: elementary
//! calculus); a surface built from known
//! departures must come back from its own readings.

use catoptric::analysis::spot_stats;
use catoptric::design::{
    departures_needing_work, measured_layout, moving_source_reading, parse_departure_csv, profile_from_readings, zone_edges, zones_needing_work,
    ZoneVerdict,
};
use catoptric::design::measured::MAX_ROWS;
use catoptric::geometry::Profile;
use catoptric::layout::{parse_layout, Element};
use catoptric::{trace, Scene, TraceOptions};

const R: f64 = 2000.0;
const D: f64 = 200.0;

/// Exact moving-source reading of the paraboloid plus `bump(ρ)` (mm),
/// from the normal-intercept definition, slope by central difference.
fn reading_of(rho: f64, bump: &dyn Fn(f64) -> f64) -> f64 {
    reading_of_conic(-1.0, rho, bump)
}

/// The same for the conic of constant `k`.
fn reading_of_conic(k: f64, rho: f64, bump: &dyn Fn(f64) -> f64) -> f64 {
    let p = Profile::conic(Some(R), k);
    let z = |r: f64| p.conic_sag_slope(r).0 + bump(r);
    let h = 1e-4;
    let slope = (z(rho + h) - z(rho - h)) / (2.0 * h);
    z(rho) + rho / slope - R
}

/// RMS zone radii of `n` equal-area zones.
fn zone_radii(n: usize) -> Vec<f64> {
    zone_edges(D, n).windows(2).map(|e| ((e[0] * e[0] + e[1] * e[1]) / 2.0).sqrt()).collect()
}

#[test]
fn departure_csv_with_header_units_and_comments() {
    let text = "# bench test 3\nradius_mm, departure_nm\n0, 0\n25, 12.5\n\n50;30\n75\t-20\n100 -45\n";
    let k = parse_departure_csv(text).unwrap();
    assert_eq!(k.len(), 5);
    assert_eq!(k[1], [25.0, 12.5e-6]);
    assert_eq!(k[4], [100.0, -45e-6]);
    // Without a header the departure is in µm.
    let k = parse_departure_csv("0,0\n50,0.1\n").unwrap();
    assert_eq!(k[1], [50.0, 1e-4]);
    let k = parse_departure_csv("r,departure_mm\n0,0\n50,0.001\n").unwrap();
    assert_eq!(k[1][1], 0.001);
    let k = parse_departure_csv("radius (mm), departure (µm)\n0, 0\n50, 0.25\n").unwrap();
    assert_eq!(k[1][1], 0.25e-3);
}

#[test]
fn departure_csv_errors_name_the_line() {
    let cases = [
        ("0,0\n10,abc\n", "csv line 2 (departure)"),
        ("0,0\nx1,2\n", "csv line 2 (radius)"),
        ("0,0\n10,1\n5,2\n", "csv line 3 (radius)"),
        ("0,0\n10,1,7\n", "csv line 2"),
        ("0,0\n10,\n", "csv line 2 (departure)"),
        ("radius,height\n0,0\n", "csv line 1 (departure)"),
        ("0,0\n", "csv"),
        ("", "csv"),
        ("0,0\n-4,1\n", "csv line 2 (radius)"),
        ("0,0\n10,NaN\n", "csv line 2 (departure)"),
        ("0,0\n10,1e400\n", "csv line 2 (departure)"),
    ];
    for (text, field) in cases {
        let e = parse_departure_csv(text).unwrap_err();
        assert_eq!(e.field, field, "{text:?}: {e}");
    }
    // Arbitrary bytes never panic.
    let mut seed = 0x2545_f491_4f6c_dd1du64;
    for _ in 0..2000 {
        let s: String = (0..40)
            .map(|_| {
                seed ^= seed << 13;
                seed ^= seed >> 7;
                seed ^= seed << 17;
                b"0123456789.,;-e \n#xn"[(seed % 20) as usize] as char
            })
            .collect();
        let _ = parse_departure_csv(&s);
    }
}

#[test]
fn perfect_readings_give_the_design_surface() {
    let radii = zone_radii(5);
    let readings: Vec<[f64; 2]> = radii.iter().map(|&r| [r, moving_source_reading(R, -1.0, r)]).collect();
    let knots = profile_from_readings(R, -1.0, D, &readings).unwrap();
    assert_eq!(knots.first().unwrap()[0], 0.0);
    assert!((knots.last().unwrap()[0] - 100.0).abs() < 1e-9);
    for k in &knots {
        assert!(k[1].abs() < 1e-10, "{k:?}");
    }
}

#[test]
fn known_departure_comes_back_for_every_conic() {
    // Hyperboloid, prolate and oblate ellipsoid targets: readings from the
    // normal intercept of conic + a 100 nm ring (not from the crate's
    // reading function), surface rebuilt from 20 zones relative to that
    // conic. A mirror that is exactly the conic comes back flat.
    let bump = |r: f64| 1e-4 * (-((r - 60.0) / 15.0).powi(2)).exp();
    let none = |_: f64| 0.0;
    let radii = zone_radii(20);
    for k in [-4.0, -0.5, 0.6] {
        for (what, b) in [("ring", &bump as &dyn Fn(f64) -> f64), ("exact conic", &none)] {
            let readings: Vec<[f64; 2]> = radii.iter().map(|&r| [r, reading_of_conic(k, r, b)]).collect();
            let knots = profile_from_readings(R, k, D, &readings).unwrap();
            for kn in knots.iter().filter(|kn| kn[0] >= radii[0]) {
                assert!((kn[1] - b(kn[0])).abs() < 8e-6, "K = {k}, {what}, ρ {}: {} vs {}", kn[0], kn[1], b(kn[0]));
            }
        }
    }
}

#[test]
fn known_departure_comes_back_from_its_readings() {
    // A smooth raised ring of 100 nm: readings computed from the normal
    // intercept of the perturbed surface, surface rebuilt from 20 zones.
    let bump = |r: f64| 1e-4 * (-((r - 60.0) / 15.0).powi(2)).exp();
    let radii = zone_radii(20);
    let readings: Vec<[f64; 2]> = radii.iter().map(|&r| [r, reading_of(r, &bump)]).collect();
    let knots = profile_from_readings(R, -1.0, D, &readings).unwrap();
    for k in &knots {
        if k[0] >= radii[0] && k[0] <= 100.0 {
            assert!((k[1] - bump(k[0])).abs() < 8e-6, "ρ {}: {} vs {}", k[0], k[1], bump(k[0]));
        }
    }
}

#[test]
fn measured_layout_traces_like_the_surface_it_carries() {
    // A paraboloid carrying the sphere-minus-paraboloid departure is the
    // sphere: the traced spot at the design focus matches a plain sphere
    // (compare a closed form against the general path, common practice).
    let p = Profile::conic(Some(R), -1.0);
    let s = Profile::conic(Some(R), 0.0);
    let knots: Vec<[f64; 2]> =
        (0..=40).map(|i| 2.5 * i as f64).map(|r| [r, s.conic_sag_slope(r).0 - p.conic_sag_slope(r).0]).collect();
    let rms = |dep: &[[f64; 2]], k: f64| {
        let l = measured_layout("test", R, k, D, dep).unwrap();
        let l = parse_layout(&l.to_json_pretty()).unwrap();
        let scene = Scene::compile(&l);
        let res = trace(&scene, TraceOptions { rays: Some(5000), ..Default::default() });
        spot_stats(&res.screens[0], Some(0)).rms_radius
    };
    let zero = [[0.0, 0.0], [100.0, 0.0]];
    assert!(rms(&zero, -1.0) < 1e-5, "perfect paraboloid");
    let a = rms(&knots, -1.0);
    let b = rms(&zero, 0.0);
    assert!((a - b).abs() < 0.01 * b, "{a} vs {b}");
    let l = measured_layout("test", R, -1.0, D, &knots).unwrap();
    let Element::Mirror(m) = &l.elements[0] else { panic!("mirror first") };
    assert_eq!(m.profile.departure.as_deref(), Some(&knots[..]));
}

#[test]
fn zones_needing_work_finds_the_raised_zone() {
    let bump = |r: f64| 8e-5 * (-((r - 70.0) / 8.0).powi(2)).exp();
    let radii = zone_radii(10);
    let readings: Vec<[f64; 2]> = radii.iter().map(|&r| [r, reading_of(r, &bump)]).collect();
    let work = zones_needing_work(R, -1.0, D, &readings, 20.0).unwrap();
    let high: Vec<f64> = work.iter().filter(|w| w.verdict == ZoneVerdict::High).map(|w| w.r_mm).collect();
    assert!(!high.is_empty() && high.iter().all(|r| (r - 70.0).abs() < 12.0), "{work:?}");
    // Perfect figure, seen with the knife reference shifted by 0.3 mm (a
    // different radius of curvature): nothing to do.
    let readings: Vec<[f64; 2]> = radii.iter().map(|&r| [r, moving_source_reading(R, -1.0, r) + 0.3]).collect();
    let work = zones_needing_work(R, -1.0, D, &readings, 5.0).unwrap();
    assert!(work.iter().all(|w| w.verdict == ZoneVerdict::Ok), "{work:?}");
}

#[test]
fn bad_readings_name_the_field() {
    let e = |r: &[[f64; 2]]| profile_from_readings(R, -1.0, D, r).unwrap_err().field;
    assert_eq!(e(&[]), "readings");
    assert_eq!(e(&[[0.0, 0.1]]), "readings[0].r_mm");
    assert_eq!(e(&[[30.0, 0.1], [20.0, 0.2]]), "readings[1].r_mm");
    assert_eq!(e(&[[30.0, f64::NAN]]), "readings[0].reading_mm");
    assert_eq!(e(&[[130.0, 0.1]]), "readings[0].r_mm");
    assert_eq!(profile_from_readings(-R, -1.0, D, &[[30.0, 0.1]]).unwrap_err().field, "radius");
    assert_eq!(zones_needing_work(R, -1.0, D, &[[30.0, 0.1]], -1.0).unwrap_err().field, "tolerance_nm");
    // A zone past the semi-diameter (by 0.2 mm) is refused there too.
    assert_eq!(zones_needing_work(R, -1.0, D, &[[0.5 * D + 0.2, 0.1]], 5.0).unwrap_err().field, "readings[0].r_mm");
}

/// A departure table that is only piston plus a change of radius (a ρ²
/// term) has no figure error; a bump added to it stands high where it is
/// and the rest reads low by the piston the fit spreads. Built from a known
/// answer; removing piston and focus before judging figure is common
/// practice in mirror testing.
#[test]
fn departure_table_piston_and_focus_are_not_figure_errors() {
    let rows: Vec<[f64; 2]> = (0..=20).map(|i| 5.0 * i as f64).map(|r| [r, 3e-4 + 2e-8 * r * r]).collect();
    let work = departures_needing_work(&rows, 10.0).unwrap();
    assert_eq!(work.len(), rows.len());
    for w in &work {
        assert!(w.surface_error_nm.abs() < 1e-6, "residual {} nm at {} mm", w.surface_error_nm, w.r_mm);
        assert_eq!(w.verdict, ZoneVerdict::Ok);
    }
    assert!((work[4].departure_um - (3e-4 + 2e-8 * 400.0) * 1e3).abs() < 1e-12);

    // A 100 nm bump at ρ = 60 mm: that row is high, and stays the highest.
    let bumped: Vec<[f64; 2]> =
        rows.iter().map(|&[r, z]| [r, z + if (r - 60.0).abs() < 1e-9 { 100e-6 } else { 0.0 }]).collect();
    let work = departures_needing_work(&bumped, 30.0).unwrap();
    let top = work.iter().max_by(|a, b| a.surface_error_nm.total_cmp(&b.surface_error_nm)).unwrap();
    assert_eq!(top.r_mm, 60.0);
    assert_eq!(top.verdict, ZoneVerdict::High);
    assert!(work.iter().filter(|w| w.verdict == ZoneVerdict::High).count() == 1);
    assert!(departures_needing_work(&rows, -1.0).unwrap_err().field == "tolerance_nm");
}

/// Rows at uneven radii weigh by the annulus each stands for (halfway to
/// its neighbours): rows at ρ = 0, 10, 30 mm stand for areas ∝ 5², 20² − 5²,
/// 30² − 20² = 25, 375, 500. Worked by hand with the weighted least-squares
/// normal equations (Press et al., Numerical Recipes 3rd ed. §15.4) for
/// piston p and a ρ² term q, departures (0, 0, 100 nm):
///   [900 487500; 487500 4.0875e8]·(p, q) = (0.05, 45)·1e-3,
///   det = 1.3021875e11, p = −1.5e6/det mm, q = 16125/det mm⁻¹,
/// residuals e = (Δz − p − q·ρ²)·1e6 nm = 1.5e12/det, −1.125e11/det,
/// 100 − 1.30125e13/det.
#[test]
fn departure_rows_weigh_by_the_annulus_they_stand_for() {
    let rows = [[0.0, 0.0], [10.0, 0.0], [30.0, 100e-6]];
    let det = 1.3021875e11;
    let want = [1.5e12 / det, -1.125e11 / det, 100.0 - 1.30125e13 / det];
    let work = departures_needing_work(&rows, 5.0).unwrap();
    for (w, e) in work.iter().zip(want) {
        assert!((w.surface_error_nm - e).abs() < 1e-6, "ρ {}: {} nm against {e} nm", w.r_mm, w.surface_error_nm);
    }
    let verdicts: Vec<_> = work.iter().map(|w| w.verdict).collect();
    assert_eq!(verdicts, [ZoneVerdict::High, ZoneVerdict::Ok, ZoneVerdict::Ok]);
    // A zero tolerance is allowed: every row off the fit is high or low.
    let strict: Vec<_> = departures_needing_work(&rows, 0.0).unwrap().iter().map(|w| w.verdict).collect();
    assert_eq!(strict, [ZoneVerdict::High, ZoneVerdict::Low, ZoneVerdict::High]);
}

/// The same weights when the first row's annulus is a thin ring (rows at
/// 50, 50.4 and 60 mm: 50.2² − 50², 55.2² − 50.2², 60² − 55.2²), the fit
/// solved here from its 2×2 weighted normal equations (same reference).
#[test]
fn a_thin_first_annulus_weighs_only_its_own_area() {
    let rows = [[50.0, 0.0], [50.4, 0.0], [60.0, 100e-6]];
    let w = [50.2f64 * 50.2 - 2500.0, 55.2 * 55.2 - 50.2 * 50.2, 3600.0 - 55.2 * 55.2];
    let (mut s, mut sx, mut sxx, mut sy, mut sxy) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for (r, wi) in rows.iter().zip(w) {
        let x = r[0] * r[0];
        (s, sx, sxx, sy, sxy) = (s + wi, sx + wi * x, sxx + wi * x * x, sy + wi * r[1], sxy + wi * x * r[1]);
    }
    let det = s * sxx - sx * sx;
    let (p, q) = ((sy * sxx - sx * sxy) / det, (s * sxy - sx * sy) / det);
    let work = departures_needing_work(&rows, 5.0).unwrap();
    for (wk, r) in work.iter().zip(rows) {
        let e = (r[1] - p - q * r[0] * r[0]) * 1e6;
        assert!((wk.surface_error_nm - e).abs() < 1e-6, "ρ {}: {} nm against {e} nm", wk.r_mm, wk.surface_error_nm);
    }
}

/// The table needs two rows at least (piston and focus take two) and at
/// most MAX_ROWS; each limit is met exactly. A documented input contract.
#[test]
fn departure_tables_take_two_to_max_rows() {
    let table = |n: usize| (0..n).map(|i| [i as f64, 1e-6 * i as f64]).collect::<Vec<[f64; 2]>>();
    assert_eq!(departures_needing_work(&table(1), 5.0).unwrap_err().field, "csv");
    assert_eq!(departures_needing_work(&table(2), 5.0).unwrap().len(), 2);
    assert_eq!(departures_needing_work(&table(MAX_ROWS), 5.0).unwrap().len(), MAX_ROWS);
    assert_eq!(departures_needing_work(&table(MAX_ROWS + 1), 5.0).unwrap_err().field, "csv");
}

/// Where the readings put a zone's normal through the vertex side of the
/// mirror (R + ζ(ρ) − z ≤ 0: the normals would cross behind it) no
/// surface fits, and the refusal says where. Sphere, readings falling
/// linearly from 0 at ρ = 10 mm to −1990 mm at 90 mm (extrapolated
/// linearly beyond): the meridian dz/dρ = ρ/(R + ζ − z) (the
/// normal-intercept definition above) reaches R + ζ = z at ρ = 89.609 mm,
/// z = 19.7 mm (integrated separately by classical Runge–Kutta at a step
/// 250 times finer, Press et al., Numerical Recipes, 3rd ed., §17.1);
/// the refusal names a ρ within two of the product's steps of it.
#[test]
fn readings_whose_normals_cross_behind_the_mirror_are_refused_where_they_do() {
    let e = profile_from_readings(R, 0.0, D, &[[10.0, 0.0], [90.0, -1990.0]]).unwrap_err();
    assert_eq!(e.field, "readings", "{e}");
    let msg = e.to_string();
    let at: f64 = msg.split("ρ = ").nth(1).and_then(|s| s.split(' ').next()).and_then(|s| s.parse().ok()).expect("ρ in the message");
    assert!((at - 89.609).abs() <= 0.05, "{msg}");
    // Close to that but not past it, the readings are a steep, valid figure.
    assert!(profile_from_readings(R, 0.0, D, &[[10.0, 0.0], [100.0, -1850.0]]).is_ok());
}

/// Input limits, inclusive where the documentation says "at most"
/// (common practice: a limit is accepted, one past it is refused, and
/// the refusal names the field): MAX_ROWS readings, a zone at the
/// semi-diameter, a conic constant of magnitude 10⁶, a departure of
/// 10⁷ mm; an oblate conic (R = 2000, K = 3) ends at ρ = R/√(1 + K) =
/// 1000 mm (the conic's domain, ISO 10110-12 sag formula), so a 1900 mm
/// mirror fits and a 2100 mm one does not.
#[test]
fn limits_are_inclusive_and_refusals_name_the_field() {
    use catoptric::design::measured::MAX_ROWS;
    let many: Vec<[f64; 2]> = (1..=MAX_ROWS).map(|i| [i as f64 * 0.1, 0.0]).collect();
    assert!(profile_from_readings(R, -1.0, D, &many).is_ok());
    let mut more = many.clone();
    more.push([99.0, 0.0]);
    assert_eq!(profile_from_readings(R, -1.0, D, &more).unwrap_err().field, "readings");
    assert!(profile_from_readings(R, -1.0, D, &[[50.0, 0.0], [0.5 * D, 0.0]]).is_ok());
    assert!(profile_from_readings(R, -1.0e6, D, &[[50.0, moving_source_reading(R, -1.0e6, 50.0)]]).is_ok());
    for k in [-1.0e6 - 1.0, -2.0e6] {
        assert_eq!(profile_from_readings(R, k, D, &[[50.0, 0.0]]).unwrap_err().field, "conic");
    }
    assert!(profile_from_readings(R, 3.0, 1900.0, &[[50.0, 0.0]]).is_ok());
    assert_eq!(profile_from_readings(R, 3.0, 2100.0, &[[50.0, 0.0]]).unwrap_err().field, "diameter");
    assert!(parse_departure_csv("radius,departure_mm\n0,0\n10,1e7\n").is_ok());
    for (text, field) in [
        ("radius,departure_mm\n0,0\n10,1.0000001e7\n", "csv line 3 (departure)"),
        ("0,0\n10,1e300\n", "csv line 2 (departure)"),
        ("-1,0\n10,1\n", "csv line 1 (radius)"),
        ("0,0\n2e7,1\n", "csv line 2 (radius)"),
    ] {
        assert_eq!(parse_departure_csv(text).unwrap_err().field, field, "{text:?}");
    }
}

/// The traced layout of a measured mirror: its screen at the design focus
/// R/2 is square, 2 % of the diameter across but at least 1 mm (a
/// documented contract of `measured_layout`).
#[test]
fn the_measured_layout_screen_is_two_percent_of_the_diameter() {
    for (d, want) in [(200.0, 4.0), (30.0, 1.0), (500.0, 10.0)] {
        let l = measured_layout("m", R, -1.0, d, &[[0.0, 0.0], [0.5 * d, 0.0]]).unwrap();
        let s = l.elements.iter().find_map(|e| if let Element::Screen(s) = e { Some(s) } else { None }).unwrap();
        assert_eq!((s.size, s.center), (want, [0.0, -0.5 * R]), "d = {d}");
    }
}

/// A smooth figure error of c·(ρ/a)⁴ on the paraboloid, read at ten
/// zones: after removing piston and a change of radius by area-weighted
/// least squares, what is left is c·(u² − u + 1/6) with u = (ρ/a)² (the
/// fit of u² by p + q·u with uniform weight in u, i.e. per unit area, is
/// q = 1, p = −1/6: the shifted Legendre polynomial P₂*(u)/6; Abramowitz
/// & Stegun 22.2.11). Each zone's reported error matches to 2 nm of the
/// 100 nm error; a zone on the rim is judged too, and a tolerance of 0 is
/// allowed.
#[test]
fn zone_errors_are_the_departure_less_piston_and_focus() {
    let (c, a) = (1e-4, 0.5 * D);
    let bump = move |r: f64| c * (r / a).powi(4);
    let mut radii = zone_radii(10);
    radii.push(a);
    let readings: Vec<[f64; 2]> = radii.iter().map(|&r| [r, reading_of(r, &bump)]).collect();
    let work = zones_needing_work(R, -1.0, D, &readings, 0.0).unwrap();
    assert_eq!(work.len(), radii.len());
    for w in &work {
        let u = (w.r_mm / a).powi(2);
        let want = c * (u * u - u + 1.0 / 6.0) * 1e6;
        assert!((w.surface_error_nm - want).abs() < 2.0, "ρ = {}: {} nm vs {want} nm", w.r_mm, w.surface_error_nm);
        // With no tolerance every zone proud of the target is high, every
        // one below it low.
        let verdict = if want > 2.0 { Some(ZoneVerdict::High) } else if want < -2.0 { Some(ZoneVerdict::Low) } else { None };
        assert!(verdict.is_none_or(|v| v == w.verdict), "ρ = {}: {:?} for {want} nm", w.r_mm, w.verdict);
    }
}
