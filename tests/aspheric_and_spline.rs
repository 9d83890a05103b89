//! Aspheric coefficients and departure splines against the conics
//! they imitate, and the general sag solver against the closed form.
//! Sources: the ISO 10110-12 sag form and the sphere/paraboloid difference
//! ρ⁴/(8R³) (the ρ⁴ term of the circle's binomial series, third-order
//! theory, re-derived); comparing a closed form with the general path is
//! common practice.

mod layout_support;
use catoptric::geometry::Vec3;
use layout_support::*;
use serde_json::json;

/// A f/5, 200 mm mirror facing +z at the origin with the given profile,
/// a beam along −z filling it, and a screen at z = `screen_z` facing the
/// mirror.
fn f5_layout(profile: serde_json::Value, form_len: Option<f64>, screen_z: f64, rays: u64) -> String {
    let mut m = mirror("m", [0.0, 0.0], 0.0, None, 0.0, 200.0, 0.0, 0.0, form_len);
    m["profile"] = profile;
    layout(
        &[m, screen("s", [0.0, screen_z], 180.0, if form_len.is_some() { 400.0 } else { 40.0 }, "square", false)],
        &[beam("b", [0.0, 1500.0], 180.0, 200.0, rays, "hex")],
    )
}

/// Largest distance of a hit from the screen centre (revolved) or of its
/// v coordinate (extruded), mm.
fn worst(text: &str, extruded: bool) -> (usize, f64) {
    let (_, res) = run(text);
    let h = &res.screens[0];
    let w = (0..h.len()).map(|k| if extruded { h.v[k].abs() } else { h.u[k].hypot(h.v[k]) }).fold(0.0, f64::max);
    (h.len(), w)
}

/// Coefficient of ρ^(2n) / R^(2n−1) in the sphere's sag
/// R − √(R² − ρ²) = −R Σ binom(1/2, n)(−ρ²/R²)ⁿ (binomial series).
fn sphere_series(n: u32) -> f64 {
    let mut b = 1.0; // binom(1/2, n)
    for j in 0..n {
        b *= (0.5 - j as f64) / (j as f64 + 1.0);
    }
    -b * (-1.0f64).powi(n as i32)
}

/// Third-order theory (sag difference ρ⁴/(8R³), re-derived) and the
/// binomial series of the circle: a sphere plus A4 = −1/(8R³) matches the
/// paraboloid up to the ρ⁶ term, so its spot at the paraxial focus shrinks
/// from the sphere's f(ρ/R)³ (slope error ρ³/(2R³), doubled on reflection,
/// over the focal distance f) to (3/4) f (ρ/R)⁵ (residual ρ⁶/(16R⁵));
/// with all of A4 … A20 from the series the spot is a point.
#[test]
fn sphere_plus_aspheric_terms_approaches_the_paraboloid() {
    let (r, f, rho) = (2000.0f64, 1000.0, 100.0);
    assert!((sphere_series(2) - 1.0 / 8.0).abs() < 1e-15 && (sphere_series(3) - 1.0 / 16.0).abs() < 1e-15);
    let sphere = f5_layout(json!({ "radius": r, "conic": 0 }), None, f, 20000);
    let (n0, w0) = worst(&sphere, false);
    let a4 = f5_layout(json!({ "radius": r, "conic": 0, "aspheric": [-1.0 / (8.0 * r.powi(3))] }), None, f, 20000);
    let (n1, w1) = worst(&a4, false);
    assert!(n0 > 19000 && n1 > 19000);
    let want0 = f * (rho / r).powi(3);
    let want1 = 0.75 * f * (rho / r).powi(5);
    assert!(rel(w0, want0) < 0.03, "sphere: {w0} vs {want0}");
    assert!(rel(w1, want1) < 0.03, "sphere + A4: {w1} vs {want1}");
    // The whole series to A20: paraboloid to ρ²⁰.
    let coefs: Vec<f64> = (2..=10).map(|n| -sphere_series(n) / r.powi(2 * n as i32 - 1)).collect();
    let full = f5_layout(json!({ "radius": r, "conic": 0, "aspheric": coefs }), None, f, 20000);
    let (n2, w2) = worst(&full, false);
    assert!(n2 > 19000);
    assert!(w2 < 1e-8, "sphere + A4…A20: worst {w2:e} mm");
    // The same terms on a paraboloid's extruded section (a parabolic
    // trough made from a circular cylinder).
    let trough = f5_layout(json!({ "radius": r, "conic": 0, "aspheric": coefs }), Some(300.0), f, 5000);
    let (n3, w3) = worst(&trough, true);
    assert!(n3 > 2000);
    assert!(w3 < 1e-8, "extruded: worst {w3:e} mm");
}

/// Focus–directrix property of the parabola (any analytic-geometry
/// text): a flat carrying a departure
/// spline through knots of z = ρ²/(4f) focuses at f. A cubic spline
/// reproduces a quadratic exactly except for the end conditions, whose
/// effect decays by about 2 − √3 per knot interval (common practice for
/// natural splines), so knots running well past the aperture leave only a
/// tiny error.
#[test]
fn parabola_drawn_as_a_departure_spline_focuses_like_the_paraboloid() {
    let f = 1000.0f64;
    // Extruded: knots symmetric about the axis, 10 intervals past the rim.
    let knots: Vec<[f64; 2]> = (-30..=30).map(|i| {
        let y = 5.0 * i as f64;
        [y, y * y / (4.0 * f)]
    }).collect();
    let t = f5_layout(json!({ "radius": null, "conic": 0, "departure": knots }), Some(300.0), f, 5000);
    let (n, w) = worst(&t, true);
    assert!(n > 2000);
    assert!(w < 1e-4, "extruded spline parabola: worst {w:e} mm");
    // Revolved: knots from the axis out past the rim (built even about the
    // axis; see regressions.rs).
    let knots: Vec<[f64; 2]> = (0..=30).map(|i| {
        let y = 5.0 * i as f64;
        [y, y * y / (4.0 * f)]
    }).collect();
    let t = f5_layout(json!({ "radius": null, "conic": 0, "departure": knots }), None, f, 20000);
    let (n, w) = worst(&t, false);
    assert!(n > 19000);
    assert!(w < 1e-4, "revolved spline parabola: worst {w:e} mm");
}

/// The general (iterative) solver against the closed-form conic: the same
/// conic forced through the general path by an all-zero departure gives
/// the same hits to well under 1e-9 mm, for every conic type, revolved and
/// extruded, on and off axis, at an odd placement (common practice: a
/// closed form against the general path).
#[test]
fn general_solver_traces_like_the_closed_form() {
    let pl = PLACES[1];
    // (radius, conic, diameter, offset, extruded length)
    type Case = (Option<f64>, f64, f64, f64, Option<f64>);
    let cases: [Case; 8] = [
        (Some(2000.0), -1.0, 200.0, 0.0, None),
        (Some(300.0), -0.5, 200.0, 60.0, None),
        (Some(300.0), 0.8, 150.0, 0.0, None),
        (Some(500.0), -3.0, 200.0, 100.0, None),
        (Some(-800.0), -2.0, 200.0, 0.0, None),
        (Some(-600.0), 0.0, 100.0, -40.0, Some(200.0)),
        (Some(400.0), -1.0, 150.0, 30.0, Some(200.0)),
        (None, 0.0, 100.0, 0.0, None),
    ];
    for (r, k, d, off, len) in cases {
        let conic = mirror("m", pl.vertex, pl.axis_deg, r, k, d, off, 0.0, len);
        let mut general = conic.clone();
        general["profile"]["departure"] = json!([[-1000.0, 0.0], [1000.0, 0.0]]);
        if len.is_none() {
            general["profile"]["departure"] = json!([[0.0, 0.0], [1000.0, 0.0]]);
        }
        let sources = [lamp("l", pl.pt(off, 600.0), pl.angle(0.0, -1.0), 25.0, 4000, 1.0)];
        let scr = screen("s", pl.pt(off, 650.0), pl.angle(0.0, -1.0), 5000.0, "square", true);
        let (_, a) = run(&layout(&[conic, scr.clone()], &sources));
        let (_, b) = run(&layout(&[general, scr], &sources));
        let (ha, hb) = (&a.screens[0], &b.screens[0]);
        assert_eq!(ha.len(), hb.len(), "R {r:?} K {k}");
        assert!(ha.len() > 100, "R {r:?} K {k}: {} hits", ha.len());
        let mut worst = 0.0f64;
        for i in 0..ha.len() {
            worst = worst.max((ha.u[i] - hb.u[i]).hypot(ha.v[i] - hb.v[i]));
            worst = worst.max((ha.opl[i] - hb.opl[i]).abs());
        }
        assert!(worst < 1e-9, "R {r:?} K {k} offset {off}: general vs closed form differ by {worst:e} mm");
    }
}

/// A linear departure on an extruded flat is a tilted plane: its
/// reflection equals that of a flat turned by the same angle (law of
/// reflection, e.g. Hecht, Optics, ch. 4; a natural spline through
/// collinear knots is that line, by its definition).
#[test]
fn linear_departure_is_a_tilted_flat() {
    let tilt = 3.0f64.to_radians();
    let knots = json!([[-200.0, -200.0 * tilt.tan()], [0.0, 0.0], [200.0, 200.0 * tilt.tan()]]);
    let mut m = mirror("m", [0.0, 0.0], 0.0, None, 0.0, 100.0, 0.0, 0.0, Some(100.0));
    m["profile"]["departure"] = knots;
    let sc = scene(&layout(&[m], &[]));
    let d = Vec3::new(0.0, 0.0, -1.0);
    for y in [-40.0, -7.0, 0.5, 33.0] {
        let (hit, out) = bounce(&sc, 0, &Vec3::new(0.0, y, 100.0), &d).expect("hits");
        assert!((hit.z - y * tilt.tan()).abs() < 1e-12);
        // Normal tilted by −tilt about x: reflected ray at 2·tilt toward −y.
        let want = Vec3::new(0.0, -(2.0 * tilt).sin(), (2.0 * tilt).cos());
        assert!((out - want).norm() < 1e-12, "{out:?} vs {want:?}");
    }
}

/// Rays that cross a deep bowl's surface more than once inside its
/// aperture — sideways through the wall, in and out of the rim region,
/// from behind — meet it first where the closed-form conic says, when the
/// surface is handed to the general solver (a conic with a zero departure
/// spline). Roots of the conic from its quadric equation
/// c(x² + y²) − 2z + (1+K)c z² = 0 along the ray (on the sheet through the
/// vertex, (1+K)c·z < 1), found here independently. Rays whose crossings
/// lie closer together than the solver's bracketing step (the aperture
/// chord over 24, `SAG_BRACKET_STEPS`) are left out: a sampled bracket
/// cannot see two sign changes inside one step. Comparing a closed form
/// with the general path is common practice.
#[test]
fn general_solver_finds_the_first_of_several_crossings() {
    use catoptric::geometry::{solve_quadratic, SAG_BRACKET_STEPS};
    use catoptric::scene::Part;
    let (r, k, dia) = (100.0, -0.5, 190.0);
    let conic = mirror("m", [0.0, 0.0], 0.0, Some(r), k, dia, 0.0, 0.0, None);
    let mut general = conic.clone();
    general["profile"]["departure"] = json!([[0.0, 0.0], [1000.0, 0.0]]);
    let surface = |m: serde_json::Value| {
        let sc = scene(&layout(&[m], &[lamp("l", [0.0, 50.0], 180.0, 10.0, 10, 1.0)]));
        match &sc.elements[0].part {
            Part::Mirror { surface, .. } => surface.clone(),
            _ => unreachable!(),
        }
    };
    let (sc, sg) = (surface(conic), surface(general));
    let (c, kap) = (1.0 / r, (1.0 + k) / r);
    let mut rng = Rng(0x9e0e_5017);
    let (mut compared, mut several) = (0, 0);
    for i in 0..60_000 {
        // Rays from near the bowl, and from 400 mm away aimed at it.
        let p = Vec3::new(rng.range(-130.0, 130.0), rng.range(-130.0, 130.0), rng.range(-20.0, 110.0));
        let u = Vec3::new(rng.range(-1.0, 1.0), rng.range(-1.0, 1.0), rng.range(-1.0, 1.0)).normalize();
        let (o, d) = if i % 2 == 0 { (p, u) } else { (p + u * 400.0, -u) };
        let Some((p0, p1)) = sc.aperture.prism_interval(&o, &d) else { continue };
        // Crossings inside the aperture's prism, on the vertex sheet.
        let a = c * (d.x * d.x + d.y * d.y) + kap * d.z * d.z;
        let b = c * (o.x * d.x + o.y * d.y) - d.z + kap * o.z * d.z;
        let q = c * (o.x * o.x + o.y * o.y) - 2.0 * o.z + kap * o.z * o.z;
        let (n, roots) = solve_quadratic(a, b, q);
        let inside: Vec<f64> =
            roots[..n].iter().copied().filter(|&t| t > 1e-6 && t > p0 && t < p1 && kap * (o.z + t * d.z) < 1.0).collect();
        let step = (p1 - p0.max(0.0)) / SAG_BRACKET_STEPS as f64;
        if inside.windows(2).any(|w| w[1] - w[0] < 1.5 * step) {
            continue; // too close together for any sampled bracket
        }
        // Keep away from the rim, where rounding decides either way.
        if inside.iter().any(|&t| {
            let p = o + d * t;
            ((p.x * p.x + p.y * p.y).sqrt() - 0.5 * dia).abs() < 1e-6
        }) {
            continue;
        }
        let (hc, hg) = (sc.intersect(&o, &d, 1e-6, f64::INFINITY), sg.intersect(&o, &d, 1e-6, f64::INFINITY));
        match (&hc, &hg) {
            (None, None) => {}
            (Some(x), Some(y)) => assert!((x.t - y.t).abs() < 1e-9, "o {o:?} d {d:?}: t {} vs {}", x.t, y.t),
            _ => panic!("o {o:?} d {d:?}: closed form {:?} vs general {:?}", hc.map(|h| h.t), hg.map(|h| h.t)),
        }
        if let Some(h) = &hc {
            assert_eq!(Some(h.t), inside.first().copied(), "the hit is the first crossing");
        }
        compared += 1;
        several += (inside.len() >= 2 && hc.is_some()) as usize;
    }
    assert!(compared > 20_000 && several > 1000, "{compared} rays compared, {several} with several crossings");
}
