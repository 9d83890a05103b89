//! Wavefront, Strehl and best focus on defocused, tilted and
//! off-axis screens, and two-mirror designs over a range of parameters.

mod layout_support;
use catoptric::analysis::{focus_fit, trace_report, wavefront};
use catoptric::design::{design_two_mirror, TwoMirrorKind, TwoMirrorSpec};
use catoptric::geometry::{Frame, Vec3};
use catoptric::{trace, Scene, TraceOptions};
use layout_support::*;
use serde_json::json;

const LAMBDA_MM: f64 = 550e-6;

/// World point of a screen-frame point (u, v, w) of screen `i`.
fn screen_to_world(scene: &Scene, i: usize, p: [f64; 3]) -> Vec3 {
    let e = scene.screen_element(&scene.screen_ids[i]).unwrap();
    e.frame.to_world_point(&Vec3::new(p[0], p[1], p[2]))
}

/// f/5 paraboloid, vertex at the origin facing +z, focus at (0, 1000); a
/// star at `field_deg` out of the layout plane; screen at `center`, axis
/// `axis_deg`.
fn f5_star(field_deg: f64, center: [f64; 2], axis_deg: f64) -> String {
    let mut b = beam("star", [0.0, 1500.0], 180.0, 220.0, 20000, "hex");
    b["out_of_plane_deg"] = json!(field_deg);
    layout(
        &[
            mirror("m", [0.0, 0.0], 0.0, Some(2000.0), -1.0, 200.0, 0.0, 0.0, None),
            screen("s", center, axis_deg, 60.0, "square", false),
        ],
        &[b],
    )
}

/// Focal property of the paraboloid (any analytic-geometry text): the wavefront is a
/// perfect sphere about the focus wherever the screen stands — defocused
/// either way or tilted — so the residual after removing piston, tilt and
/// defocus is zero, Strehl 1, and the best point found is the focus.
/// The closed-form best focus (quadratic RMS²(s), derived in src/analysis/focus.rs) on a tilted
/// screen is the shift (F − C)·a along the screen axis a, where the spot
/// is a point.
#[test]
fn perfect_focus_seen_on_defocused_and_tilted_screens() {
    let focus = Vec3::new(0.0, 0.0, 1000.0);
    for (center, axis) in [([0.0, 1000.0], 180.0), ([0.0, 1004.0], 180.0), ([0.0, 993.0], 180.0), ([2.0, 996.0], 205.0), ([-1.0, 1003.0], 140.0)] {
        let text = f5_star(0.0, center, axis);
        let (scene, res) = run(&text);
        let h = &res.screens[0];
        assert!(h.len() > 16000, "{} hits", h.len());
        let fit = focus_fit(h, None).unwrap();
        let e = scene.screen_element("s").unwrap();
        let want_shift = (focus - e.frame.origin).dot(&e.frame.ez);
        let s = fit.best_shift().unwrap();
        assert!((s - want_shift).abs() < 1e-7, "screen {center:?} {axis}°: shift {s} vs {want_shift}");
        assert!(fit.rms_at_best().unwrap() < 1e-7, "RMS at best {}", fit.rms_at_best().unwrap());
        let best = fit.best_point().unwrap();
        assert!((screen_to_world(&scene, 0, best) - focus).norm() < 1e-7);
        let w = wavefront(h, None, best, LAMBDA_MM).unwrap();
        assert!(w.rms_waves < 1e-5 && w.pv_waves < 1e-4, "{center:?} {axis}: rms {} pv {}", w.rms_waves, w.pv_waves);
        assert!(w.strehl > 1.0 - 1e-8);
        // Started from the screen centre instead, the fit still finds the focus.
        let w2 = wavefront(h, None, [0.0, 0.0, 0.0], LAMBDA_MM).unwrap();
        assert!((screen_to_world(&scene, 0, w2.best_point) - focus).norm() < 1e-6);
        assert!(w2.rms_waves < 1e-4);
    }
}

/// Third-order coma of a paraboloid with the stop at the mirror: linear
/// sagittal coma S = θ f/(16 N²) (Schroeder, Astronomical Optics, 2nd ed.,
/// ch. 5, value from memory), so the wavefront coefficient W131 = S/(2N) =
/// θ f/(32 N³) (transverse aberration = −(f/a)∂W/∂ρ, standard third-order
/// theory) and the RMS wavefront with tilt removed W131/√72 (Zernike
/// normalisation; Mahajan, Optical Imaging and Aberrations, value from
/// memory). Strehl is exp(−(2πσ)²) (Mahajan, JOSA 72, 1258 (1982)). The
/// wavefront is a property of the beam: the same on any screen that
/// catches the whole beam.
#[test]
fn off_axis_star_wavefront_is_third_order_coma_on_any_screen() {
    let (f, n) = (1000.0f64, 5.0f64);
    let alpha = 0.2f64;
    let theta = alpha.to_radians();
    let u0 = f * theta.tan();
    let w131 = theta * f / (32.0 * n.powi(3));
    let want = w131 / 72f64.sqrt() / LAMBDA_MM;
    let mut seen = Vec::new();
    for (center, axis) in [([0.0, 1000.0], 180.0), ([0.0, 1006.0], 180.0), ([0.0, 998.0], 200.0)] {
        let (scene, res) = run(&f5_star(alpha, center, axis));
        let r = trace_report(&scene, &res);
        let b = &r.screens[0].by_source[0];
        let rms = b.wavefront_rms_waves.unwrap();
        assert!(rel(rms, want) < 0.03, "screen {center:?} {axis}°: RMS {rms} waves vs {want}");
        let strehl = b.strehl_estimate.unwrap();
        assert!(rel(strehl, (-(std::f64::consts::TAU * rms).powi(2)).exp()) < 1e-12);
        assert_eq!(b.diffraction_limited, Some(rms <= 1.0 / 14.0));
        seen.push(rms);
        // The best-focus centroid. Third-order theory (same sources): the
        // coma patch of a uniform pupil, ε = Sρ²(2 + cos 2φ) radially,
        // has its centroid S beyond the chief ray's image f tan θ (away
        // from the axis for a paraboloid); the least-RMS plane is the
        // medial one, midway between the tangential and sagittal foci at
        // f cos θ and f / cos θ along the chief ray (Coddington's
        // equations for a mirror, value from memory), i.e. z ≈ f cos θ.
        // Allow S/10 for higher orders and the tilted screen.
        let fit = focus_fit(&res.screens[0], None).unwrap();
        let p = screen_to_world(&scene, 0, fit.best_point().unwrap());
        let s_coma = theta * f / (16.0 * n * n);
        let want = Vec3::new(u0 + s_coma, 0.0, f * theta.cos());
        assert!((p - want).abs().max() < 0.1 * s_coma, "best point {p:?} vs {want:?} (S = {s_coma} mm)");
    }
    for s in &seen {
        assert!(rel(*s, seen[0]) < 1e-3, "wavefront depends on the screen: {seen:?}");
    }
}

/// Two-mirror closed forms (Schroeder, Astronomical Optics, 2nd ed., ch. 6, from
/// memory; Wilson uses the opposite sign of m): over a range of
/// magnifications and back-focus ratios the designer's numbers follow the
/// closed forms, the Dall–Kirkham pair meets the spherical-aberration
/// condition, classical forms (shared conic foci) focus an
/// axial beam to a point at B behind the primary, and the aplanats and the
/// Dall–Kirkham (corrected to third order) stay within the Maréchal
/// criterion on axis at these slow-ish focal ratios.
#[test]
fn two_mirror_designs_over_a_range_of_parameters() {
    let f1 = 1000.0;
    let d = 250.0;
    for ratio in [2.5, 3.0, 4.0, 5.0] {
        for beta in [0.1, 0.25] {
            for kind in TwoMirrorKind::ALL {
                let spec = TwoMirrorSpec { kind, diameter: d, primary_focal: f1, focal: ratio * f1, back_focus: beta * f1, field_deg: 0.0 };
                let what = format!("{kind:?} F/f1 = {ratio}, β = {beta}");
                let Ok(des) = design_two_mirror(&spec) else { panic!("{what}: refused") };
                let m = if kind.is_gregorian() { -ratio } else { ratio };
                let k = (1.0 + beta) / (m + 1.0);
                let sep = f1 * (1.0 - k);
                let r1 = 2.0 * f1;
                let r2_schroeder = m * k * r1 / (m - 1.0);
                assert!(rel(des.magnification, m) < 1e-12, "{what}");
                assert!(rel(des.separation_mm, sep) < 1e-12, "{what}");
                assert!(rel(des.primary.radius_mm, r1) < 1e-12, "{what}");
                // Layout sign: concave +. Schroeder's R₂ is positive for a
                // convex secondary here; the layout radius is its negative.
                assert!(rel(des.secondary.radius_mm, -r2_schroeder) < 1e-12, "{what}");
                assert_eq!(des.secondary.radius_mm > 0.0, kind.is_gregorian(), "{what}: concave only for Gregorians");
                let classical = -((m + 1.0) / (m - 1.0)).powi(2);
                let (k1, k2) = (des.primary.conic, des.secondary.conic);
                match kind {
                    TwoMirrorKind::Cassegrain | TwoMirrorKind::Gregorian => {
                        assert_eq!(k1, -1.0);
                        assert!(rel(k2, classical) < 1e-12, "{what}");
                    }
                    TwoMirrorKind::RitcheyChretien | TwoMirrorKind::AplanaticGregorian => {
                        let k1w = -1.0 - 2.0 * (1.0 + beta) / (m * m * (m - beta));
                        let k2w = classical - 2.0 * m * (m + 1.0) / ((m - beta) * (m - 1.0).powi(3));
                        assert!(rel(k1, k1w) < 1e-12 && rel(k2, k2w) < 1e-12, "{what}: {k1} {k2}");
                    }
                    TwoMirrorKind::DallKirkham => {
                        assert_eq!(k2, 0.0);
                        let lhs = k1 + 1.0;
                        let rhs = k * (m - 1.0).powi(3) / m.powi(3) * (k2 + ((m + 1.0) / (m - 1.0)).powi(2));
                        assert!((lhs - rhs).abs() < 1e-12, "{what}: SA condition {lhs} vs {rhs}");
                    }
                }
                // Trace the generated layout.
                let scene = Scene::compile(&des.layout);
                let res = trace(&scene, TraceOptions { rays: Some(6000), ..Default::default() });
                let h = &res.screens[0];
                let open = 1.0 - des.obstruction_fraction.powi(2);
                assert!(h.len() as f64 > 0.9 * open * res.rays_launched as f64, "{what}: {} hits", h.len());
                match kind {
                    TwoMirrorKind::Cassegrain | TwoMirrorKind::Gregorian => {
                        let worst = (0..h.len()).map(|i| h.u[i].hypot(h.v[i])).fold(0.0, f64::max);
                        assert!(worst < 1e-8, "{what}: worst miss {worst:e} mm");
                    }
                    _ => {
                        let r = trace_report(&scene, &res);
                        let b = &r.screens[0].by_source[0];
                        let rms = b.wavefront_rms_waves.unwrap();
                        assert!(rms < 1.0 / 14.0, "{what}: on-axis RMS {rms} waves");
                    }
                }
            }
        }
    }
}

/// A point lamp's launch point is a spherical wavefront; an ellipsoid turns
/// it into one converging on the far focus (focal property of the ellipse), so the
/// residual is zero and Strehl 1 on a screen set 3 mm off the focus and
/// tilted 15°, and the closed-form best focus is the far focus.
#[test]
fn lamp_through_an_ellipsoid_gives_a_perfect_spherical_wave() {
    let (p, q) = (50.0f64, 500.0f64);
    let r = 2.0 * p * q / (p + q);
    let k = -((q - p) / (q + p)).powi(2);
    let pl = PLACES[1];
    let text = layout(
        &[
            mirror("m", pl.vertex, pl.axis_deg, Some(r), k, 180.0, 0.0, 12.0, None),
            screen("s", pl.pt(1.0, q + 3.0), pl.angle(0.0, -1.0) + 15.0, 40.0, "circle", true),
        ],
        &[lamp("l", pl.pt(0.0, p), pl.angle(0.0, -1.0), 75.0, 8000, 5.0)],
    );
    let (scene, res) = run(&text);
    let h = &res.screens[0];
    assert!(h.len() > 5000, "{}", h.len());
    let fit = focus_fit(h, None).unwrap();
    let best = screen_to_world(&scene, 0, fit.best_point().unwrap());
    assert!((best - pl.world(0.0, q)).norm() < 1e-7, "best focus {best:?}");
    let w = wavefront(h, None, fit.best_point().unwrap(), LAMBDA_MM).unwrap();
    assert!(w.rms_waves < 1e-5, "RMS {} waves", w.rms_waves);
    assert!(w.strehl > 1.0 - 1e-8);
    let frame: Frame = scene.screen_element("s").unwrap().frame;
    assert!((frame.to_world_point(&Vec3::from(w.best_point)) - pl.world(0.0, q)).norm() < 1e-6);
}

/// Hits with the given unit directions (u, v, w components), equal power,
/// all from source 0.
fn hits_with_directions(dirs: &[[f64; 3]]) -> catoptric::trace::ScreenHits {
    let mut h = catoptric::trace::ScreenHits::default();
    for (i, d) in dirs.iter().enumerate() {
        h.u.push(i as f64 * 0.1);
        h.v.push(0.0);
        h.du.push(d[0]);
        h.dv.push(d[1]);
        h.dw.push(d[2]);
        h.opl.push(0.0);
        h.weight.push(1.0);
        h.source.push(0);
        h.first.push(true);
    }
    h
}

#[test]
fn cone_half_angle_is_the_widest_ray_about_the_mean_direction() {
    // Definition of the cone's half-angle (common practice): the largest
    // angle between an arriving ray and the power-weighted mean direction,
    // computed here by acos of the dot product with the mean, independently
    // of the library's sin²/atan2 search. A symmetric cone of 20°, then a
    // bundle with one ray arriving from 120° (past 90° from the mean).
    use catoptric::analysis::cone_half_angle;
    let deg = |a: f64| a.to_radians();
    let cone: Vec<[f64; 3]> = (0..12)
        .map(|k| {
            let (t, p) = (deg(if k % 2 == 0 { 20.0 } else { 10.0 }), k as f64 * std::f64::consts::TAU / 12.0);
            [t.sin() * p.cos(), t.sin() * p.sin(), t.cos()]
        })
        .collect();
    let got = cone_half_angle(&hits_with_directions(&cone), Some(0)).unwrap();
    assert!((got - deg(20.0)).abs() < 1e-12, "{} deg", got.to_degrees());
    // A cone of rays at 20° and 19.9° alternately, turned about x, then
    // about y: its mean turns with it, the half-angle stays 20° (a search
    // that weighed the directions wrongly would pick a 19.9° ray).
    let close: Vec<[f64; 3]> = (0..12)
        .map(|k| {
            let (t, p) = (deg(if k % 2 == 0 { 20.0 } else { 19.9 }), k as f64 * std::f64::consts::TAU / 12.0);
            [t.sin() * p.cos(), t.sin() * p.sin(), t.cos()]
        })
        .collect();
    for (a, b) in [(30.0, 0.0), (80.0, 0.0), (30.0, 60.0), (70.0, -50.0), (45.0, 45.0), (-60.0, 35.0), (20.0, 75.0)] {
        let (a, b) = (deg(a), deg(b));
        let turned: Vec<[f64; 3]> = close
            .iter()
            .map(|d| [d[0], d[1] * a.cos() - d[2] * a.sin(), d[1] * a.sin() + d[2] * a.cos()])
            .map(|d| [d[0] * b.cos() + d[2] * b.sin(), d[1], d[2] * b.cos() - d[0] * b.sin()])
            .collect();
        let got = cone_half_angle(&hits_with_directions(&turned), Some(0)).unwrap();
        assert!((got - deg(20.0)).abs() < 1e-12, "turned {a}, {b}: {} deg", got.to_degrees());
    }
    let mut dirs = vec![[0.0, 0.0, 1.0]; 10];
    dirs.push([deg(120.0).sin(), 0.0, deg(120.0).cos()]);
    let m = dirs.iter().fold([0.0; 3], |a, d| [a[0] + d[0], a[1] + d[1], a[2] + d[2]]);
    let n = (m[0] * m[0] + m[1] * m[1] + m[2] * m[2]).sqrt();
    let want = dirs.iter().map(|d| ((d[0] * m[0] + d[1] * m[1] + d[2] * m[2]) / n).acos()).fold(0.0, f64::max);
    assert!(want > deg(90.0));
    let got = cone_half_angle(&hits_with_directions(&dirs), Some(0)).unwrap();
    assert!((got - want).abs() < 1e-9, "{} deg, want {}", got.to_degrees(), want.to_degrees());
    // And a working f-number of 1/(2 sin θ) capped at 90°: 0.5.
    let n = catoptric::analysis::f_number(&hits_with_directions(&dirs), Some(0)).unwrap();
    assert!((n - 0.5).abs() < 1e-12, "N {n}");
    // Fewer than three hits make no cone (the report's rule); three do.
    let three = [[0.0, 0.0, 1.0], [deg(10.0).sin(), 0.0, deg(10.0).cos()], [-deg(10.0).sin(), 0.0, deg(10.0).cos()]];
    assert!(catoptric::analysis::f_number(&hits_with_directions(&three[..2]), Some(0)).is_none());
    let n3 = catoptric::analysis::f_number(&hits_with_directions(&three), Some(0)).unwrap();
    assert!((n3 - 0.5 / deg(10.0).sin()).abs() < 1e-9, "N {n3}");
    // Parallel light has no cone and no f-number.
    assert!(catoptric::analysis::f_number(&hits_with_directions(&[[0.0, 0.0, 1.0]; 5]), Some(0)).is_none());
}

#[test]
fn mean_direction_is_the_normalised_power_weighted_sum() {
    // Definition (common practice): the unit vector along Σ w·d; none
    // without hits or when the directions cancel.
    use catoptric::analysis::mean_direction;
    let (s, c) = (0.6, 0.8);
    let m = mean_direction(&hits_with_directions(&[[s, 0.0, c], [-s, 0.0, c], [0.0, s, c]]), Some(0)).unwrap();
    let n = (s * s + 9.0 * c * c).sqrt();
    for (got, want) in [m.x, m.y, m.z].into_iter().zip([0.0, s / n, 3.0 * c / n]) {
        assert!((got - want).abs() < 1e-15, "{m:?}");
    }
    assert!(mean_direction(&hits_with_directions(&[]), Some(0)).is_none());
    assert!(mean_direction(&hits_with_directions(&[[0.0, s, c], [0.0, -s, -c]]), Some(0)).is_none());
    assert!(mean_direction(&hits_with_directions(&[[0.0, s, c]]), Some(1)).is_none(), "no hits of source 1");
}
