//! Regression tests for bugs found in the correctness review. Each test
//! is named after the symptom and says what broke.

mod review_support;
use catoptric::analysis::spot_stats;
use review_support::*;
use serde_json::json;

/// What broke: a revolved mirror's departure spline was the natural spline
/// through the knots from ρ = 0 outward. Its zero-curvature end condition
/// at the axis gave the surface a slope at the vertex — a small cone — so a
/// flat carrying the departure ρ²/(4f) of a paraboloid threw the central
/// rays about 1.4 mm wide of the focus (f = 1000 mm, knots every 5 mm).
/// The revolved departure is now built even (knots mirrored about the
/// axis), smooth at the vertex. Focus–directrix property (REFERENCES #12):
/// the drawn parabola must focus like the paraboloid, to within the spline's
/// interpolation error (µm here).
#[test]
fn revolved_departure_spline_has_no_cone_at_the_vertex() {
    let f = 1000.0f64;
    let knots: Vec<[f64; 2]> = (0..=30).map(|i| {
        let r = 5.0 * i as f64;
        [r, r * r / (4.0 * f)]
    }).collect();
    let mut m = mirror("m", [0.0, 0.0], 0.0, None, 0.0, 200.0, 0.0, 0.0, None);
    m["profile"] = json!({ "radius": null, "conic": 0, "departure": knots });
    let text = layout(
        &[m, screen("s", [0.0, f], 180.0, 40.0, "square", false)],
        &[beam("b", [0.0, 1500.0], 180.0, 200.0, 20000, "hex")],
    );
    let (_, res) = run(&text);
    let h = &res.screens[0];
    assert!(h.len() > 19000);
    let worst = (0..h.len()).map(|k| h.u[k].hypot(h.v[k])).fold(0.0, f64::max);
    assert!(worst < 1e-4, "worst miss {worst} mm");
    // Rays near the axis (inside the first knot interval) too.
    let st = spot_stats(h, None);
    assert!(st.rms_radius < 1e-5, "RMS {} mm", st.rms_radius);
}
