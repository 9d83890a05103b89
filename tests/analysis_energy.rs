//! Encircled energy and the longitudinal aberration curve.

mod analysis_support;
use analysis_support::*;
use catoptric::analysis::{encircled_energy, longitudinal_aberration, trace_report};
use catoptric::layout::Pattern;
use catoptric::trace::{disk_points, ScreenHits};

#[test]
fn uniform_disk_encloses_r_squared() {
    // Geometry of a uniform disk (common practice): EE(r) = (r/a)², so
    // EE50 at a/√2 and EE80 at a√0.8.
    let a = 0.05;
    let pts = disk_points(Pattern::Random, 200_000, 7);
    let spots: Vec<_> = pts.x.iter().zip(&pts.y).map(|(x, y)| (1.0 + a * x, -2.0 + a * y, 1e-3)).collect();
    let h = hits_at(&spots);
    let ee = encircled_energy(&h, Some(0)).unwrap();
    assert!(rel(ee.radius_for(0.5).unwrap(), a / 2f64.sqrt()) < 2e-3);
    assert!(rel(ee.radius_for(0.8).unwrap(), a * 0.8f64.sqrt()) < 2e-3);
    assert!(rel(ee.fraction_at(0.5 * a), 0.25) < 5e-3);
    assert_eq!(ee.radius_for(1.0).unwrap(), ee.radius_mm.iter().copied().fold(0.0, f64::max));
    let (r, f) = ee.curve(11);
    assert!(r.len() == 11 && f[0] == 0.0 && f[10] == 1.0);
    assert!(f.windows(2).all(|w| w[1] >= w[0]));
    // Samples evenly spaced from 0 to the largest radius (µm), each the
    // disk's (r/a)² within its sampling noise.
    let rmax = ee.radius_for(1.0).unwrap();
    for (k, (&rk, &fk)) in r.iter().zip(&f).enumerate() {
        assert!(rel(rk, rmax * 1e3 * k as f64 / 10.0) < 1e-12 || k == 0 && rk == 0.0, "sample {k}: {rk} µm");
        let expect = (rk * 1e-3 / a).powi(2).min(1.0);
        assert!((fk - expect).abs() < 5e-3, "sample {k}: {fk} vs {expect}");
    }
}

/// Hits of source 0 at screen points (u, v) with weights w, all arriving
/// straight on.
fn hits_at(spots: &[(f64, f64, f64)]) -> ScreenHits {
    let mut h = ScreenHits::default();
    for &(u, v, w) in spots {
        h.u.push(u);
        h.v.push(v);
        h.du.push(0.0);
        h.dv.push(0.0);
        h.dw.push(-1.0);
        h.opl.push(0.0);
        h.weight.push(w);
        h.source.push(0);
    }
    h
}

/// Hits at (±x, 0) about the origin: centroid 0, both radii exactly x.
fn pair(x: f64) -> ScreenHits {
    hits_at(&[(x, 0.0, 1.0), (-x, 0.0, 1.0)])
}

#[test]
fn encircled_energy_at_tied_radii_follows_the_sorted_hits() {
    // Five hits about an exact centroid of 0 (u: 3·0.5 − 4·0.25 − 1·0.5 =
    // 0; v: 0.25 − 0.25 = 0), in this order: radius 0.5 (weight 3), 0.25
    // (4), 0.25 (1), 0.25 (1), 0.5 (1); total 10. The curve through the
    // sorted hits, ties in hit order: (0, 0), (0.25, 0.4), (0.25, 0.5),
    // (0.25, 0.6), (0.5, 0.9), (0.5, 1). The closed disk of radius 0.25
    // holds 0.6 of the power; halfway to 0.5 the curve is halfway from 0.6
    // to 0.9; at 0.5, everything (definition of encircled energy on the
    // closed disk; common practice).
    let h = hits_at(&[(0.5, 0.0, 3.0), (-0.25, 0.0, 4.0), (0.0, 0.25, 1.0), (0.0, -0.25, 1.0), (-0.5, 0.0, 1.0)]);
    let ee = encircled_energy(&h, Some(0)).unwrap();
    let expect = [(0.125, 0.2), (0.25, 0.6), (0.375, 0.75), (0.5, 1.0)];
    for (r, f) in expect {
        assert!((ee.fraction_at(r) - f).abs() < 1e-15, "fraction within {r}: {} vs {f}", ee.fraction_at(r));
    }
    // The plotted curve (binned) gives the same at its samples.
    let (radii, fracs) = ee.curve(5);
    assert_eq!(radii, vec![0.0, 125.0, 250.0, 375.0, 500.0]);
    for (k, (r, f)) in expect.iter().enumerate() {
        assert!((fracs[k + 1] - f).abs() < 1e-15, "curve at {r}: {} vs {f}", fracs[k + 1]);
    }
    // And the inverse: 0.4 and 0.6 of the power at 0.25, 0.75 halfway
    // out, 0.9 at 0.5.
    assert_eq!(ee.radius_for(0.4), Some(0.25));
    assert_eq!(ee.radius_for(0.6), Some(0.25));
    assert!((ee.radius_for(0.75).unwrap() - 0.375).abs() < 1e-15);
    assert_eq!(ee.radius_for(0.9), Some(0.5));
}

#[test]
fn encircled_energy_curve_of_one_point_and_its_last_sample() {
    // The curve starts at (0, 0) and ends with the whole power at the
    // largest radius (definition of the encircled-energy curve; common
    // practice).
    let ee = encircled_energy(&pair(0.3), Some(0)).unwrap();
    // A fraction's radius exists for fractions in (0, 1] only.
    for frac in [0.0, -0.1, 1.0 + 1e-12, 2.0, f64::NAN] {
        assert_eq!(ee.radius_for(frac), None, "fraction {frac}");
    }
    assert_eq!(ee.radius_for(1.0), Some(0.3));
    assert!(rel(ee.radius_for(1e-9).unwrap(), 0.3 * 2e-9) < 1e-12, "the curve starts at (0, 0)");
    assert_eq!(ee.curve(1), (vec![0.0], vec![0.0]));
    assert_eq!(ee.curve(0), (vec![], vec![]));
    let (r, f) = ee.curve(2);
    assert_eq!((r[0], f[0], f[1]), (0.0, 0.0, 1.0));
    assert!(rel(r[1], 300.0) < 1e-12);
    // A largest radius x for which (x/10)·10 rounds above x: the last of
    // 11 samples then lies past every hit, and still encloses everything.
    let x = (1..10_000).map(|k| k as f64 * 1e-3).find(|&x| (x / 10.0) * 10.0 > x).expect("such an x exists");
    let ee = encircled_energy(&pair(x), Some(0)).unwrap();
    let (r, f) = ee.curve(11);
    assert!(r[10] * 1e-3 > x, "the sample should lie past the largest radius");
    assert_eq!(f[10], 1.0);
}

#[test]
fn defocused_paraboloid_gives_a_uniform_blur_disk() {
    // Geometric defocus (common practice): a screen δ inside the focus of
    // an f/N paraboloid sees a nearly uniform disk of radius ≈ δ·tan θ;
    // the ray from height h arrives at an angle with tan θ = h / (f − h²/4f)
    // (focus–directrix property), so the blur radius is δ·h/(f − h²/4f).
    // EE50 ≈ a/√2 of the rim radius a, to within the small non-uniformity
    // of tan θ over the pupil (1 %).
    let delta = 5.0;
    let text = layout(
        &[mirror("m", 1000.0, 2000.0, -1.0, 200.0, None), screen("s", 0.0, delta, 20.0, "square", false)],
        &[beam("star", 0.0, 500.0, 200.0, 40000, "hex", 0.0)],
    );
    let (scene, res) = run(&text);
    let b = &trace_report(&scene, &res).screens[0].by_source[0];
    let a_um = delta * 100.0 / (1000.0 - 100.0 * 100.0 / 4000.0) * 1e3;
    assert!(rel(b.ee50_radius_um.unwrap(), a_um / 2f64.sqrt()) < 0.01, "{:?} vs {}", b.ee50_radius_um, a_um / 2f64.sqrt());
    assert!(rel(b.ee80_radius_um.unwrap(), a_um * 0.8f64.sqrt()) < 0.01);
}

#[test]
fn sphere_longitudinal_aberration_matches_the_exact_axis_crossing() {
    // Exact trace of the sphere (elementary geometry of the circle): a
    // ray parallel to the axis at height h = R sin θ crosses the axis
    // R − R/(2 cos θ) from the vertex. With the screen at the paraxial
    // focus R/2 and looking toward the mirror, the crossing lies
    // R/(2 cos θ) − R/2 along the screen axis (2.5189 mm at h = 100,
    // R = 1000).
    let r = 1000.0;
    let text = layout(
        &[mirror("m", 1000.0, r, 0.0, 400.0, None), screen("s", 0.0, 500.0, 300.0, "square", false)],
        &[beam("star", 0.0, 600.0, 400.0, 100, "hex", 0.0)],
    );
    let scene = scene(&text);
    let la = longitudinal_aberration(&scene, 0, 0, 41).unwrap();
    assert_eq!(la.height_unit, "mm");
    assert_eq!(la.pupil.len(), 40, "the central ray has no crossing");
    for (h, x) in la.height.iter().zip(&la.crossing_mm) {
        let c = (1.0 - (h / r).powi(2)).sqrt();
        let expect = r / (2.0 * c) - r / 2.0;
        assert!((x - expect).abs() < 1e-9 * r, "h {h}: {x} vs {expect}");
    }
    let k = la.height.iter().position(|h| (h - 100.0).abs() < 1e-9).unwrap();
    assert!(rel(la.crossing_mm[k], 2.5189) < 1e-4);
}

/// Where a ray from (y0, z0) along (dy, dz) crosses the axis y = 0 after
/// reflecting inside the sphere y² + z² = R² (mirror toward +z): exact
/// plane geometry, the circle and the law of reflection (Hecht, Optics,
/// §4.4).
fn sphere_axis_crossing(r: f64, (y0, z0): (f64, f64), (dy, dz): (f64, f64)) -> f64 {
    // |p0 + t d|² = R², the root ahead of the ray.
    let (b, c) = (y0 * dy + z0 * dz, y0 * y0 + z0 * z0 - r * r);
    let t = -b + (b * b - c).sqrt();
    let (py, pz) = (y0 + t * dy, z0 + t * dz);
    let (ny, nz) = (py / r, pz / r);
    let dn = dy * ny + dz * nz;
    let (ry, rz) = (dy - 2.0 * dn * ny, dz - 2.0 * dn * nz);
    pz - py / ry * rz
}

#[test]
fn tilted_fans_longitudinal_aberration_follows_each_meridional_ray() {
    // A beam tilted by a = 2°: its meridional ray at pupil coordinate s
    // starts s·D/2 along the beam's local +y, (y, z) = (cos a, −sin a)
    // (docs/FORMATS.md, conventions); a lamp aimed 3° off the axis with an
    // 8° cone: its ray at s leaves at 3° + 8°·s. Each crosses the screen's
    // axis where the exact trace says (sphere_axis_crossing), measured from
    // the screen plane. The tilts make the fans asymmetric, so each ray
    // must be the one its pupil coordinate names.
    let r = 1000.0f64;
    let a = 2f64.to_radians();
    let text = layout(
        &[mirror("m", 1000.0, r, 0.0, 400.0, None), screen("s", 0.0, 500.0, 300.0, "square", false)],
        &[r#"{ "kind": "beam", "id": "tilted", "center": [0, 600], "direction_deg": 2, "diameter": 300,
               "rays": 100, "pattern": "hex", "irradiance_w_m2": 1000 }"#
            .to_string()],
    );
    let la = longitudinal_aberration(&scene(&text), 0, 0, 21).unwrap();
    assert_eq!(la.pupil.len(), 21, "every ray crosses the axis");
    for ((&s, &h), &x) in la.pupil.iter().zip(&la.height).zip(&la.crossing_mm) {
        assert!((h - 150.0 * s).abs() < 1e-12, "height {h} at pupil {s}");
        let start = (150.0 * s * a.cos(), 600.0 - 150.0 * s * a.sin());
        let expect = sphere_axis_crossing(r, start, (a.sin(), a.cos())) - 500.0;
        assert!((x - expect).abs() < 1e-9 * r, "beam, pupil {s}: {x} vs {expect}");
    }
    // The lamp 900 mm from the mirror images 1125 mm from it (1/u + 1/v =
    // 2/R), where the screen stands.
    let text = layout(
        &[mirror("m", 1000.0, r, 0.0, 600.0, None), screen("s", 0.0, -125.0, 300.0, "square", false)],
        &[r#"{ "kind": "point", "id": "lamp", "center": [0, 100], "direction_deg": 3, "cone_half_angle_deg": 8,
               "rays": 100, "pattern": "hex", "power_w": 1 }"#
            .to_string()],
    );
    let la = longitudinal_aberration(&scene(&text), 0, 0, 21).unwrap();
    assert_eq!((la.height_unit, la.pupil.len()), ("deg", 21));
    for ((&s, &h), &x) in la.pupil.iter().zip(&la.height).zip(&la.crossing_mm) {
        assert!((h - 8.0 * s).abs() < 1e-12, "height {h} at pupil {s}");
        let phi = (3.0 + 8.0 * s).to_radians();
        let expect = sphere_axis_crossing(r, (0.0, 100.0), (phi.sin(), phi.cos())) + 125.0;
        assert!((x - expect).abs() < 1e-9 * r, "lamp, pupil {s}: {x} vs {expect}");
    }
}

#[test]
fn lamp_at_the_centre_of_curvature_has_no_longitudinal_aberration() {
    // A sphere images its centre of curvature onto itself (elementary
    // geometry): every meridional ray from a lamp there returns through it.
    let text = layout(
        &[mirror("m", 1000.0, 1000.0, 0.0, 600.0, None), screen("s", 0.0, -1.0, 50.0, "square", false)],
        &[r#"{ "kind": "point", "id": "lamp", "center": [0, 0], "direction_deg": 0, "cone_half_angle_deg": 15,
               "rays": 100, "pattern": "hex", "power_w": 1 }"#
            .to_string()],
    );
    let la = longitudinal_aberration(&scene(&text), 0, 0, 21).unwrap();
    assert_eq!(la.height_unit, "deg");
    assert_eq!(la.crossing_mm.len(), 20);
    assert!(la.crossing_mm.iter().all(|x| (x - 1.0).abs() < 1e-9), "{:?}", la.crossing_mm);
}
