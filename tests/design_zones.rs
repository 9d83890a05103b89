//! Zonal mask and knife-edge readings for a centre-of-curvature test.

use catoptric::design::{
    best_fit_sphere, fixed_source_reading, moving_source_reading, zone_edges, zone_table, TestSource,
};

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
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
    // The table uses the same readings at r_mm, and the depth of glass to
    // remove from the best-fit sphere; for a paraboloid the greatest depth
    // is D⁴/(512 R³) (third-order algebra, common practice).
    for source in [TestSource::Moving, TestSource::Fixed] {
        let t = zone_table(2000.0, -1.0, 200.0, 5, source, 550.0).unwrap();
        assert_eq!(t.source, source.name());
        assert_eq!(t.zones.len(), 5);
        for z in &t.zones {
            let want = match source {
                TestSource::Moving => moving_source_reading(2000.0, -1.0, z.r_mm),
                TestSource::Fixed => fixed_source_reading(2000.0, -1.0, z.r_mm, 0.0),
            };
            assert_eq!(z.reading_mm, want);
            assert!(z.removal_um >= 0.0 && z.removal_um <= t.removal_depth_um + 1e-12);
        }
        assert!(rel(t.removal_depth_um * 1e-3, 200f64.powi(4) / (512.0 * 2000f64.powi(3))) < 2e-3);
        let bfs = best_fit_sphere(2000.0, -1.0, 200.0);
        assert!(rel(t.best_fit_sphere_radius_mm, bfs.radius_mm) < 1e-12);
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
