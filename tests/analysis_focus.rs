//! Best focus: the closed-form minimum of RMS spot radius versus screen
//! shift, checked against a brute-force search over explicitly shifted
//! hits (common practice: a closed form against the general path),
//! against a real re-trace with the screen moved, and against third-order
//! theory.

mod analysis_support;
use analysis_support::*;
use catoptric::analysis::{analyse_all, focus_fit, spot_stats, through_focus, CURVE_POINTS, MIN_FOCUS_RANGE_MM};
use catoptric::trace::ScreenHits;

/// f/8 sphere, D = 150 mm (R = 2400 mm), screen at the paraxial focus.
fn slow_sphere(screen_z_offset: f64) -> String {
    layout(
        &[mirror("m", 2000.0, 2400.0, 0.0, 150.0, None), screen("s", 0.0, 800.0 + screen_z_offset, 10.0, "square", false)],
        &[beam("star", 0.0, 1000.0, 150.0, 20000, "hex", 0.0)],
    )
}

/// The same sphere lit by a star `tilt_deg` off the axis in the layout
/// plane: the spot's centroid moves as the screen shifts.
fn tilted_sphere(tilt_deg: f64) -> String {
    let text = slow_sphere(0.0).replace("\"direction_deg\": 0,", &format!("\"direction_deg\": {tilt_deg},"));
    assert!(tilt_deg == 0.0 || text.contains(&format!("\"direction_deg\": {tilt_deg},")));
    text
}

/// The hits moved to a screen shifted by `s` along its axis, each ray
/// followed as a straight line: the general path the closed form replaces.
fn shifted(h: &ScreenHits, s: f64) -> ScreenHits {
    let mut o = h.clone();
    for i in 0..h.len() {
        o.u[i] = h.u[i] + s * h.du[i] / h.dw[i];
        o.v[i] = h.v[i] + s * h.dv[i] / h.dw[i];
    }
    o
}

#[test]
fn closed_form_best_focus_equals_brute_force_search() {
    // Known answer built by search (common practice): golden-section search
    // of the RMS radius computed from scratch at each trial shift. On axis
    // and 0.15° off axis, where the centroid moves with the shift (about
    // 2.6 mm per metre of shift along the chief ray), so the RMS must be
    // taken about the moving centroid.
    for tilt in [0.0, 0.15] {
        let (_, res) = run(&tilted_sphere(tilt));
        let h = &res.screens[0];
        assert!(h.len() > 15_000, "tilt {tilt}: {} hits", h.len());
        let fit = focus_fit(h, Some(0)).expect("enough hits");
        let best = fit.best_shift().expect("a focus");
        let rms = |s: f64| spot_stats(&shifted(h, s), Some(0)).rms_radius;
        let (mut a, mut b) = (-5.0f64, 5.0f64);
        let g = (5f64.sqrt() - 1.0) / 2.0;
        for _ in 0..80 {
            let (c, d) = (b - g * (b - a), a + g * (b - a));
            if rms(c) < rms(d) { b = d } else { a = c }
        }
        let brute = 0.5 * (a + b);
        assert!((best - brute).abs() < 1e-5 * best.abs(), "tilt {tilt}: closed form {best} vs search {brute}");
        assert!(rel(fit.rms_at_best().unwrap(), rms(brute)) < 1e-9, "tilt {tilt}");
        // The centroid at the best focus and at ±2 mm, from the same
        // explicit shifts.
        for s in [best, -2.0, 2.0] {
            let st = spot_stats(&shifted(h, s), Some(0));
            let c = fit.centroid_at(s);
            assert!((st.centroid[0] - c[0]).abs() < 1e-9 && (st.centroid[1] - c[1]).abs() < 1e-9, "tilt {tilt}, shift {s}: {c:?} vs {:?}", st.centroid);
        }
        if tilt > 0.0 {
            let slope = fit.mean_slope[1].abs();
            assert!(slope > 1e-3, "tilt {tilt}: the centroid should move with the shift ({slope} mm/mm)");
        }
        // The whole curve, not only its minimum.
        let tf = through_focus(h, Some(0), -2.0, 2.0, 9).unwrap();
        for (s, r_um) in tf.shift_mm.iter().zip(&tf.rms_radius_um) {
            assert!(rel(*r_um, rms(*s) * 1e3) < 1e-9, "tilt {tilt}: shift {s}");
        }
    }
}

#[test]
fn through_focus_curve_of_one_or_two_points() {
    // n evenly spaced shifts from `from` to `to` inclusive (the function's
    // contract): one point is `from` itself, two are the ends; the RMS at
    // each is measured here on explicitly shifted hits.
    let (_, res) = run(&slow_sphere(0.0));
    let h = &res.screens[0];
    let rms_um = |s: f64| spot_stats(&shifted(h, s), Some(0)).rms_radius * 1e3;
    let one = through_focus(h, Some(0), 0.3, 0.9, 1).unwrap();
    assert_eq!(one.shift_mm, vec![0.3]);
    assert!(rel(one.rms_radius_um[0], rms_um(0.3)) < 1e-9);
    let two = through_focus(h, Some(0), -0.5, 0.5, 2).unwrap();
    assert_eq!(two.shift_mm, vec![-0.5, 0.5]);
    assert!(rel(two.rms_radius_um[1], rms_um(0.5)) < 1e-9);
}

#[test]
fn through_focus_range_ends_where_the_rms_radius_doubles() {
    // The plotted and exported range (docs/FORMATS.md §3): centred on the
    // best focus, ± the depth at which the RMS radius is twice its best
    // value. RMS is measured here from scratch on explicitly shifted hits.
    for tilt in [0.0, 0.15] {
        let (scene, res) = run(&tilted_sphere(tilt));
        let a = analyse_all(&scene, &res);
        let tf = a.curves[0][0].through_focus.as_ref().expect("a curve");
        let k = tf.shift_mm.len();
        assert_eq!(k, CURVE_POINTS);
        let h = &res.screens[0];
        let rms_um = |s: f64| spot_stats(&shifted(h, s), Some(0)).rms_radius * 1e3;
        let (lo, mid, hi) = (tf.shift_mm[0], tf.shift_mm[k / 2], tf.shift_mm[k - 1]);
        assert!(rel(mid, 0.5 * (lo + hi)) < 1e-12);
        let best = rms_um(mid);
        assert!(rms_um(mid + 1e-3 * (hi - lo)) > best && rms_um(mid - 1e-3 * (hi - lo)) > best, "tilt {tilt}: the middle is the minimum");
        assert!(rel(rms_um(lo), 2.0 * best) < 1e-9, "tilt {tilt}: {} vs 2 × {best}", rms_um(lo));
        assert!(rel(rms_um(hi), 2.0 * best) < 1e-9, "tilt {tilt}: {} vs 2 × {best}", rms_um(hi));
        for (s, r) in tf.shift_mm.iter().zip(&tf.rms_radius_um) {
            assert!(rel(*r, rms_um(*s)) < 1e-9, "tilt {tilt}: shift {s}");
        }
    }
    // A perfect focus has no depth to double: the range is the smallest
    // one, ±MIN_FOCUS_RANGE_MM about the focus.
    let p = layout(
        &[mirror("m", 1000.0, 2000.0, -1.0, 200.0, None), screen("s", 0.0, 0.0, 10.0, "square", false)],
        &[beam("star", 0.0, 500.0, 200.0, 5000, "hex", 0.0)],
    );
    let (scene, res) = run(&p);
    let a = analyse_all(&scene, &res);
    let tf = a.curves[0][0].through_focus.as_ref().unwrap();
    let (lo, hi) = (tf.shift_mm[0], tf.shift_mm[tf.shift_mm.len() - 1]);
    assert!((lo + MIN_FOCUS_RANGE_MM).abs() < 1e-9 && (hi - MIN_FOCUS_RANGE_MM).abs() < 1e-9, "{lo} … {hi}");
    // Parallel light has no focus: the curve is flat and shown over
    // ±1 mm about the screen (the function's documented fallback).
    let flat = layout(&[screen("s", 0.0, 100.0, 50.0, "square", false).replace("\"axis_deg\": 0", "\"axis_deg\": 180")], &[beam("b", 0.0, 0.0, 20.0, 500, "hex", 0.0)]);
    let (scene, res) = run(&flat);
    let a = analyse_all(&scene, &res);
    let tf = a.curves[0][0].through_focus.as_ref().unwrap();
    assert_eq!((tf.shift_mm[0], tf.shift_mm[tf.shift_mm.len() - 1]), (-1.0, 1.0));
}

#[test]
fn positive_shift_moves_the_screen_along_its_axis() {
    // Sign convention check, built from a known answer (common practice):
    // re-trace with the screen physically moved by the predicted shift
    // along its axis (+z here, toward the mirror) and by the opposite.
    let (_, res) = run(&slow_sphere(0.0));
    let fit = focus_fit(&res.screens[0], Some(0)).unwrap();
    let s = fit.best_shift().unwrap();
    assert!(s > 0.0, "marginal focus lies toward the mirror, got {s}");
    let (_, moved) = run(&slow_sphere(s));
    let st = spot_stats(&moved.screens[0], Some(0));
    assert!(rel(st.rms_radius, fit.rms_at_best().unwrap()) < 1e-6, "{} vs {}", st.rms_radius, fit.rms_at_best().unwrap());
    let c = fit.centroid_at(s);
    assert!((st.centroid[0] - c[0]).abs() < 1e-9 && (st.centroid[1] - c[1]).abs() < 1e-9);
    let (_, away) = run(&slow_sphere(-s));
    let st = spot_stats(&away.screens[0], Some(0));
    assert!(rel(st.rms_radius, fit.rms_at(-s)) < 1e-6);
}

#[test]
fn sphere_best_rms_focus_is_two_thirds_of_the_way_to_marginal_focus() {
    // Third-order theory (derived here; common practice): transverse
    // aberration ε = Aρ³ + Bρ over a uniform pupil has mean square
    // A²/4 + 2AB/3 + B²/2, smallest at B = −2A/3, i.e. 2/3 of the way
    // from the paraxial to the marginal focus. Third-order marginal LSA of
    // a mirror h²/(4R) (third-order theory; value from memory, re-derived from the exact
    // crossing R − R/(2 cos θ) of the circle).
    let (_, res) = run(&slow_sphere(0.0));
    let s = focus_fit(&res.screens[0], Some(0)).unwrap().best_shift().unwrap();
    let (h, r) = (75.0f64, 2400.0f64);
    let expect = 2.0 / 3.0 * h * h / (4.0 * r);
    assert!(rel(s, expect) < 0.02, "best focus shift {s} vs third-order {expect}");
}

#[test]
fn paraboloid_focus_needs_no_shift_and_collimated_light_has_none() {
    // Parabola focal property (any analytic-geometry text): every axial ray meets
    // the focus, so the best shift is 0 and the RMS there ~0.
    let p = layout(
        &[mirror("m", 1000.0, 2000.0, -1.0, 200.0, None), screen("s", 0.0, 0.0, 20.0, "square", false)],
        &[beam("star", 0.0, 500.0, 200.0, 5000, "hex", 0.0)],
    );
    let (_, res) = run(&p);
    let fit = focus_fit(&res.screens[0], Some(0)).unwrap();
    assert!(fit.best_shift().unwrap().abs() < 1e-9);
    assert!(fit.rms_at_best().unwrap() < 1e-9);
    // A beam straight onto a screen: parallel rays, no focus (value by
    // definition; common practice).
    let flat = layout(&[screen("s", 0.0, 100.0, 50.0, "square", false).replace("\"axis_deg\": 0", "\"axis_deg\": 180")], &[beam("b", 0.0, 0.0, 20.0, 500, "hex", 0.0)]);
    let (_, res) = run(&flat);
    let fit = focus_fit(&res.screens[0], Some(0)).unwrap();
    assert!(fit.best_shift().is_none());
}

/// A tight bundle of steep, nearly parallel rays landing far from the
/// screen centre: positions 3000 mm and −2000 mm off it, spread ~1e-4 mm;
/// slopes near (40, −25), spread ~1e-7. Unequal weights.
fn far_steep_bundle(n: usize) -> ScreenHits {
    let mut h = ScreenHits::default();
    let mut seed = 0x2545_f491_4f6c_dd1d_u64;
    let mut next = || {
        seed ^= seed << 13;
        seed ^= seed >> 7;
        seed ^= seed << 17;
        (seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    for _ in 0..n {
        let (p, q) = (40.0 + 1e-7 * next(), -25.0 + 1e-7 * next());
        let dw = -1.0 / (1.0 + p * p + q * q).sqrt();
        h.u.push(3000.0 + 1e-4 * next());
        h.v.push(-2000.0 + 1e-4 * next());
        h.du.push(p * dw);
        h.dv.push(q * dw);
        h.dw.push(dw);
        h.opl.push(0.0);
        h.weight.push(1.0 + next());
        h.source.push(0);
        h.first.push(true);
    }
    h
}

#[test]
fn focus_fit_keeps_its_precision_far_off_centre_with_steep_rays() {
    // Common practice for sums of squares: accumulate about a shift near
    // the data (here the first hit), not about zero, or the spread cancels
    // against the offset (Chan, Golub & LeVeque, "Algorithms for computing
    // the sample variance", The American Statistician 37(3), 1983).
    // Expected values by the two-pass (centred) definition of RMS²(s) =
    // a + 2bs + cs², computed here from the columns.
    let h = far_steep_bundle(500);
    let fit = focus_fit(&h, Some(0)).expect("500 hits");
    let n = h.len();
    let wt: f64 = h.weight.iter().sum();
    let mean = |f: &dyn Fn(usize) -> f64| (0..n).map(|i| h.weight[i] * f(i)).sum::<f64>() / wt;
    let (p, q) = (|i: usize| h.du[i] / h.dw[i], |i: usize| h.dv[i] / h.dw[i]);
    let (mu, mv, mp, mq) = (mean(&|i| h.u[i]), mean(&|i| h.v[i]), mean(&p), mean(&q));
    let a = mean(&|i| (h.u[i] - mu).powi(2) + (h.v[i] - mv).powi(2));
    let b = mean(&|i| (h.u[i] - mu) * (p(i) - mp) + (h.v[i] - mv) * (q(i) - mq));
    let c = mean(&|i| (p(i) - mp).powi(2) + (q(i) - mq).powi(2));
    assert!(rel(fit.a, a) < 1e-6, "a {} vs {a}", fit.a);
    assert!(rel(fit.b, b) < 1e-4 || (fit.b - b).abs() < 1e-6 * (a * c).sqrt(), "b {} vs {b}", fit.b);
    assert!(rel(fit.c, c) < 1e-6, "c {} vs {c}", fit.c);
    assert!(rel(fit.mean_slope[0], mp) < 1e-12 && rel(fit.mean_slope[1], mq) < 1e-12);
    assert!(rel(fit.centroid[0], mu) < 1e-12 && rel(fit.centroid[1], mv) < 1e-12);
}

#[test]
fn focus_fit_needs_three_hits() {
    // Value by definition (common practice): a parabola in s through the
    // RMS² needs three hits; fewer give no fit.
    let h = far_steep_bundle(3);
    assert!(focus_fit(&h, Some(0)).is_some());
    let mut two = h.clone();
    for col in [&mut two.u, &mut two.v, &mut two.du, &mut two.dv, &mut two.dw, &mut two.opl, &mut two.weight] {
        col.truncate(2);
    }
    two.source.truncate(2);
    two.first.truncate(2);
    assert!(focus_fit(&two, Some(0)).is_none());
    assert!(focus_fit(&ScreenHits::default(), Some(0)).is_none());
}
