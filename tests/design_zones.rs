//! Zonal mask and knife-edge readings for a centre-of-curvature test.

use catoptric::design::{
    fixed_source_reading, moving_source_reading, zone_edges, zone_table, TestSource,
};

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// Sag of the conic, written out here from ISO 10110-12:2019 (the vertex
/// form z = cρ²/(1 + √(1 − (1+K)c²ρ²))), independently of the crate.
fn sag(r: f64, k: f64, rho: f64) -> f64 {
    let c = 1.0 / r;
    c * rho * rho / (1.0 + (1.0 - (1.0 + k) * c * c * rho * rho).sqrt())
}

/// Slope dz/dρ by the five-point central difference of [`sag`] (step
/// 0.05 mm: truncation ~h⁴z⁽⁵⁾/30 and rounding ~εz/h move the intercepts
/// below by well under 1e-7 mm; common numerical practice).
fn slope(r: f64, k: f64, rho: f64) -> f64 {
    let h = 0.05;
    let z = |d: f64| sag(r, k, rho + d);
    (8.0 * (z(h) - z(-h)) - (z(2.0 * h) - z(-2.0 * h))) / (12.0 * h)
}

/// Where the normal at zone ρ meets the axis, mm from the vertex centre of
/// curvature: the normal through (ρ, z) with slope z′ crosses ρ = 0 at
/// z + ρ/z′ (elementary calculus). This is the moving-source knife-edge
/// reading (Texereau, How to Make a Telescope, 2nd Eng. ed. 1984, value
/// from memory: the knife finds the zone's centre of curvature on the
/// axis). For a conic it equals −K z(ρ) exactly; the test does not use
/// that closed form.
fn normal_intercept(r: f64, k: f64, rho: f64) -> f64 {
    sag(r, k, rho) + rho / slope(r, k, rho) - r
}

/// Fixed-source reading by the law of reflection, worked here: the ray
/// from the source at the vertex centre of curvature (0, R) to the zone
/// point is reflected about the surface normal (from the numerical slope)
/// and followed to the axis.
fn fixed_reading(r: f64, k: f64, rho: f64) -> f64 {
    let (z, m) = (sag(r, k, rho), slope(r, k, rho));
    let (dr, dz) = (rho, z - r);
    let l = dr.hypot(dz);
    let (dr, dz) = (dr / l, dz / l);
    let nl = m.hypot(1.0);
    let (nr, nz) = (-m / nl, 1.0 / nl);
    let dot = dr * nr + dz * nz;
    let (or, oz) = (dr - 2.0 * dot * nr, dz - 2.0 * dot * nz);
    z + (-rho / or) * oz - r
}

#[test]
fn equal_area_zone_edges() {
    // Berry, Build Your Own Telescope, 2nd ed. (1994), value from memory:
    // a = 100, N = 5 → 44.72, 63.25, 77.46, 89.44, 100.
    let e = zone_edges(200.0, 5);
    assert_eq!(e[0], 0.0);
    for (got, want) in e[1..].iter().zip([44.72, 63.25, 77.46, 89.44, 100.0]) {
        assert!(rel(*got, want) < 1e-4, "{got} vs {want}");
    }
    // Representative radius: RMS of the edges = a√((X−½)/N) (row 4).
    let t = zone_table(2000.0, -1.0, 200.0, 5, TestSource::Moving, 550.0).unwrap();
    for (x, z) in t.zones.iter().enumerate() {
        let want = 100.0 * ((x as f64 + 0.5) / 5.0).sqrt();
        assert!(rel(z.r_mm, want) < 1e-12, "{} vs {want}", z.r_mm);
        assert!(z.inner_mm < z.r_mm && z.r_mm < z.outer_mm);
    }
}

#[test]
fn moving_source_readings_are_normal_intercepts() {
    // Normal intercept −K z(ρ) (Texereau, How to Make a Telescope, 2nd
    // Eng. ed. 1984, value from memory): R = 2000 paraboloid,
    // ρ = 30/50/70/90 → 0.225/0.625/1.225/2.025 mm (ρ²/(2R), exact).
    for (rho, want) in [(30.0, 0.225), (50.0, 0.625), (70.0, 1.225), (90.0, 2.025)] {
        let got = moving_source_reading(2000.0, -1.0, rho);
        assert!(rel(got, want) < 1e-12, "ρ {rho}: {got}");
    }
    // A sphere has one centre of curvature: every reading is zero.
    assert_eq!(moving_source_reading(2000.0, 0.0, 90.0), 0.0);
}

#[test]
fn moving_source_readings_follow_the_exact_conic_for_every_conic() {
    // K ≠ 0, −1: a hyperboloid, a prolate and an oblate ellipsoid, fast
    // enough (R = 600, D = 300) that the parabolic approximation −Kρ²/(2R)
    // is millimetres off at the rim (3.2 mm for K = −4 at ρ = 150).
    for k in [-4.0, -2.0, -0.5, 0.6] {
        for rho in [20.0, 75.0, 120.0, 150.0] {
            let want = normal_intercept(600.0, k, rho);
            let got = moving_source_reading(600.0, k, rho);
            assert!((got - want).abs() < 1e-7, "K = {k}, ρ = {rho}: {got} vs {want}");
        }
    }
    let (k, rho) = (-4.0f64, 150.0f64);
    let parabolic = -k * rho * rho / (2.0 * 600.0);
    assert!((normal_intercept(600.0, k, rho) - parabolic).abs() > 3.0, "the check must tell the two forms apart");
    // An oblate ellipsoid's zones have their centres inside the vertex
    // centre of curvature (readings < 0), a hyperboloid's outside.
    assert!(moving_source_reading(600.0, 0.6, 150.0) < 0.0 && moving_source_reading(600.0, -4.0, 150.0) > 0.0);
}

#[test]
fn zone_tables_of_non_parabolic_conics_read_the_exact_intercepts() {
    // Equal-area zones (Berry, Build Your Own Telescope, 2nd ed. 1994,
    // value from memory): edges a√(X/N), representative radius
    // a√((X − ½)/N); readings at that radius from the geometry above.
    let (r, d, n) = (600.0, 300.0, 6);
    for k in [-4.0, -0.5, 0.6] {
        for source in [TestSource::Moving, TestSource::Fixed] {
            let t = zone_table(r, k, d, n, source, 550.0).unwrap();
            assert_eq!(t.zones.len(), n);
            for (x, z) in t.zones.iter().enumerate() {
                let rho = 150.0 * ((x as f64 + 0.5) / n as f64).sqrt();
                assert!(rel(z.r_mm, rho) < 1e-12, "K = {k} zone {x}: r {} vs {rho}", z.r_mm);
                let want = match source {
                    TestSource::Moving => normal_intercept(r, k, rho),
                    TestSource::Fixed => fixed_reading(r, k, rho),
                };
                assert!((z.reading_mm - want).abs() < 1e-7, "K = {k} {source:?} zone {x}: {} vs {want}", z.reading_mm);
            }
        }
    }
}

#[test]
fn fixed_source_readings_from_the_exact_geometry() {
    // Exact reflection (law of reflection; computed independently of this
    // code) with the source fixed at the vertex centre of curvature:
    // 0.45005/1.25039/2.45150/4.05410 mm (≈ ρ²/R, Texereau, How to Make a
    // Telescope, 2nd Eng. ed. 1984; approximate).
    for (rho, want) in [(30.0, 0.45005), (50.0, 1.25039), (70.0, 2.45150), (90.0, 4.05410)] {
        let got = fixed_source_reading(2000.0, -1.0, rho, 0.0);
        assert!((got - want).abs() < 6e-6, "ρ {rho}: {got} vs {want}");
        assert!(rel(got, rho * rho / 2000.0) < 2e-3);
    }
    // Sphere: the source at the centre images onto itself for every zone.
    assert!(fixed_source_reading(2000.0, 0.0, 90.0, 0.0).abs() < 1e-9);
    // Source moved off the centre: the paraxial conjugate 1/s + 1/s' = 2/R
    // (mirror equation, common practice) for a sphere's central zone.
    let got = fixed_source_reading(2000.0, 0.0, 1e-3, 10.0);
    let img = 1.0 / (2.0 / 2000.0 - 1.0 / 2010.0) - 2000.0;
    assert!(rel(got, img) < 1e-6, "{got} vs {img}");
}

#[test]
fn zone_table_readings_and_glass_to_remove() {
    // The table's readings at r_mm, and the depth of glass to remove from
    // the best-fit sphere; for a paraboloid the greatest depth is
    // D⁴/(512 R³) (third-order algebra, common practice).
    for source in [TestSource::Moving, TestSource::Fixed] {
        let t = zone_table(2000.0, -1.0, 200.0, 5, source, 550.0).unwrap();
        assert_eq!(t.source, source.name());
        assert_eq!(t.zones.len(), 5);
        for (x, z) in t.zones.iter().enumerate() {
            // Independent of the crate's reading functions: the geometry
            // worked in this file, at a√((X − ½)/N).
            let rho = 100.0 * ((x as f64 + 0.5) / 5.0).sqrt();
            let want = match source {
                TestSource::Moving => normal_intercept(2000.0, -1.0, rho),
                TestSource::Fixed => fixed_reading(2000.0, -1.0, rho),
            };
            assert!((z.reading_mm - want).abs() < 1e-7, "{source:?} zone {x}: {} vs {want}", z.reading_mm);
            assert!(z.removal_um >= 0.0 && z.removal_um <= t.removal_depth_um + 1e-12);
            // Same algebra, per zone, with u = ρ²/a² and β = a⁴/(8R³)
            // (1.5625 µm here): paraboloid minus best-fit sphere is
            // β(u − u²) + const, so with the sphere placed midway the
            // departure is β(u − u² − 1/8) (proud of the sphere, toward the
            // centre of curvature, in the middle zones), and the glass to
            // remove from the touching sphere β(u − ½)². Higher orders add
            // ~c²a² ≈ 0.25 % of β.
            let (u, beta) = (rho * rho / 1e4, 1e8 / (8.0 * 2000f64.powi(3)) * 1e3);
            let (dep, rem) = (beta * (u - u * u - 0.125), beta * (u - 0.5).powi(2));
            assert!((z.departure_um - dep).abs() < 0.01, "zone {x}: departure {} vs {dep} µm", z.departure_um);
            assert!((z.removal_um - rem).abs() < 0.01, "zone {x}: removal {} vs {rem} µm", z.removal_um);
        }
        assert!(rel(t.removal_depth_um * 1e-3, 200f64.powi(4) / (512.0 * 2000f64.powi(3))) < 2e-3);
        // Same algebra: sphere minus paraboloid is (c_b − c)ρ²/2 + c³ρ⁴/8 to
        // fourth order; its P-V over ρ ≤ a is smallest when the quadratic in
        // ρ² has its extremum at ρ² = a²/2, i.e. R_b = R + a²/(4R) (the
        // sphere's ρ⁶ term shifts this by ~0.1 % of a²/(4R)).
        let want = 2000.0 + 100.0 * 100.0 / (4.0 * 2000.0);
        assert!((t.best_fit_sphere_radius_mm - want).abs() < 0.01, "{} vs {want}", t.best_fit_sphere_radius_mm);
    }
}

#[test]
fn bad_input_names_the_field() {
    let e = |r: f64, k: f64, d: f64, n: usize| zone_table(r, k, d, n, TestSource::Moving, 550.0).unwrap_err().field;
    assert_eq!(e(0.0, -1.0, 200.0, 5), "radius");
    assert_eq!(e(2000.0, f64::NAN, 200.0, 5), "conic");
    assert_eq!(e(2000.0, -1.0, -1.0, 5), "diameter");
    assert_eq!(e(2000.0, -1.0, 200.0, 0), "zones");
    assert_eq!(e(2000.0, -1.0, 200.0, 1000), "zones");
    assert_eq!(e(100.0, 0.0, 250.0, 5), "diameter");
    assert_eq!(TestSource::parse("sliding").unwrap_err().field, "source");
}

#[test]
fn fixed_source_reading_on_the_axis_is_the_paraxial_conjugate() {
    // At ρ = 0 the reflected ray runs back along the axis and the reading
    // is the paraxial image of the source: 1/s + 1/s′ = 2/R (mirror
    // equation, Hecht, Optics, 5th ed. 2017, §5.4), any conic (the vertex
    // curvature sets it). Zones near the axis approach it.
    for (k, src) in [(0.0, 10.0), (-1.0, 25.0), (-4.0, -30.0)] {
        let (r, s) = (2000.0, 2000.0 + src);
        let want = 1.0 / (2.0 / r - 1.0 / s) - r;
        let got = fixed_source_reading(r, k, 0.0, src);
        assert!(rel(got, want) < 1e-12, "K {k}, source {src}: {got} vs {want}");
        let near = fixed_source_reading(r, k, 1e-2, src);
        assert!(rel(near, want) < 1e-6, "K {k}, source {src}: {near} vs {want}");
    }
}

#[test]
fn zone_table_limits_are_inclusive() {
    // The limits of `zones` (docs/FORMATS.md): 1 to 100 zones, |K| up to
    // 1e6, a diameter both the conic and the sphere of radius R reach. The
    // reach of a conic: 1 − (1+K)ρ²/R² ≥ 0 (ISO 10110-12 sag), so a
    // sphere of radius R ends at ρ = R.
    let ok = |r: f64, k: f64, d: f64, n: usize| zone_table(r, k, d, n, TestSource::Moving, 550.0);
    let field = |e: catoptric::InputError| e.to_string().split(':').next().unwrap_or_default().to_string();
    assert_eq!(ok(2000.0, -1.0, 200.0, 100).unwrap().zones.len(), 100);
    assert_eq!(field(ok(2000.0, -1.0, 200.0, 101).unwrap_err()), "zones");
    assert!(ok(2000.0, -1e6, 200.0, 5).is_ok());
    assert_eq!(field(ok(2000.0, -2e6, 200.0, 5).unwrap_err()), "conic");
    assert_eq!(field(ok(2000.0, 2e6, 1.0, 5).unwrap_err()), "conic");
    // The conic's own reach: an oblate ellipsoid K = 3 of R = 100 ends at
    // ρ = R/√(1+K) = 50, inside its sphere's reach.
    assert!(ok(100.0, 3.0, 99.0, 5).is_ok());
    assert_eq!(field(ok(100.0, 3.0, 101.0, 5).unwrap_err()), "diameter");
    // The sphere's: a paraboloid reaches any diameter, the sphere of
    // radius R only up to ρ = R.
    assert!(ok(100.0, -1.0, 199.0, 5).is_ok());
    assert_eq!(field(ok(100.0, -1.0, 201.0, 5).unwrap_err()), "diameter");
}
