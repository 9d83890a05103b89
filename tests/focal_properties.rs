//! Focal properties of conic mirrors and exact rays of the sphere, checked
//! against published formulas (sources named beside each check).

use catoptric::analysis::spot_stats;
use catoptric::geometry::{reflect, Aperture, MirrorSurface, Profile, Sag, Vec3};
use catoptric::layout::parse_layout;
use catoptric::{trace, Scene, TraceOptions};

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

fn load(path: &str) -> catoptric::Layout {
    let text = std::fs::read_to_string(format!("{}/{path}", env!("CARGO_MANIFEST_DIR"))).unwrap();
    parse_layout(&text).unwrap()
}

/// Largest distance of any recorded hit from (0, 0) on screen `i`.
fn max_miss(layout: &catoptric::Layout, i: usize) -> (usize, f64) {
    let scene = Scene::compile(layout);
    let res = trace(&scene, TraceOptions::default());
    let h = &res.screens[i];
    let worst = (0..h.len()).map(|k| h.u[k].hypot(h.v[k])).fold(0.0, f64::max);
    (h.len(), worst)
}

/// ISO 10110-12:2019 sag form, worked values for R = 1000, ρ = 100
/// (computed independently of this code from that formula).
#[test]
fn iso_10110_12_sag_values() {
    for (k, want) in [(-1.0, 5.00000), (0.0, 5.01256), (0.5, 5.01889), (-2.0, 4.98756)] {
        let z = Profile::conic(Some(1000.0), k).sag(100.0);
        assert!((z - want).abs() < 5e-6, "K = {k}: {z} vs {want}");
    }
    // Sphere: exact circle R − √(R² − ρ²) (elementary geometry).
    let z = Profile::conic(Some(1000.0), 0.0).sag(300.0);
    assert!(rel(z, 1000.0 - (1000.0f64.powi(2) - 300.0f64.powi(2)).sqrt()) < 1e-14);
    // Paraboloid: ρ²/(2R) exactly; aspheric term adds A4 ρ⁴.
    let mut p = Profile::conic(Some(1000.0), -1.0);
    p.aspheric = vec![1e-9];
    assert!(rel(p.sag(100.0), 5.0 + 1e-9 * 1e8) < 1e-14);
}

/// Focal property of the parabola: the focus of a paraboloid z = ρ²/(4f) is at (0, f): every
/// axial ray passes within 1e-9 mm of it (any analytic-geometry text).
#[test]
fn paraboloid_sends_every_axial_ray_to_the_focus() {
    let layout = load("www/presets/paraboloid-f5.json");
    let (n, worst) = max_miss(&layout, 0);
    assert!(n > 19_000);
    assert!(worst < 1e-9, "worst miss {worst} mm");
    let layout = load("www/presets/deep-parabola.json");
    let (n, worst) = max_miss(&layout, 0);
    assert!(n > 19_000);
    assert!(worst < 1e-9, "rim angle 90°: worst miss {worst} mm");
}

/// Focal property of the parabola (common practice): y = x² focuses at 1/4.
#[test]
fn y_equals_x_squared_focuses_at_one_quarter() {
    // z = ρ² is a paraboloid with c = 2 (R = 0.5), K = −1.
    let s = MirrorSurface::new(Profile::conic(Some(0.5), -1.0), Aperture::Disk { offset: 0.0, r: 2.0, hole: 0.0 }, false);
    for i in 1..=40 {
        let x = 0.05 * i as f64;
        let o = Vec3::new(0.0, x, 10.0);
        let d = Vec3::new(0.0, 0.0, -1.0);
        let h = s.intersect(&o, &d, 0.0, f64::INFINITY).unwrap();
        assert!((h.point.z - x * x).abs() < 1e-12);
        let r = reflect(&d, &h.normal);
        // Where the reflected ray crosses the axis (y = 0).
        let t = -h.point.y / r.y;
        let z_axis = h.point.z + t * r.z;
        assert!((z_axis - 0.25).abs() < 1e-12, "x = {x}: crosses at {z_axis}");
    }
}

/// Focal property of the ellipse: light from one focus of an ellipsoid reaches the other
/// (any analytic-geometry text). Foci at 50 and 500 mm from the vertex:
/// R = 2pq/(p+q), K = −e², e = (q−p)/(q+p).
#[test]
fn ellipsoid_images_one_focus_onto_the_other() {
    let layout = load("www/presets/ellipsoid-lamp.json");
    let (n, worst) = max_miss(&layout, 0);
    assert!(n > 19_000, "{n} hits");
    assert!(worst < 1e-9, "worst miss {worst} mm");
}

/// Focal properties of the conics: a paraboloid plus a convex hyperboloid with
/// K = −((m+1)/(m−1))² (classical Cassegrain; Schroeder, Astronomical
/// Optics, 2nd ed., ch. 6 — value from memory) focuses an axial beam
/// perfectly: the hyperboloid's far focus is the paraboloid's focus, so
/// rays aimed at it leave for its near focus (focal properties of the
/// conics, any analytic-geometry text).
#[test]
fn classical_cassegrain_focuses_perfectly_on_axis() {
    let layout = load("www/presets/cassegrain.json");
    let (n, worst) = max_miss(&layout, 0);
    assert!(n > 15_000, "{n} hits");
    assert!(worst < 1e-9, "worst miss {worst} mm");
}

/// Focal property of the hyperbola (any analytic-geometry text): rays
/// aimed at the far focus of a hyperboloid reflect
/// from its convex face toward the near focus.
#[test]
fn hyperboloid_redirects_rays_aimed_at_one_focus_to_the_other() {
    // Hyperboloid with foci at distances a_n (near, in front of the convex
    // face... behind it for the far focus). Vertex radius and conic from
    // the focal distances: for a convex mirror with virtual focus p behind
    // and real focus q in front, R = −2pq/(q−p), e = (q+p)/(q−p), K = −e².
    let (p, q) = (150.0f64, 600.0f64);
    let r = -2.0 * p * q / (q - p);
    let e = (q + p) / (q - p);
    let s = MirrorSurface::new(Profile::conic(Some(r), -e * e), Aperture::Disk { offset: 0.0, r: 60.0, hole: 0.0 }, false);
    let far = Vec3::new(0.0, 0.0, -p); // behind the convex face
    let near = Vec3::new(0.0, 0.0, q);
    for i in 0..25 {
        let ang = (i as f64) * 0.004;
        let start = near + Vec3::new(0.0, 0.0, 300.0) + Vec3::new(ang.sin() * 30.0, ang.cos() * 20.0, 0.0);
        let d = (far - start).normalize();
        let h = s.intersect(&start, &d, 0.0, f64::INFINITY).expect("hits the mirror");
        let out = reflect(&d, &h.normal);
        let to_near = near - h.point;
        let miss = to_near.cross(&out).norm();
        assert!(miss < 1e-9, "ray {i}: misses the near focus by {miss} mm");
        assert!(to_near.dot(&out) > 0.0);
    }
}

/// Elementary geometry of the circle: a parallel ray at height h on a sphere of radius R crosses
/// the axis R − R/(2 cos θ) from the vertex, sin θ = h/R (elementary
/// geometry); the third-order longitudinal aberration is ≈ h²/(4R).
#[test]
fn sphere_marginal_ray_axis_crossing_is_exact() {
    let r = 1000.0;
    let s = MirrorSurface::new(Profile::conic(Some(r), 0.0), Aperture::Disk { offset: 0.0, r: 900.0, hole: 0.0 }, false);
    for h in [1.0, 10.0, 50.0, 100.0, 300.0, 450.0] {
        let o = Vec3::new(0.0, h, 2000.0);
        let d = Vec3::new(0.0, 0.0, -1.0);
        let hit = s.intersect(&o, &d, 0.0, f64::INFINITY).unwrap();
        let out = reflect(&d, &hit.normal);
        let z_axis = hit.point.z - hit.point.y * out.z / out.y;
        let cos_t = (1.0 - (h / r).powi(2)).sqrt();
        let want = r - r / (2.0 * cos_t);
        assert!(rel(z_axis, want) < 1e-12, "h = {h}: {z_axis} vs {want}");
        if h == 100.0 {
            assert!((z_axis - 497.4811).abs() < 1e-4, "worked example {z_axis}");
            let lsa = r / 2.0 - z_axis;
            assert!((lsa - 2.5189).abs() < 1e-4);
            assert!(rel(lsa, h * h / (4.0 * r)) < 0.01, "third order {lsa}");
        }
    }
}

/// A parabolic trough (extruded paraboloid) brings an axial beam to a line:
/// every hit lies on v = 0 at the focal line, spread along x (u). Same
/// parabola property, now in one dimension.
#[test]
fn extruded_parabola_forms_a_line_focus() {
    let text = r#"{"format":"catoptric-layout","version":1,"name":"trough","wavelength_nm":550,"max_bounces":4,
      "elements":[{"kind":"mirror","id":"trough","vertex":[0,0],"axis_deg":0,"form":"extruded","length":400,
        "profile":{"radius":500,"conic":-1},"aperture":{"diameter":600}},
        {"kind":"screen","id":"line","center":[0,250],"axis_deg":180,"size":500,"shape":"square"}],
      "sources":[{"kind":"beam","id":"sun","center":[0,600],"direction_deg":180,"diameter":700,"rays":20000,"pattern":"grid"}]}"#;
    let layout = parse_layout(text).unwrap();
    let scene = Scene::compile(&layout);
    let res = trace(&scene, TraceOptions::default());
    let h = &res.screens[0];
    assert!(h.len() > 5000);
    let worst_v = h.v.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let spread_u = h.u.iter().fold(0.0f64, |m, u| m.max(u.abs()));
    assert!(worst_v < 1e-9, "off the focal line by {worst_v} mm");
    assert!(spread_u > 150.0, "the line should run along x: {spread_u}");
}

/// Focus–directrix property of the parabola (any analytic-geometry text):
/// an off-axis segment of a paraboloid (parent f = 500, vertex at z = 500
/// facing the focus at the origin, offset 200) focuses an axial beam
/// perfectly at the parent focus, and every ray's path from a plane across
/// the beam to the focus is that plane's distance to the directrix
/// (z = 1000): from the launch plane z = 250, 750 mm. For the segment
/// centre (z = 500 − h²/(4f) = 480) that leaves 520 mm from mirror to
/// focus, the reflected focal length f + h²/(4f).
#[test]
fn off_axis_segment_focuses_at_parent_focus() {
    let layout = load("www/presets/off-axis-paraboloid.json");
    let (n, worst) = max_miss(&layout, 0);
    assert!(n > 19_000);
    assert!(worst < 1e-9, "worst miss {worst} mm");
    let res = trace(&Scene::compile(&layout), TraceOptions::default());
    let h = &res.screens[0];
    let worst_path = h.opl.iter().fold(0.0f64, |m, p| m.max((p - 750.0).abs()));
    assert!(worst_path < 1e-9, "path lengths differ from 750 mm by up to {worst_path} mm");
}

/// The f/5 sphere of the same radius: its RMS spot at the paraxial focus
/// equals a direct sum over the exact transverse aberrations of its rays
/// (elementary geometry of the circle), a closed form against the tracer.
#[test]
fn sphere_spot_at_paraxial_focus_matches_exact_rays() {
    let layout = load("www/presets/sphere-f5.json");
    let scene = Scene::compile(&layout);
    let res = trace(&scene, TraceOptions::default());
    let st = spot_stats(&res.screens[0], None);
    // Edge ray: h = 100, R = 2000; transverse miss at z = R/2 is
    // (R/2 − crossing)·tan 2θ.
    let (r, h) = (2000.0f64, 100.0f64);
    let th = (h / r).asin();
    let crossing = r - r / (2.0 * th.cos());
    let edge = (r / 2.0 - crossing) * (2.0 * th).tan();
    assert!(rel(st.max_radius, edge) < 2e-3, "{} vs {edge}", st.max_radius);
}

/// One concave mirror met three times by the same ray. Elementary geometry
/// of the circle: a chord meeting the circle at angle θ to the radius
/// leaves at the same angle (law of reflection) and subtends a central
/// angle π − 2θ. A ray parallel to the axis at height h = R sin θ meets a
/// sphere at polar angle θ (measured at the centre from the direction of
/// the vertex), then at 3θ − π, 5θ − 2π, 7θ − 3π, …; for h ≈ R sin 60° the
/// first three lie on a cap of semi-diameter 0.95 R (the second near the
/// vertex) and the fourth does not, so each ray reflects three times and
/// leaves on the far side of the axis. Expected hits on a screen across
/// its path, and the path lengths, follow from those points alone.
#[test]
fn a_ray_meets_one_concave_sphere_three_times() {
    let r = 100.0f64;
    let (h0, zs) = (r * 60f64.to_radians().sin(), 120.0);
    let text = format!(
        r#"{{"format":"catoptric-layout","version":1,"name":"three bounces","wavelength_nm":550,"max_bounces":8,
      "elements":[{{"kind":"mirror","id":"bowl","vertex":[0,0],"axis_deg":0,"form":"revolved",
        "profile":{{"radius":{r},"conic":0}},"aperture":{{"diameter":190}}}},
        {{"kind":"screen","id":"out","center":[{y},{zs}],"axis_deg":180,"size":10,"shape":"square"}}],
      "sources":[{{"kind":"beam","id":"pencil","center":[{h0},140],"direction_deg":180,"diameter":2,"rays":61,"pattern":"hex"}}]}}"#,
        y = -h0
    );
    let layout = parse_layout(&text).unwrap();
    let scene = Scene::compile(&layout);
    let em = catoptric::trace::Emitter::new(&scene.sources[0], 61);
    // Point at polar angle φ in the plane of the axis and the ray:
    // (s, z) = (R sin φ, R − R cos φ), s along the ray's azimuth.
    let at = |phi: f64| (r * phi.sin(), r - r * phi.cos());
    let pi = std::f64::consts::PI;
    for res in [trace(&scene, TraceOptions::default()), catoptric::trace::trace_reference(&scene, TraceOptions::default())] {
        let hits = &res.screens[0];
        assert_eq!(hits.len(), em.len(), "every ray reaches the screen after three reflections");
        assert_eq!(res.surface_hits, 4 * em.len() as u64, "three mirror hits and one screen hit per ray");
        for i in 0..em.len() {
            let ray = em.ray(i);
            let (x0, y0) = (ray.origin.x, ray.origin.y);
            let h = x0.hypot(y0);
            let (ex, ey) = (x0 / h, y0 / h);
            let th = (h / r).asin();
            let (p1, p3, p4) = (at(th), at(5.0 * th - 2.0 * pi), at(7.0 * th - 3.0 * pi));
            let len = (p4.0 - p3.0).hypot(p4.1 - p3.1);
            let (ds, dz) = ((p4.0 - p3.0) / len, (p4.1 - p3.1) / len);
            let t = (zs - p3.1) / dz;
            let s = p3.0 + t * ds;
            // Screen frame (axis 180°): u = x, v = −(y − y_c), w = −z.
            let (u, v) = (s * ex, -(s * ey + h0));
            assert!((hits.u[i] - u).abs() < 1e-9 && (hits.v[i] - v).abs() < 1e-9, "ray {i}: ({}, {}) vs ({u}, {v})", hits.u[i], hits.v[i]);
            assert!((hits.du[i] - ds * ex).abs() < 1e-9 && (hits.dv[i] + ds * ey).abs() < 1e-9 && (hits.dw[i] + dz).abs() < 1e-9, "ray {i}: direction");
            // Launch plane to P1, two chords of 2R cos θ, P3 to the screen.
            let opl = (140.0 - p1.1) + 2.0 * (2.0 * r * th.cos()) + t;
            assert!((hits.opl[i] - opl).abs() < 1e-9, "ray {i}: path {} vs {opl}", hits.opl[i]);
        }
    }
}
