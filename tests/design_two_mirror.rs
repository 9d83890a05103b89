//! Two-mirror designer: Schroeder's closed forms, then the generated
//! layouts traced.
//!
//! Closed forms: Schroeder, Astronomical Optics, 2nd ed. (2000), ch. 6
//! (cited from memory; the worked numbers below were computed from those
//! closed forms independently of this code). The traces confirm them: a
//! classical Cassegrain or Gregorian (paraboloid + secondary conic sharing
//! its foci) images an on-axis star perfectly, and the aplanatic forms have
//! less off-axis blur than the classical ones at the same field.

use catoptric::analysis::spot_stats;
use catoptric::design::{design_two_mirror, two_mirror_conics, TwoMirrorDesign, TwoMirrorKind, TwoMirrorSpec};
use catoptric::layout::{parse_layout, Element};
use catoptric::{trace, Scene, TraceOptions};

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// Worked example (computed independently of this code from Schroeder's
/// closed forms): f₁ = 1200, F = 3200 (m = 8/3), B = 250 (β = 0.20833).
fn spec(kind: TwoMirrorKind, field: f64) -> TwoMirrorSpec {
    TwoMirrorSpec { kind, diameter: 300.0, primary_focal: 1200.0, focal: 3200.0, back_focus: 250.0, field_deg: field }
}

fn design(kind: TwoMirrorKind, field: f64) -> TwoMirrorDesign {
    design_two_mirror(&spec(kind, field)).expect("valid design")
}

/// RMS spot radius (mm) of `source` on the screen `focus`.
fn rms_at_focus(d: &TwoMirrorDesign, source: &str, rays: usize) -> (f64, u64) {
    let scene = Scene::compile(&d.layout);
    let res = trace(&scene, TraceOptions { rays: Some(rays), ..Default::default() });
    let si = scene.screen_ids.iter().position(|s| s == "focus").expect("screen focus");
    let src = d.layout.sources.iter().position(|s| s.id() == source).expect("source") as u32;
    let st = spot_stats(&res.screens[si], Some(src));
    (st.rms_radius, st.hits)
}

#[test]
fn worked_example_first_order() {
    // Schroeder 2nd ed. ch. 6: k = (1+β)/(m+1), d = f₁(1−k), R₂ = m k R₁/(m−1)
    // (computed independently: k = 0.329545, d = 804.545, |R₂| = 1265.455).
    let d = design(TwoMirrorKind::Cassegrain, 0.0);
    assert!(rel(d.magnification, 8.0 / 3.0) < 1e-12);
    assert!(rel(d.back_focus_ratio, 0.208333) < 1e-5);
    assert!(rel(d.height_ratio, 0.329545) < 2e-6);
    assert!(rel(d.separation_mm, 804.545) < 1e-6);
    assert!(rel(d.secondary.radius_mm, -1265.455) < 1e-6, "convex secondary is negative: {}", d.secondary.radius_mm);
    assert!(rel(d.primary.radius_mm, 2400.0) < 1e-12);
    // Classical: K₁ = −1, K₂ = −((m+1)/(m−1))² = −(11/5)² = −4.84.
    assert_eq!(d.primary.conic, -1.0);
    assert!(rel(d.secondary.conic, -4.84) < 1e-12);
}

#[test]
fn worked_example_aplanatic_and_dall_kirkham_conics() {
    // Schroeder 2nd ed. ch. 6 aplanatic and Dall–Kirkham forms;
    // Computed independently: RC K₁ = −1.138242, K₂ = −6.558237; DK K₁ = −0.610596.
    let m = 8.0 / 3.0;
    let beta = 250.0 / 1200.0;
    let (k1, k2) = two_mirror_conics(TwoMirrorKind::RitcheyChretien, m, beta);
    assert!(rel(k1, -1.138242) < 1e-6, "RC K1 {k1}");
    assert!(rel(k2, -6.558237) < 1e-6, "RC K2 {k2}");
    let (k1, k2) = two_mirror_conics(TwoMirrorKind::DallKirkham, m, beta);
    assert!(rel(k1, -0.610596) < 1e-6, "DK K1 {k1}");
    assert_eq!(k2, 0.0);
    let rc = design(TwoMirrorKind::RitcheyChretien, 0.0);
    assert!(rel(rc.primary.conic, -1.138242) < 1e-6 && rel(rc.secondary.conic, -6.558237) < 1e-6);
}

#[test]
fn dall_kirkham_meets_the_spherical_aberration_condition() {
    // Schroeder 2nd ed. ch. 6: zero spherical aberration when
    // K₁ + 1 = k(m−1)³/m³ · (K₂ + ((m+1)/(m−1))²); every family satisfies it.
    for kind in TwoMirrorKind::ALL {
        let d = design(kind, 0.0);
        let (m, k) = (d.magnification, d.height_ratio);
        let lhs = d.primary.conic + 1.0;
        let rhs = k * (m - 1.0).powi(3) / m.powi(3) * (d.secondary.conic + ((m + 1.0) / (m - 1.0)).powi(2));
        assert!((lhs - rhs).abs() < 1e-9 * (1.0 + lhs.abs()), "{kind:?}: {lhs} vs {rhs}");
    }
}

#[test]
fn gregorian_sign_handling() {
    // The user gives a positive F; Gregorians get m = −F/f₁ (Schroeder's
    // sign: m < 0). k = (1+β)/(m+1) = 1.20833/(−5/3) = −0.725 and
    // d = f₁(1−k) = 2070; the secondary is concave (positive in layouts),
    // a prolate ellipsoid K₂ = −((m+1)/(m−1))² = −(5/11)².
    let g = design(TwoMirrorKind::Gregorian, 0.0);
    assert!(rel(g.magnification, -8.0 / 3.0) < 1e-12);
    assert!(rel(g.height_ratio, -0.725) < 1e-12);
    assert!(rel(g.separation_mm, 2070.0) < 1e-12);
    assert!(g.secondary.radius_mm > 0.0);
    assert!(rel(g.secondary.radius_mm, 1265.4545454545) < 1e-9);
    assert!(rel(g.secondary.conic, -(5.0f64 / 11.0).powi(2)) < 1e-12);
    assert!(rel(g.focal_mm, 3200.0) < 1e-12);
}

#[test]
fn secondary_and_hole_follow_the_stated_rules() {
    // Rules stated in the module doc (paraxial geometry, common practice):
    // secondary = |k|·D + 2 d tan θ; on axis the hole passes the F/D cone
    // behind the primary, |k|(D/2)·B/(d+B) = (D/2)·B/F at the vertex plane.
    let d = design(TwoMirrorKind::Cassegrain, 0.2);
    let expect = d.height_ratio.abs() * 300.0 + 2.0 * d.separation_mm * 0.2f64.to_radians().tan();
    assert!(rel(d.secondary.diameter_mm, expect) < 1e-12);
    let d0 = design(TwoMirrorKind::Cassegrain, 0.0);
    let at_vertex = 300.0 * 250.0 / 3200.0;
    assert!(d0.primary.hole_mm > at_vertex && rel(d0.primary.hole_mm, at_vertex) < 1e-3, "{}", d0.primary.hole_mm);
}

#[test]
fn layout_is_valid_and_round_trips() {
    for kind in TwoMirrorKind::ALL {
        let d = design(kind, 0.3);
        let text = d.layout.to_json_pretty();
        let back = parse_layout(&text).expect("generated layout parses");
        assert_eq!(back.elements.len(), d.layout.elements.len());
        let ids: Vec<&str> = d.layout.elements.iter().map(Element::id).collect();
        assert_eq!(ids, ["primary", "secondary", "focus"]);
        let srcs: Vec<&str> = d.layout.sources.iter().map(|s| s.id()).collect();
        assert_eq!(srcs, ["on-axis", "off-axis"]);
    }
    // The layout is named after its form (the forms' names as in
    // Schroeder, ch. 6), diameter and focal ratio F/D = 3200/300.
    for (kind, title) in [
        (TwoMirrorKind::Cassegrain, "Classical Cassegrain"),
        (TwoMirrorKind::RitcheyChretien, "Ritchey–Chrétien"),
        (TwoMirrorKind::DallKirkham, "Dall–Kirkham"),
        (TwoMirrorKind::Gregorian, "Classical Gregorian"),
        (TwoMirrorKind::AplanaticGregorian, "Aplanatic Gregorian"),
    ] {
        assert_eq!(design(kind, 0.3).layout.name, format!("{title} 300 mm f/10.67"), "{kind:?}");
    }
    let d = design(TwoMirrorKind::Cassegrain, 0.0);
    assert_eq!(d.layout.sources.len(), 1, "no field, no off-axis beam");
}

#[test]
fn classical_forms_focus_an_on_axis_beam_perfectly() {
    // Paraboloid + hyperboloid (Cassegrain) or ellipsoid (Gregorian) with
    // shared foci: the on-axis image is free of aberration (conic focal
    // properties, any analytic-geometry text). Traced RMS spot ≪ 1 µm at `focus`.
    for kind in [TwoMirrorKind::Cassegrain, TwoMirrorKind::Gregorian] {
        let d = design(kind, 0.0);
        let (rms, hits) = rms_at_focus(&d, "on-axis", 20_000);
        // All rays outside the secondary's shadow arrive.
        let open = 1.0 - d.obstruction_fraction.powi(2);
        assert!(hits as f64 > 0.95 * open * 20_000.0, "{kind:?}: only {hits} rays reached the focus");
        assert!(rms < 1e-5, "{kind:?}: RMS spot {} µm", rms * 1e3);
    }
}

#[test]
fn aplanatic_and_dall_kirkham_forms_are_corrected_on_axis() {
    // Schroeder ch. 6: every family is free of spherical aberration; the
    // residual on axis is higher-order only (well under the Airy radius
    // 1.22 λ F/D ≈ 7 µm here).
    for kind in [TwoMirrorKind::RitcheyChretien, TwoMirrorKind::AplanaticGregorian, TwoMirrorKind::DallKirkham] {
        let d = design(kind, 0.0);
        let (rms, _) = rms_at_focus(&d, "on-axis", 20_000);
        assert!(rms < 1e-3, "{kind:?}: RMS spot {} µm", rms * 1e3);
    }
}

#[test]
fn aplanatic_forms_have_less_off_axis_blur() {
    // Schroeder ch. 6: the aplanatic pair removes third-order coma, which
    // dominates the classical forms' off-axis image near the axis (farther
    // out the flat screen's field curvature takes over for both). At 0.1°
    // the traced RMS spot of RC / aplanatic Gregorian is well below the
    // classical one. The Dall–Kirkham's spherical secondary leaves more
    // coma than the classical Cassegrain (Schroeder ch. 6, same source).
    for (classical, aplanatic) in [
        (TwoMirrorKind::Cassegrain, TwoMirrorKind::RitcheyChretien),
        (TwoMirrorKind::Gregorian, TwoMirrorKind::AplanaticGregorian),
    ] {
        let c = design(classical, 0.1);
        let a = design(aplanatic, 0.1);
        let (rc, hc) = rms_at_focus(&c, "off-axis", 20_000);
        let (ra, ha) = rms_at_focus(&a, "off-axis", 20_000);
        assert!(hc > 5_000 && ha > 5_000, "hits {hc}, {ha}");
        assert!(ra < 0.7 * rc, "{aplanatic:?} {} µm vs {classical:?} {} µm", ra * 1e3, rc * 1e3);
    }
    let (cass, _) = rms_at_focus(&design(TwoMirrorKind::Cassegrain, 0.1), "off-axis", 20_000);
    let (dk, _) = rms_at_focus(&design(TwoMirrorKind::DallKirkham, 0.1), "off-axis", 20_000);
    assert!(dk > cass, "Dall–Kirkham {} µm vs Cassegrain {} µm", dk * 1e3, cass * 1e3);
}

#[test]
fn bad_parameters_name_the_field() {
    let cases: [(TwoMirrorSpec, &str); 7] = [
        (TwoMirrorSpec { back_focus: 3300.0, ..spec(TwoMirrorKind::Cassegrain, 0.0) }, "back_focus"),
        (TwoMirrorSpec { back_focus: -5.0, ..spec(TwoMirrorKind::Cassegrain, 0.0) }, "back_focus"),
        (TwoMirrorSpec { focal: 1200.0, ..spec(TwoMirrorKind::Cassegrain, 0.0) }, "focal"),
        (TwoMirrorSpec { diameter: 0.0, ..spec(TwoMirrorKind::Cassegrain, 0.0) }, "diameter"),
        (TwoMirrorSpec { diameter: f64::NAN, ..spec(TwoMirrorKind::Gregorian, 0.0) }, "diameter"),
        (TwoMirrorSpec { primary_focal: -1.0, ..spec(TwoMirrorKind::Gregorian, 0.0) }, "primary_focal"),
        (TwoMirrorSpec { field_deg: 45.0, ..spec(TwoMirrorKind::Gregorian, 0.0) }, "field_deg"),
    ];
    for (s, field) in cases {
        let e = design_two_mirror(&s).expect_err("must be refused");
        assert_eq!(e.field, field, "{e}");
        assert!(!e.message.is_empty());
    }
    assert_eq!(TwoMirrorKind::parse("newtonian").unwrap_err().field, "type");
    assert_eq!(TwoMirrorKind::parse("dall-kirkham").unwrap(), TwoMirrorKind::DallKirkham);
}


/// Extreme primary speeds are flagged: faster than f/1.5 (f₁/D) is past
/// common practice for primaries that can be figured, tested and aligned.
#[test]
fn a_primary_faster_than_f_1_5_is_flagged() {
    let fast = TwoMirrorSpec { primary_focal: 300.0, focal: 3000.0, back_focus: 200.0, ..spec(TwoMirrorKind::Cassegrain, 0.0) };
    let d = design_two_mirror(&fast).expect("f/1 primary is still a valid design");
    assert_eq!(d.warnings.len(), 1, "{:?}", d.warnings);
    assert!(d.warnings[0].contains("f/1 ") && d.warnings[0].contains("f/1.5"), "{}", d.warnings[0]);
    assert!(design(TwoMirrorKind::RitcheyChretien, 0.0).warnings.is_empty(), "the f/4 primary of the worked example");
}
