//! Reflection law over random surfaces and rays, grazing and rim hits, and
//! the general sag solver against the closed-form conic intersection.
//! The law of reflection (incidence = reflection, normal coplanar, unit
//! directions) is textbook optics, e.g. Hecht, Optics, ch. 4.

mod common;
use common::Rng;
use catoptric::geometry::{reflect, Aperture, MirrorSurface, NaturalSpline, Profile, Sag, Vec3};
use catoptric::layout::parse_layout;
use catoptric::{trace, Scene, TraceOptions};


fn random_surface(rng: &mut Rng, general: bool) -> MirrorSurface {
    let r = rng.range(200.0, 3000.0) * if rng.next() < 0.3 { -1.0 } else { 1.0 };
    let k = rng.range(-4.0, 1.5);
    let c = 1.0 / r;
    // Keep the aperture well inside the conic's domain.
    let lim = if k > -1.0 { 0.8 / (c.abs() * (1.0 + k).sqrt()) } else { f64::INFINITY };
    let rad = rng.range(20.0, 200.0).min(lim);
    let extruded = rng.next() < 0.3;
    let mut p = Profile::conic(Some(r), k);
    if general {
        p.aspheric = vec![rng.range(-1e-9, 1e-9), rng.range(-1e-14, 1e-14)];
        let knots: Vec<[f64; 2]> = (0..6).map(|i| [rad * i as f64 / 5.0 * if extruded { 2.0 } else { 1.0 } - if extruded { rad } else { 0.0 }, rng.range(-0.05, 0.05)]).collect();
        p.departure = NaturalSpline::new(&knots);
    }
    let ap = if extruded {
        Aperture::Strip { offset: 0.0, half_width: rad, half_hole: 0.0, half_length: 300.0 }
    } else {
        Aperture::Disk { offset: 0.0, r: rad, hole: 0.0 }
    };
    MirrorSurface::new(p, ap, extruded)
}

fn check_law(s: &MirrorSurface, o: &Vec3, d: &Vec3) -> bool {
    let Some(h) = s.intersect(o, d, 1e-9, f64::INFINITY) else { return false };
    let n = h.normal;
    assert!((n.norm() - 1.0).abs() < 1e-12);
    let out = reflect(d, &n);
    assert!((out.norm() - 1.0).abs() < 1e-12, "unit direction");
    assert!((d.dot(&n) + out.dot(&n)).abs() < 1e-12, "equal angles");
    assert!(d.cross(&out).dot(&n).abs() < 1e-12, "coplanar normal");
    // The hit lies on the surface.
    let rho = if s.extruded { h.point.y } else { h.point.x.hypot(h.point.y) };
    let z = s.profile.sag(rho);
    assert!((h.point.z - z).abs() < 1e-8 * s.scale.max(1.0), "on surface: {} vs {z}", h.point.z);
    // Normal is perpendicular to the surface: compare with the slope.
    let sl = s.profile.slope(rho);
    let expect = if s.extruded {
        Vec3::new(0.0, -sl, 1.0).normalize()
    } else {
        let (cx, cy) = if rho > 0.0 { (h.point.x / rho, h.point.y / rho) } else { (0.0, 0.0) };
        Vec3::new(-sl * cx, -sl * cy, 1.0).normalize()
    };
    assert!((expect - n).norm() < 1e-7, "normal {n:?} vs {expect:?}");
    true
}

#[test]
fn reflection_law_holds_on_random_surfaces_and_rays() {
    let mut rng = Rng(7);
    let mut hits = 0;
    for case in 0..400 {
        let s = random_surface(&mut rng, case % 2 == 1);
        for _ in 0..20 {
            let o = Vec3::new(rng.range(-150.0, 150.0), rng.range(-150.0, 150.0), rng.range(300.0, 900.0));
            let target = Vec3::new(rng.range(-100.0, 100.0), rng.range(-100.0, 100.0), 0.0);
            let d = (target - o).normalize();
            if check_law(&s, &o, &d) {
                hits += 1;
            }
        }
    }
    assert!(hits > 2000, "only {hits} hits");
}

/// Common practice: a closed form against the general path. A conic carrying an
/// all-zero departure spline goes through the iterative solver; it must
/// agree with the closed-form quadratic to well below a nanometre.
#[test]
fn general_solver_agrees_with_closed_form_conic() {
    let mut rng = Rng(99);
    let mut compared = 0;
    for _ in 0..300 {
        let closed = random_surface(&mut rng, false);
        let mut p = closed.profile.clone();
        let (lo, hi) = closed.aperture.rho_range();
        p.departure = NaturalSpline::new(&[[lo - 1.0, 0.0], [0.5 * (lo + hi), 0.0], [hi + 1.0, 0.0]]);
        let general = MirrorSurface::new(p, closed.aperture, closed.extruded);
        for _ in 0..10 {
            let o = Vec3::new(rng.range(-100.0, 100.0), rng.range(-100.0, 100.0), rng.range(200.0, 600.0));
            let d = (Vec3::new(rng.range(-80.0, 80.0), rng.range(-80.0, 80.0), 0.0) - o).normalize();
            let a = closed.intersect(&o, &d, 1e-9, f64::INFINITY);
            let b = general.intersect(&o, &d, 1e-9, f64::INFINITY);
            match (a, b) {
                (Some(a), Some(b)) => {
                    assert!((a.point - b.point).norm() < 1e-9, "{:?} vs {:?}", a.point, b.point);
                    assert!((a.normal - b.normal).norm() < 1e-9);
                    compared += 1;
                }
                (None, None) => {}
                (a, b) => {
                    // Only a ray skimming the aperture rim may differ.
                    let p = a.or(b).unwrap().point;
                    let edge = closed.aperture.rho_max();
                    let r = if closed.extruded { p.y.abs() } else { p.x.hypot(p.y) };
                    assert!((r - edge).abs() < 1e-6, "one solver missed a hit at ρ = {r}");
                }
            }
        }
    }
    assert!(compared > 1000);
}

/// A ray that grazes a sphere tangentially at the vertex plane, rays at the
/// rim, in the hole and on the back face (common practice: edge cases of
/// the quadratic and of the aperture test).
#[test]
fn grazing_rim_hole_and_back_face() {
    let s = MirrorSurface::new(Profile::conic(Some(1000.0), 0.0), Aperture::Disk { offset: 0.0, r: 100.0, hole: 20.0 }, false);
    // Tangent to the vertex along y: touches at the vertex (inside the hole
    // → no hit), and the ray never enters the surface.
    assert!(s.intersect(&Vec3::new(0.0, -200.0, 0.0), &Vec3::new(0.0, 1.0, 0.0), 1e-9, f64::INFINITY).is_none());
    // Axial ray in the hole passes.
    assert!(s.intersect(&Vec3::new(0.0, 5.0, 100.0), &Vec3::new(0.0, 0.0, -1.0), 1e-9, f64::INFINITY).is_none());
    // Axial ray at the rim hits (inclusive edge) and just outside misses.
    assert!(s.intersect(&Vec3::new(0.0, 100.0, 100.0), &Vec3::new(0.0, 0.0, -1.0), 1e-9, f64::INFINITY).is_some());
    assert!(s.intersect(&Vec3::new(0.0, 100.0 + 1e-9, 100.0), &Vec3::new(0.0, 0.0, -1.0), 1e-9, f64::INFINITY).is_none());
    // Near-grazing ray in a plane just above the vertex: still hits once
    // where the surface rises to meet it.
    let h = s.intersect(&Vec3::new(0.0, -300.0, 2.0), &Vec3::new(0.0, 1.0, 0.0), 1e-9, f64::INFINITY).unwrap();
    assert!((h.point.y.abs() - (2.0f64 * 1000.0 * 2.0 - 4.0).sqrt()).abs() < 1e-9);

    // Through the tracer: a ray striking the back face is absorbed.
    let text = r#"{"format":"catoptric-layout","version":1,"name":"back","wavelength_nm":550,"max_bounces":4,
      "elements":[{"kind":"mirror","id":"m","vertex":[0,0],"axis_deg":0,"form":"revolved",
        "profile":{"radius":1000},"aperture":{"diameter":200}}],
      "sources":[{"kind":"beam","id":"b","center":[0,-100],"direction_deg":0,"diameter":50,"rays":100,"pattern":"grid"}]}"#;
    let scene = Scene::compile(&parse_layout(text).unwrap());
    let res = trace(&scene, TraceOptions::default());
    assert_eq!(res.rays_absorbed, res.rays_launched);
}

/// Light trapped between two facing concave mirrors stops at the bounce
/// limit and is counted as absorbed, never looping for ever (a confocal
/// cavity re-images near-axial rays onto themselves: common practice).
#[test]
fn bounce_limit_ends_trapped_rays() {
    let text = r#"{"format":"catoptric-layout","version":1,"name":"cavity","wavelength_nm":550,"max_bounces":50,
      "elements":[{"kind":"mirror","id":"a","vertex":[0,0],"axis_deg":0,"form":"revolved","profile":{"radius":1000},"aperture":{"diameter":200}},
                  {"kind":"mirror","id":"b","vertex":[0,500],"axis_deg":180,"form":"revolved","profile":{"radius":1000},"aperture":{"diameter":200}}],
      "sources":[{"kind":"point","id":"p","center":[0,250],"direction_deg":0,"cone_half_angle_deg":5,"rays":500,"pattern":"random","power_w":1}]}"#;
    let scene = Scene::compile(&parse_layout(text).unwrap());
    let res = trace(&scene, TraceOptions::default());
    assert_eq!(res.rays_launched, 500);
    assert_eq!(res.rays_absorbed + res.rays_escaped, 500);
    assert!(res.rays_absorbed > 400, "confocal cavity traps rays: {}", res.rays_absorbed);
}

/// Reflectivity scales the power a ray carries (common practice: a 0.9
/// reflective mirror passes on 90 %).
#[test]
fn reflectivity_weights_power() {
    let text = r#"{"format":"catoptric-layout","version":1,"name":"r","wavelength_nm":550,"max_bounces":4,
      "elements":[{"kind":"mirror","id":"m","vertex":[0,1000],"axis_deg":180,"form":"revolved","profile":{"radius":2000,"conic":-1},"aperture":{"diameter":200},"reflectivity":0.9},
                  {"kind":"screen","id":"s","center":[0,0],"axis_deg":0,"size":10,"shape":"circle"}],
      "sources":[{"kind":"beam","id":"b","center":[0,500],"direction_deg":0,"diameter":200,"rays":5000,"pattern":"random","irradiance_w_m2":1000}]}"#;
    let scene = Scene::compile(&parse_layout(text).unwrap());
    let res = trace(&scene, TraceOptions::default());
    let p: f64 = res.screens[0].weight.iter().sum();
    let launched = 1000.0 * std::f64::consts::PI * 0.1f64.powi(2);
    assert!(((p / launched) - 0.9).abs() < 1e-12, "{p} of {launched}");
}
