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
    // Exactly where the cone meets the surface: ρ = |k|(D/2)·(B + z(ρ))/(d + B),
    // z the primary's sag (the surface lies z in front of the vertex
    // plane), solved here by bisection.
    let (k, sep) = (d0.height_ratio.abs(), d0.separation_mm);
    let g = |rho: f64| k * 150.0 * (250.0 + sag(d0.primary.radius_mm, d0.primary.conic, rho)) / (sep + 250.0) - rho;
    let (mut lo, mut hi) = (0.0, 150.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if g(mid) > 0.0 { lo = mid } else { hi = mid }
    }
    assert!(rel(0.5 * d0.primary.hole_mm, lo) < 1e-12, "{} vs {lo}", 0.5 * d0.primary.hole_mm);
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
    let edge = TwoMirrorSpec { primary_focal: 450.0, ..fast };
    assert!(design_two_mirror(&edge).expect("valid").warnings.is_empty(), "f/1.5 itself is not faster than f/1.5");
}

/// Conic sag z(ρ) = cρ² / (1 + √(1 − (1+K)c²ρ²)), c = 1/R (the standard
/// conic of revolution: ISO 10110-12; Schroeder ch. 2, from memory).
fn sag(r: f64, k: f64, rho: f64) -> f64 {
    let c = 1.0 / r;
    c * rho * rho / (1.0 + (1.0 - (1.0 + k) * c * c * rho * rho).sqrt())
}

#[test]
fn the_hole_passes_every_traced_ray_of_the_field_and_no_more() {
    // Independent of the design's first-order rule (common practice: check
    // a paraxial layout by tracing it): the meridional fans of
    // the on-axis and the edge-of-field beams are traced, and each ray's
    // leg from the secondary to the focus is followed to where it crosses
    // the primary's surface (z = −sag(ρ), the primary facing −z at the
    // origin). The hole must be as wide as the widest crossing, to the
    // first order's accuracy (the cone's real and paraxial heights differ
    // by a fraction of the primary's sag over its focal length, 0.4 %).
    for kind in [TwoMirrorKind::Cassegrain, TwoMirrorKind::RitcheyChretien] {
        for field in [0.0, 0.3] {
            let d = design(kind, field);
            let (r1, k1) = (d.primary.radius_mm, d.primary.conic);
            let scene = Scene::compile(&d.layout);
            let fan = catoptric::trace::trace_fan(&scene, 2001, None);
            // Legs in order per (source, ray); the third is secondary → focus.
            let mut legs: std::collections::BTreeMap<(u16, u32), Vec<[f64; 4]>> = Default::default();
            for (i, s) in fan.segments.chunks_exact(4).enumerate() {
                legs.entry((fan.source[i], fan.ray[i])).or_default().push([s[0] as f64, s[1] as f64, s[2] as f64, s[3] as f64]);
            }
            let mut widest = 0.0f64;
            let mut followed = 0;
            for l in legs.values().filter(|l| l.len() >= 3) {
                let [ya, za, yb, zb] = l[2];
                assert!(za < -0.5 * d.separation_mm && zb > 0.0, "{kind:?}: leg {:?}", l[2]);
                // Bisection on z(t) + sag(|y(t)|) = 0: negative at the
                // secondary, positive at the focus screen.
                let f = |t: f64| za + t * (zb - za) + sag(r1, k1, (ya + t * (yb - ya)).abs());
                let (mut lo, mut hi) = (0.0, 1.0);
                assert!(f(lo) < 0.0 && f(hi) > 0.0);
                for _ in 0..100 {
                    let mid = 0.5 * (lo + hi);
                    if f(mid) < 0.0 { lo = mid } else { hi = mid }
                }
                widest = widest.max((ya + lo * (yb - ya)).abs());
                followed += 1;
            }
            assert!(followed > 50, "{kind:?} {field}°: {followed} rays reach the focus");
            let half = 0.5 * d.primary.hole_mm;
            assert!((half - widest).abs() < 0.005 * widest, "{kind:?} {field}°: hole radius {half} mm, widest crossing {widest} mm");
        }
    }
}

#[test]
fn focal_ratio_and_obstruction_of_the_worked_example() {
    // Focal ratio N = F/D (the definition); the linear obstruction is the
    // secondary's diameter over the primary's (common practice).
    let d = design(TwoMirrorKind::Cassegrain, 0.2);
    assert!(rel(d.focal_ratio, 3200.0 / 300.0) < 1e-12);
    assert!(rel(d.obstruction_fraction, d.secondary.diameter_mm / 300.0) < 1e-12);
    assert!(d.obstruction_fraction > 0.3 && d.obstruction_fraction < 0.4);
}

#[test]
fn refusals_state_the_rule_that_was_broken() {
    // Schroeder ch. 6 sign conventions: |m| = F/f₁ > 1, 0 < k < 1 for a
    // Cassegrain (the secondary between the primary and its focus, so
    // B < m·f₁), and the secondary smaller than the primary.
    let refused = |s: TwoMirrorSpec| design_two_mirror(&s).expect_err("must be refused");
    let cass = spec(TwoMirrorKind::Cassegrain, 0.0);
    for f in [1200.0, 1200.0 * (1.0 + 5e-10)] {
        let e = refused(TwoMirrorSpec { focal: f, ..cass });
        assert_eq!(e.field, "focal");
        assert!(e.message.contains("must be longer than the primary focal length"), "{e}");
    }
    // B = m·f₁ = 3200 puts the secondary on the primary; a micrometre short
    // of it still does (separation f₁(1 − k) ≈ 6·10⁻⁷ mm).
    for b in [3200.0, 3300.0, 3200.0 - 2.2e-6] {
        let e = refused(TwoMirrorSpec { back_focus: b, ..cass });
        assert_eq!(e.field, "back_focus");
        assert!(e.message.contains("at or behind the primary") && e.message.contains("less than m·f₁"), "{e}");
    }
    let e = refused(TwoMirrorSpec { back_focus: -5.0, ..cass });
    assert!(e.message.contains("must be greater than 0"), "{e}");
    // A secondary wider than the primary: from the field (10°: |k|D +
    // 2d·tan θ = 98.9 + 283.7 mm) it names the field; when even the
    // on-axis beam needs it (a Gregorian with m = −1.5 and β = 0.2 has
    // k = 1.2/(−0.5) = −2.4) it names the back focus, with a field or not.
    let e = refused(TwoMirrorSpec { field_deg: 10.0, ..cass });
    assert_eq!(e.field, "field_deg", "{e}");
    assert!(e.message.contains("the secondary would need a diameter"), "{e}");
    for field in [0.0, 0.5] {
        let greg = TwoMirrorSpec { focal: 1800.0, back_focus: 240.0, ..spec(TwoMirrorKind::Gregorian, field) };
        let e = refused(greg);
        assert_eq!(e.field, "back_focus", "{e}");
        assert!(e.message.contains("the secondary would need a diameter"), "{e}");
    }
}

#[test]
fn beams_start_clear_of_the_secondary_aimed_at_the_primary_vertex() {
    // Not optics but the layout's documented contract (docs/FORMATS.md),
    // which the flux figures depend on through the screen's size: each beam starts
    // ⌈d + |secondary sag at its rim| + 0.05·D + 1⌉ mm (whole mm) from the
    // primary vertex, back along its own direction, so its centre line
    // meets the vertex; the screen `focus` is ⌈max(3·F·tan θ, 0.02·D,
    // 1)⌉ mm wide (to 0.5 mm): twice the field's image height F·tan θ
    // with margin.
    use catoptric::layout::Source;
    for field in [0.0, 0.3] {
        let d = design(TwoMirrorKind::Cassegrain, field);
        let s = &d.secondary;
        let launch = (d.separation_mm + sag(s.radius_mm, s.conic, 0.5 * s.diameter_mm).abs() + 0.05 * 300.0 + 1.0).ceil();
        assert!(launch > d.separation_mm + 10.0);
        for src in &d.layout.sources {
            let Source::Beam(b) = src else { panic!("beams only") };
            let (sn, cs) = b.direction_deg.to_radians().sin_cos();
            assert!((b.center[0] + launch * sn).abs() < 1e-9 && (b.center[1] + launch * cs).abs() < 1e-9, "{} at {:?}, launch {launch}", b.id, b.center);
            assert_eq!(b.diameter, 300.0);
        }
        let Some(Element::Screen(screen)) = d.layout.elements.iter().find(|e| e.id() == "focus") else { panic!("screen focus") };
        let want = ((3.0 * 3200.0 * field.to_radians().tan()).max(0.02 * 300.0).max(1.0) / 0.5).ceil() * 0.5;
        assert_eq!(screen.size, want, "field {field}°");
        assert!(!d.layout.to_json_pretty().contains("-0.0"), "no negative zero in the layout");
    }
}

#[test]
fn a_conic_that_ends_before_its_rim_is_refused_naming_its_mirror() {
    // A conic of revolution with 1 + K > 0 exists only out to ρ = |R|/√(1+K)
    // (the sag's square root turns imaginary there; ISO 10110-12's sag
    // formula, Schroeder ch. 2 from memory). Dall–
    // Kirkham (spherical secondary, K₁ + 1 = k(m−1)(m+1)²/m³ from the
    // spherical-aberration condition with K₂ = 0):
    let dk = |primary_focal, focal, back_focus| TwoMirrorSpec {
        kind: TwoMirrorKind::DallKirkham, diameter: 300.0, primary_focal, focal, back_focus, field_deg: 0.0,
    };
    // f₁ = 30, m = 4, β = 1/3: k = 4/15, K₁ + 1 = 0.3125, the primary ends
    // at ρ = 60/√0.3125 = 107 mm, inside its 150 mm semi-diameter.
    let e = design_two_mirror(&dk(30.0, 120.0, 10.0)).expect_err("the primary cannot reach its rim");
    assert_eq!(e.field, "primary_focal", "{e}");
    assert!(e.message.contains("ends at ρ = 107."), "{e}");
    // f₁ = 50, m = 4, β = 0.1: k = 0.22, the primary reaches (ends at
    // 197 mm) but the spherical secondary (|R₂| = 2mkf₁/(m−1) = 29.33 mm)
    // would need a 33 mm semi-diameter.
    let e = design_two_mirror(&dk(50.0, 200.0, 5.0)).expect_err("the secondary cannot reach its rim");
    assert_eq!(e.field, "back_focus", "{e}");
    assert!(e.message.contains("ends at ρ = 29.3") && e.message.contains("semi-diameter 33.0"), "{e}");
}
