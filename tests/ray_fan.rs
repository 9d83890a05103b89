//! The meridional ray fan drawn on the layout: each fan ray's path as a
//! chain of segments from its source, reflections at the mirror's surface,
//! and a last leg drawn on for a fixed length when the ray escapes.

mod layout_support;
use catoptric::trace::trace_fan;
use layout_support::*;

/// A paraboloid z = y²/(2R) (R = 1600 mm, focus at R/2 = 800 mm) lit along
/// its axis by a 200 mm beam; five fan rays across the beam.
fn paraboloid_fan(extend: Option<f64>) -> (catoptric::Scene, catoptric::trace::Fan) {
    let text = layout(
        &[mirror("m", [0.0, 0.0], 0.0, Some(1600.0), -1.0, 220.0, 0.0, 0.0, None)],
        &[beam("b", [0.0, 1000.0], 180.0, 200.0, 5, "hex")],
    );
    let sc = scene(&text);
    let fan = trace_fan(&sc, 5, extend);
    (sc, fan)
}

#[test]
fn each_fan_ray_runs_from_its_source_to_the_mirror_and_on_through_the_focus() {
    // The paraboloid's focal property (every ray parallel to the axis is
    // reflected through the focus, Hecht, Optics, 5th ed., §5.4; sag
    // y²/(2R) of the paraboloid of vertex radius R, ISO 10110-12 with
    // K = −1). Segments are stored as f32: a 1e-3 mm tolerance.
    let (_, fan) = paraboloid_fan(None);
    assert_eq!(fan.source.len(), 10, "two legs for each of five rays: {:?}", fan.ray);
    for j in 0..5u32 {
        let legs: Vec<usize> = (0..fan.ray.len()).filter(|&i| fan.ray[i] == j).collect();
        assert_eq!(legs.len(), 2, "ray {j}");
        let seg = |i: usize| -> [f64; 4] { std::array::from_fn(|k| f64::from(fan.segments[4 * i + k])) };
        let (a, b) = (seg(legs[0]), seg(legs[1]));
        // Evenly across the beam, from its +y edge (it points along −z).
        let y = 100.0 - 50.0 * f64::from(j);
        // First leg: from the source's plane at z = 1000 down to the sag.
        assert!((a[0] - y).abs() < 1e-3 && (a[1] - 1000.0).abs() < 1e-3, "ray {j} starts at {a:?}");
        assert!((a[2] - y).abs() < 1e-3 && (a[3] - y * y / 3200.0).abs() < 1e-3, "ray {j} meets the mirror at {a:?}");
        assert_eq!(fan.escaping[legs[0]], 0);
        // Second leg: from the hit, escaping, on a line through the focus.
        assert_eq!([b[0], b[1]], [a[2], a[3]], "ray {j}: the legs join");
        assert_eq!(fan.escaping[legs[1]], 1, "ray {j}: the last leg escapes");
        let (dy, dz) = (b[2] - b[0], b[3] - b[1]);
        let miss = ((0.0 - b[0]) * dz - (800.0 - b[1]) * dy).abs() / dy.hypot(dz);
        assert!(miss < 1e-3, "ray {j} passes {miss} mm from the focus");
    }
}

#[test]
fn an_escaping_leg_is_drawn_for_the_asked_length_or_twice_the_scene() {
    // The drawing convention stated on `trace_fan` (common practice for a
    // layout view: a ray that leaves is drawn well past the scene's edge).
    for extend in [None, Some(250.0)] {
        let (sc, fan) = paraboloid_fan(extend);
        let want = extend.unwrap_or(2.0 * sc.scale);
        let mut seen = 0;
        for i in (0..fan.source.len()).filter(|&i| fan.escaping[i] == 1) {
            let s = &fan.segments[4 * i..4 * i + 4];
            let len = f64::from(s[2] - s[0]).hypot(f64::from(s[3] - s[1]));
            assert!((len - want).abs() < 1e-6 * want.max(1.0) + 1e-3, "{extend:?}: leg of {len} mm, want {want}");
            seen += 1;
        }
        assert_eq!(seen, 5, "{extend:?}");
    }
}

#[test]
fn a_lamps_fan_spreads_evenly_in_angle_across_its_cone() {
    // Definition of the meridional fan of a point source (common practice):
    // n rays evenly spaced in angle from one edge of the cone to the
    // other, in the drawing's plane. A lamp at (10, −20) pointing at 30°
    // with a 20° half-angle: five rays at 10°, 20°, 30°, 40° and 50°
    // (angles from +z toward +y, as `direction_deg`), each escaping for
    // the asked length from the lamp.
    let text = layout(
        &[screen("away", [0.0, -500.0], 0.0, 10.0, "square", false)],
        &[lamp("l", [10.0, -20.0], 30.0, 20.0, 100, 1.0)],
    );
    let sc = scene(&text);
    let fan = trace_fan(&sc, 5, Some(100.0));
    assert_eq!(fan.ray, [0, 1, 2, 3, 4], "one escaping leg per ray");
    for (j, s) in fan.segments.chunks_exact(4).enumerate() {
        let (dy, dz) = (s[2] as f64 - s[0] as f64, s[3] as f64 - s[1] as f64);
        assert!((s[0] as f64 - 10.0).abs() < 1e-5 && (s[1] as f64 + 20.0).abs() < 1e-5, "ray {j} starts at the lamp");
        assert!((dy.hypot(dz) - 100.0).abs() < 1e-3, "ray {j} length");
        let angle = dy.atan2(dz).to_degrees();
        assert!((angle - (10.0 + 10.0 * j as f64)).abs() < 1e-4, "ray {j} at {angle}°");
    }
}
