//! The sun's position (docs/FORMATS.md §3, `sun`): the NREL Solar Position
//! Algorithm's published example, and cases across hemispheres and seasons
//! against an independent published algorithm written out here (the NOAA
//! solar calculator's formulas, after Meeus, Astronomical Algorithms,
//! 2nd ed. 1998, ch. 25 low-accuracy solar coordinates and ch. 28
//! equation of time; NOAA states about a minute of arc between ±72°
//! latitude for 1800–2100).

use catoptric::sun::{parse_time, sun_position, sun_vector, Atmosphere};
use catoptric::layout::Site;
use std::process::Command;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_catoptric")).args(args).output().expect("runs");
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into(), String::from_utf8_lossy(&out.stderr).into())
}

#[test]
fn the_spa_papers_worked_example() {
    // Reda & Andreas, "Solar Position Algorithm for Solar Radiation
    // Applications", NREL/TP-560-34302 (2003, rev. 2008), Table A5.1 /
    // Solar Energy 76 (2004) 577: 2003-10-17 12:30:30 at −7 h, latitude
    // 39.742476°, longitude −105.1786°, elevation 1830.14 m, 820 mbar,
    // 11 °C, ΔT = 67 s → topocentric zenith 50.11162°, azimuth 194.34024°.
    let t = parse_time("2003-10-17T12:30:30-07:00", -105.1786, "time").unwrap();
    let air = Atmosphere { pressure_mbar: 820.0, temperature_c: 11.0 };
    let p = sun_position(39.742476, -105.1786, 1830.14, &t, air, Some(67.0)).unwrap();
    assert!((p.zenith_deg - 50.11162).abs() < 0.01, "zenith {}", p.zenith_deg);
    assert!((p.azimuth_deg - 194.34024).abs() < 0.01, "azimuth {}", p.azimuth_deg);
    assert!((p.elevation_deg + p.zenith_deg - 90.0).abs() < 1e-12);
}

/// Julian day of a UTC calendar date and time (Meeus ch. 7).
fn julian_day(y: i32, m: i32, d: f64) -> f64 {
    let (y, m) = if m <= 2 { (y - 1, m + 12) } else { (y, m) };
    let a = (y as f64 / 100.0).floor();
    let b = 2.0 - a + (a / 4.0).floor();
    (365.25 * (y as f64 + 4716.0)).floor() + (30.6001 * (m as f64 + 1.0)).floor() + d + b - 1524.5
}

/// (azimuth, apparent elevation) in degrees by the NOAA calculator's
/// formulas, refraction by its piecewise approximation.
fn noaa(lat: f64, lon: f64, y: i32, mo: i32, day: i32, utc_hours: f64) -> (f64, f64) {
    let r = f64::to_radians;
    let jd = julian_day(y, mo, day as f64 + utc_hours / 24.0);
    let t = (jd - 2451545.0) / 36525.0;
    let l0 = (280.46646 + t * (36000.76983 + t * 0.0003032)).rem_euclid(360.0);
    let m = 357.52911 + t * (35999.05029 - 0.0001537 * t);
    let e = 0.016708634 - t * (0.000042037 + 0.0000001267 * t);
    let c = r(m).sin() * (1.914602 - t * (0.004817 + 0.000014 * t)) + r(2.0 * m).sin() * (0.019993 - 0.000101 * t)
        + r(3.0 * m).sin() * 0.000289;
    let omega = 125.04 - 1934.136 * t;
    let lambda = l0 + c - 0.00569 - 0.00478 * r(omega).sin();
    let eps0 = 23.0 + (26.0 + (21.448 - t * (46.815 + t * (0.00059 - t * 0.001813))) / 60.0) / 60.0;
    let eps = eps0 + 0.00256 * r(omega).cos();
    let decl = (r(eps).sin() * r(lambda).sin()).asin();
    let yv = (r(eps / 2.0)).tan().powi(2);
    let eot = 4.0
        * (yv * (2.0 * r(l0)).sin() - 2.0 * e * r(m).sin() + 4.0 * e * yv * r(m).sin() * (2.0 * r(l0)).cos()
            - 0.5 * yv * yv * (4.0 * r(l0)).sin()
            - 1.25 * e * e * (2.0 * r(m)).sin())
        .to_degrees();
    let tst = (utc_hours * 60.0 + eot + 4.0 * lon).rem_euclid(1440.0);
    let ha = if tst / 4.0 < 0.0 { tst / 4.0 + 180.0 } else { tst / 4.0 - 180.0 };
    let cz = (r(lat).sin() * decl.sin() + r(lat).cos() * decl.cos() * r(ha).cos()).clamp(-1.0, 1.0);
    let zen = cz.acos();
    let az = {
        let a = ((r(lat).sin() * zen.cos() - decl.sin()) / (r(lat).cos() * zen.sin())).clamp(-1.0, 1.0).acos().to_degrees();
        if ha > 0.0 { (a + 180.0).rem_euclid(360.0) } else { (540.0 - a).rem_euclid(360.0) }
    };
    let h = 90.0 - zen.to_degrees();
    let te = r(h).tan();
    let refr = if h > 85.0 {
        0.0
    } else if h > 5.0 {
        58.1 / te - 0.07 / te.powi(3) + 0.000086 / te.powi(5)
    } else {
        1735.0 + h * (-518.2 + h * (103.4 + h * (-12.79 + h * 0.711)))
    } / 3600.0;
    (az, h + refr)
}

/// (latitude, longitude, (year, month, day), UTC hours).
type Case = (f64, f64, (i32, i32, i32), f64);

#[test]
fn hemispheres_and_seasons_agree_with_the_noaa_formulas() {
    // (latitude, longitude, date, UTC hours): north and south, summer and
    // winter, morning and afternoon, east and west of Greenwich.
    let cases: [Case; 8] = [
        (52.0, 5.0, (2026, 6, 21), 10.0),
        (52.0, 5.0, (2026, 12, 21), 12.5),
        (-33.9, 151.2, (2026, 6, 21), 2.0),
        (-33.9, 151.2, (2026, 12, 21), 23.0),
        (0.5, -78.0, (2026, 3, 20), 15.0),
        (64.0, -22.0, (2026, 9, 23), 14.0),
        (-45.0, -70.0, (2026, 1, 15), 19.5),
        (23.4, 90.0, (2026, 4, 5), 5.25),
    ];
    for (lat, lon, (y, m, d), h) in cases {
        let text = format!("{y:04}-{m:02}-{d:02}T{:02}:{:02}:00Z", h as u32, ((h - h.floor()) * 60.0).round() as u32);
        let t = parse_time(&text, lon, "time").unwrap();
        let p = sun_position(lat, lon, 0.0, &t, Atmosphere::default(), None).unwrap();
        let (az, el) = noaa(lat, lon, y, m, d, h);
        assert!(el > 5.0, "pick daytime cases: {text} at {lat}, {lon}: {el}");
        // A minute of arc from each algorithm, refraction models apart.
        assert!((p.elevation_deg - el).abs() < 0.03, "{text} {lat},{lon}: elevation {} vs NOAA {el}", p.elevation_deg);
        let daz = ((p.azimuth_deg - az + 540.0).rem_euclid(360.0) - 180.0).abs();
        assert!(daz * el.to_radians().cos() < 0.03, "{text} {lat},{lon}: azimuth {} vs NOAA {az}", p.azimuth_deg);
    }
}

#[test]
fn a_time_without_offset_is_local_standard_time_at_the_longitude() {
    // round(λ/15) h: 133.2° E is +9 h, −105.2° is −7 h (common practice
    // for a longitude's zone time).
    let a = parse_time("2026-12-21T12:00", 133.2, "time").unwrap();
    assert_eq!(a.offset().local_minus_utc(), 9 * 3600);
    let b = parse_time("2026-12-21T12:00:00-07:00", 133.2, "time").unwrap();
    assert_eq!(b.offset().local_minus_utc(), -7 * 3600);
    let c = parse_time("2026-12-21T12:00", -105.2, "time").unwrap();
    assert_eq!(c.offset().local_minus_utc(), -7 * 3600);
}

#[test]
fn the_sun_vector_follows_the_site_axes() {
    // The layout's axes on the compass: +z toward bearing B, +y up, +x
    // toward B − 90° (a right-handed frame: y × z = x).
    let site = Site { latitude_deg: 0.0, longitude_deg: 0.0, z_bearing_deg: 90.0, elevation_m: 0.0 };
    let at = |az: f64, el: f64| {
        sun_vector(&site, &catoptric::sun::SunPosition { azimuth_deg: az, elevation_deg: el, zenith_deg: 90.0 - el })
    };
    let east = at(90.0, 0.0);
    assert!((east.z - 1.0).abs() < 1e-12, "a sun due east lies along +z when +z faces east: {east:?}");
    let north = at(0.0, 0.0);
    assert!((north.x - 1.0).abs() < 1e-12, "+x faces bearing 0 when +z faces 90: {north:?}");
    let up = at(123.0, 90.0);
    assert!((up.y - 1.0).abs() < 1e-12);
    let s = at(200.0, 30.0);
    assert!((s.norm() - 1.0).abs() < 1e-12);
}

#[test]
fn the_sun_command_prints_the_contract_keys_and_refuses_bad_input() {
    let (code, out, err) =
        run(&["sun", "--latitude", "39.742476", "--longitude", "-105.1786", "--time", "2003-10-17T12:30:30-07:00", "--elevation-m", "1830.14", "--json"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let (az, el, zen) = (v["azimuth_deg"].as_f64().unwrap(), v["elevation_deg"].as_f64().unwrap(), v["zenith_deg"].as_f64().unwrap());
    // Standard air and an estimated ΔT shift the paper's example by
    // refraction's change only (a few thousandths of a degree here).
    assert!((zen - 50.11162).abs() < 0.02 && (az - 194.34024).abs() < 0.02, "{az} {zen}");
    assert!((el + zen - 90.0).abs() < 1e-9);
    for (args, flag) in [
        (vec!["sun", "--latitude", "91", "--longitude", "0", "--time", "2026-01-01T12:00"], "--latitude"),
        (vec!["sun", "--latitude", "10", "--longitude", "-181", "--time", "2026-01-01T12:00"], "--longitude"),
        (vec!["sun", "--latitude", "10", "--longitude", "0", "--time", "noon"], "--time"),
        (vec!["sun", "--latitude", "10", "--longitude", "0", "--time", "2026-01-01T12:00", "--elevation-m", "1e9"], "--elevation-m"),
        (vec!["sun", "--latitude", "10", "--longitude", "0", "--time", "9999-01-01T12:00"], "--time"),
    ] {
        let (code, out, err) = run(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?}: nothing on stdout");
        assert!(err.contains(flag) && err.lines().count() == 1, "{args:?}: {err}");
    }
}
