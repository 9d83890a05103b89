//! Off-axis paraboloid designer: focus–directrix closed forms
//! of the parabola (any analytic-geometry text), then the generated layout traced.

use catoptric::analysis::spot_stats;
use catoptric::design::{design_off_axis, OffAxisDesign, OffAxisSpec};
use catoptric::layout::{parse_layout, Element};
use catoptric::{trace, Scene, TraceOptions};

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

fn design(f: f64, h: f64, d: f64) -> OffAxisDesign {
    design_off_axis(&OffAxisSpec { parent_focal: f, offset: h, diameter: d }).expect("valid design")
}

#[test]
fn angle_and_reflected_focal_length() {
    // Focus–directrix property of the parabola (any analytic-geometry text):
    // θ = 2 atan(h/(2f)), reflected focal f + h²/(4f) = f/cos²(θ/2).
    // f = 500, h = 200 → 22.6199°, 520 mm; h = 2f → 90°, 2f.
    let d = design(500.0, 200.0, 100.0);
    assert!(rel(d.off_axis_angle_deg, 22.6199) < 5e-6, "{}", d.off_axis_angle_deg);
    assert!(rel(d.reflected_focal_mm, 520.0) < 1e-12);
    let half = (0.5 * d.off_axis_angle_deg).to_radians();
    assert!(rel(d.reflected_focal_mm, 500.0 / half.cos().powi(2)) < 1e-12);
    assert!(rel(d.segment_tilt_deg, 0.5 * d.off_axis_angle_deg) < 1e-12);
    let d = design(500.0, 1000.0, 100.0);
    assert!(rel(d.off_axis_angle_deg, 90.0) < 1e-12);
    assert!(rel(d.reflected_focal_mm, 1000.0) < 1e-12);
}

#[test]
fn feed_points_at_the_segment_from_the_focus() {
    // Same property: the ray from the focus to the segment centre makes θ
    // with the parent axis; the rim angles are 2 atan((h ± D/2)/(2f)).
    let d = design(500.0, 200.0, 100.0);
    let f = &d.feed;
    assert_eq!(f.position_mm, [0.0, 500.0]);
    assert!(rel(f.off_axis_deg, d.off_axis_angle_deg) < 1e-12);
    // Pointing as a layout angle: the direction from the focus to the
    // segment centre, 180° − θ for a segment below the focus.
    assert!(rel(f.pointing_deg, 180.0 - d.off_axis_angle_deg) < 1e-12, "{}", f.pointing_deg);
    let psi = |y: f64| 2.0 * (y / 1000.0f64).atan().to_degrees();
    assert!(rel(f.rim_angles_deg[0], psi(150.0)) < 1e-12 && rel(f.rim_angles_deg[1], psi(250.0)) < 1e-12);
    assert!(rel(f.half_angle_deg, 0.5 * (psi(250.0) - psi(150.0))) < 1e-12);
}

#[test]
fn traced_segment_focuses_perfectly_at_the_reported_distance() {
    // The parabola's focal property (any analytic-geometry text): every ray
    // parallel to the axis reflects through the focus, so the traced spot
    // is ≪ 1 µm, centred on the screen, and the segment centre lies the
    // reflected focal length from it.
    for (f, h, dia) in [(500.0, 200.0, 100.0), (500.0, 1000.0, 150.0), (800.0, 0.0, 200.0), (300.0, 90.0, 120.0)] {
        let d = design(f, h, dia);
        let layout = parse_layout(&d.layout.to_json_pretty()).expect("layout parses");
        let scene = Scene::compile(&layout);
        let res = trace(&scene, TraceOptions { rays: Some(20_000), ..Default::default() });
        let st = spot_stats(&res.screens[0], Some(0));
        assert!(st.hits as f64 > 0.95 * res.rays_launched as f64, "h {h}: {} of {}", st.hits, res.rays_launched);
        assert!(st.rms_radius < 1e-5, "h {h}: RMS {} µm", st.rms_radius * 1e3);
        assert!(st.centroid[0].abs() < 1e-6 && st.centroid[1].abs() < 1e-6, "h {h}: centroid {:?}", st.centroid);
        let Element::Screen(s) = &layout.elements[1] else { panic!("second element is the screen") };
        let c = d.segment_center_mm;
        let dist = ((c[0] - s.center[0]).powi(2) + (c[1] - s.center[1]).powi(2)).sqrt();
        assert!(rel(dist, d.reflected_focal_mm) < 1e-12, "h {h}: {dist} vs {}", d.reflected_focal_mm);
    }
}

#[test]
fn bad_parameters_name_the_field() {
    let e = |f: f64, h: f64, d: f64| design_off_axis(&OffAxisSpec { parent_focal: f, offset: h, diameter: d }).unwrap_err().field;
    assert_eq!(e(0.0, 10.0, 10.0), "parent_focal");
    assert_eq!(e(500.0, -1.0, 10.0), "offset");
    assert_eq!(e(500.0, f64::INFINITY, 10.0), "offset");
    assert_eq!(e(500.0, 100.0, -3.0), "diameter");
}

/// Symptom: an offset below D/2 was accepted while the page said the
/// segment is clear of the beam. Plane geometry: the segment spans
/// H ± D/2 from the parent axis and the focus lies on that axis, so the
/// focus is in the beam exactly when H < D/2.
#[test]
fn a_segment_reaching_across_the_parent_axis_is_flagged() {
    assert!(design(500.0, 50.0, 150.0).warnings.iter().any(|w| w.contains("D/2")), "H 50 < D/2 75");
    assert!(design(500.0, 0.0, 150.0).warnings.len() == 1, "on axis");
    assert!(design(500.0, 75.0, 150.0).warnings.is_empty(), "H = D/2: the rim just touches the axis");
    assert!(design(500.0, 200.0, 150.0).warnings.is_empty());
}

#[test]
fn segment_depth_focal_ratio_and_feed_bisector() {
    // The parabola z = ρ²/(4F) (focus–directrix property, any
    // analytic-geometry text): a segment spanning ρ from max(H − D/2, 0) to
    // H + D/2 is ((H + D/2)² − max(H − D/2, 0)²)/(4F) deep; its working
    // focal ratio is the reflected focal length F + H²/(4F) over D; a feed
    // lighting the meridional rim evenly points along the mean of the rim
    // angles ψ± = 2 atan((H ± D/2)/(2F)). Segments clear of the axis,
    // across it and centred on it.
    for (f, h, dia) in [(500.0, 200.0, 100.0), (300.0, 30.0, 100.0), (800.0, 0.0, 200.0), (250.0, 600.0, 80.0)] {
        let d = design(f, h, dia);
        let (near, far) = ((h - 0.5 * dia).max(0.0), h + 0.5 * dia);
        let depth = (far * far - near * near) / (4.0 * f);
        assert!(rel(d.segment_depth_mm, depth) < 1e-12, "F {f} H {h} D {dia}: depth {} vs {depth}", d.segment_depth_mm);
        let ratio = (f + h * h / (4.0 * f)) / dia;
        assert!(rel(d.focal_ratio, ratio) < 1e-12, "F {f} H {h} D {dia}: f-ratio {} vs {ratio}", d.focal_ratio);
        let psi = |y: f64| 2.0 * (y / (2.0 * f)).atan().to_degrees();
        let mid = 0.5 * (psi(h - 0.5 * dia) + psi(h + 0.5 * dia));
        assert!((d.feed.bisector_off_axis_deg - mid).abs() < 1e-12 * (1.0 + mid.abs()), "F {f} H {h} D {dia}: {}", d.feed.bisector_off_axis_deg);
    }
}

#[test]
fn generated_layout_places_screen_and_beam_as_documented() {
    // The designer's layout (src/design/off_axis.rs, "Layout"): a square
    // screen 2 % of D wide, at least 1 mm, rounded up to 0.5 mm; the beam,
    // D wide along −z over the segment centre, starts 10 % of D + 1 mm above
    // the segment's far edge z = (H + D/2)²/(4F), rounded up to the mm, so
    // every ray meets the segment first.
    for (f, h, dia, size) in [(500.0, 200.0, 100.0, 2.0), (500.0, 200.0, 30.0, 1.0), (1000.0, 400.0, 330.0, 7.0)] {
        let d = design(f, h, dia);
        let Element::Screen(s) = &d.layout.elements[1] else { panic!("second element is the screen") };
        assert_eq!(s.size, size, "D {dia}");
        let catoptric::layout::Source::Beam(b) = &d.layout.sources[0] else { panic!("the source is a beam") };
        let top = (h + 0.5 * dia).powi(2) / (4.0 * f);
        assert_eq!(b.center, [h, (top + 0.1 * dia + 1.0).ceil()], "F {f} H {h} D {dia}");
        assert_eq!((b.diameter, b.direction_deg), (dia, 180.0));
    }
}
