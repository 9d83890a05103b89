//! Conic comparison: sags, departures and the exact wavefront checked
//! against published closed forms and third-order theory.

use catoptric::design::compare::{parse_conics, sphere_fastest_f_ratio_exact, MAX_CONICS};
use catoptric::design::{
    best_fit_sphere, collimated_wavefront, compare_conics, conic_tolerance_quarter_wave, sphere_fastest_f_ratio,
};

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

const LAMBDA: f64 = 550e-6; // mm

#[test]
fn edge_sags_match_the_iso_sag_formula() {
    // ISO 10110-12:2019 sag, computed independently: R = 1000, ρ = 100:
    // K = −1 → 5.00000, 0 → 5.01256, 0.5 → 5.01889, −2 → 4.98756.
    let c = compare_conics(1000.0, 200.0, &[-1.0, 0.0, 0.5, -2.0], 550.0).unwrap();
    for (row, want) in c.conics.iter().zip([5.00000, 5.01256, 5.01889, 4.98756]) {
        assert!(rel(row.edge_sag_mm, want) < 2e-6, "K {}: {} vs {want}", row.conic, row.edge_sag_mm);
    }
    // Departure from the vertex sphere: zero for the sphere itself, and
    // |Δz(a)| from the same sags for the others (monotone in ρ).
    assert_eq!(c.conics[1].departure_pv_um, 0.0);
    assert!(rel(c.conics[0].departure_pv_um, (5.01256 - 5.0) * 1e3) < 1e-3);
}

#[test]
fn paraboloid_departs_from_the_sphere_by_rho4_over_8r3() {
    // Third-order theory (the ρ⁴ term of the circle's series): surface difference ρ⁴/(8R³).
    let (r, d) = (2400.0, 150.0);
    let c = compare_conics(r, d, &[-1.0], 550.0).unwrap();
    let want = (0.5 * d).powi(4) / (8.0 * r * r * r) * 1e3;
    assert!(rel(c.conics[0].departure_pv_um, want) < 1e-3, "{} vs {want}", c.conics[0].departure_pv_um);
}

#[test]
fn paraboloid_wavefront_is_perfect_at_its_focus() {
    // Parabola focal property (any analytic-geometry text): zero wavefront error,
    // best focus at R/2.
    let w = collimated_wavefront(1000.0, -1.0, 250.0, LAMBDA);
    assert!(w.pv_waves < 1e-7 && w.rms_waves < 1e-7, "{w:?}");
    assert!(rel(w.best_focus_mm, 500.0) < 1e-9);
    assert!(rel(w.strehl, 1.0) < 1e-12);
}

#[test]
fn slow_sphere_matches_third_order_spherical_aberration() {
    // Third-order theory (value from memory, re-derived): sphere P-V at best focus
    // D/(2048 N³); the balanced primary spherical A(ρ⁴ − ρ²) has RMS/P-V =
    // 4/(6√5) (Zernike primary spherical; Born & Wolf, Principles of
    // Optics, 7th ed., §9.2 — memory).
    for (d, n) in [(150.0, 8.0), (200.0, 6.0), (100.0, 10.0)] {
        let w = collimated_wavefront(2.0 * n * d, 0.0, d, LAMBDA);
        let want = d / (2048.0 * n * n * n) / LAMBDA;
        assert!(rel(w.pv_waves, want) < 0.02, "D {d} f/{n}: {} vs {want}", w.pv_waves);
        assert!(rel(w.rms_waves, want * 4.0 / (6.0 * 5f64.sqrt())) < 0.02, "D {d} f/{n}: rms {}", w.rms_waves);
        // Best focus lies between the paraxial focus R/2 and the marginal
        // focus, which is nearer the mirror by LSA ≈ a²/(4R) (third-order
        // theory, re-derived from the circle).
        let r = 2.0 * n * d;
        let lsa = (0.5 * d).powi(2) / (4.0 * r);
        assert!(w.best_focus_mm < 0.5 * r && w.best_focus_mm > 0.5 * r - lsa, "{}", w.best_focus_mm);
        // The least-variance focus of W040·ρ⁴ balances it with
        // W020 = −W040 (Mahajan, Optical Imaging and Aberrations, Part I,
        // balanced primary spherical aberration; from memory): midway between the
        // paraxial and the marginal focus, to third order.
        let mid = 0.5 * r - 0.5 * lsa;
        assert!((w.best_focus_mm - mid).abs() < 1e-3 * lsa, "best focus {} vs midpoint {mid}", w.best_focus_mm);
    }
}

#[test]
fn wavefront_error_is_linear_in_the_conic_error() {
    // Third order: the wavefront scales with K + 1 (the conic's
    // ρ⁴ term, sag ΔK ρ⁴/(8R³)); halving the conic error halves the P-V.
    let s = collimated_wavefront(2400.0, 0.0, 150.0, LAMBDA);
    let e = collimated_wavefront(2400.0, -0.5, 150.0, LAMBDA);
    assert!(rel(e.pv_waves, 0.5 * s.pv_waves) < 0.01, "{} vs {}", e.pv_waves, s.pv_waves);
}

#[test]
fn fastest_sphere_for_a_quarter_wave() {
    // Third-order theory (re-derived from D/(2048 N³) ≤ λ/4):
    // N³ ≥ D/(512 λ); D = 150, λ = 550 nm → N = 8.106.
    // The exact wavefront agrees within a percent for such a slow mirror.
    let n = sphere_fastest_f_ratio(150.0, LAMBDA);
    assert!(rel(n, 8.106) < 1e-4, "{n}");
    let exact = sphere_fastest_f_ratio_exact(150.0, LAMBDA);
    assert!(rel(exact, n) < 0.01, "{exact} vs {n}");
    let c = compare_conics(2.0 * 8.0 * 150.0, 150.0, &[0.0], 550.0).unwrap();
    assert!(rel(c.sphere_fastest_f_ratio, 8.106) < 1e-4);
}

#[test]
fn quarter_wave_sphere_has_strehl_near_0_8() {
    // Rayleigh's λ/4 criterion corresponds to a Strehl ratio of about 0.8
    // for primary spherical aberration (Mahajan, JOSA
    // 72, 1258 (1982), exp(−(2πσ)²) form used here).
    let n = sphere_fastest_f_ratio_exact(150.0, LAMBDA);
    let w = collimated_wavefront(2.0 * n * 150.0, 0.0, 150.0, LAMBDA);
    assert!(rel(w.pv_waves, 0.25) < 1e-6, "{}", w.pv_waves);
    assert!(rel(w.strehl, (-(2.0 * std::f64::consts::PI * w.rms_waves).powi(2)).exp()) < 1e-12);
    assert!(rel(w.strehl, 0.80) < 0.01, "Strehl {}", w.strehl);
}

#[test]
fn conic_tolerance_costs_a_quarter_wave() {
    // Third order (derived in compare.rs from the conic's ρ⁴
    // term ΔK ρ⁴/(8R³)): ΔK = 64 λ R³/D⁴ gives λ/4 P-V; the exact trace agrees
    // within a few percent for an f/8 mirror.
    let (r, d) = (2400.0, 150.0);
    let dk = conic_tolerance_quarter_wave(r, d, LAMBDA);
    let w = collimated_wavefront(r, -1.0 + dk, d, LAMBDA);
    assert!(rel(w.pv_waves, 0.25) < 0.03, "ΔK {dk}: {} waves", w.pv_waves);
}

#[test]
fn best_fit_sphere_of_a_paraboloid() {
    // Third-order algebra (common practice among mirror makers): the sphere
    // touching the paraboloid at the 70.7 % zone leaves equal depths
    // D⁴/(512 R³) to remove at the centre and the edge, a quarter of the
    // vertex sphere's edge departure D⁴/(128 R³).
    let (r, d) = (2000.0, 200.0);
    let b = best_fit_sphere(r, -1.0, d);
    let want = d.powi(4) / (512.0 * r.powi(3));
    assert!(rel(b.removal_depth_mm, want) < 2e-3, "{} vs {want}", b.removal_depth_mm);
    assert!(b.radius_mm > r);
    assert!(b.removal_mm(0.0) > 0.99 * want && b.removal_mm(100.0) > 0.99 * want);
    assert!(b.removal_mm(100.0 * 0.5f64.sqrt()).abs() < 1e-3 * want);
    // With the sphere placed midway, the paraboloid stands proud of it by
    // half that depth at the 70.7 % zone and lies below it by as much at
    // the centre and the edge (the same algebra).
    for (rho, sign) in [(0.0, -1.0), (100.0, -1.0), (100.0 * 0.5f64.sqrt(), 1.0)] {
        let got = b.departure_mm(rho);
        assert!(rel(got, sign * 0.5 * want) < 5e-3, "departure at {rho} mm: {got} vs {}", sign * 0.5 * want);
    }
    // The comparison table reports the same depth in micrometres, and the
    // focal ratio N = f/D with the mirror's focal length f = R/2 (textbook
    // definitions).
    let c = compare_conics(r, d, &[-1.0], 550.0).expect("a valid comparison");
    assert!(rel(c.conics[0].removal_depth_um, want * 1e3) < 2e-3, "{} µm", c.conics[0].removal_depth_um);
    assert_eq!(c.focal_ratio, 5.0);
}

#[test]
fn best_fit_sphere_of_an_oblate_ellipsoid() {
    // The same third-order algebra for any conic (common practice): from
    // the conic sag series z = ρ²/(2R) + (1 + K)·ρ⁴/(8R³) + …, its sag
    // exceeds the vertex sphere's by K·ρ⁴/(8R³), so the best sphere
    // leaves |K|·D⁴/(512 R³) to remove. For K > 0 the surface is deeper
    // than its vertex sphere toward the edge: the best sphere is the
    // stronger one, touching at the centre and the edge, and the glass to
    // remove is deepest at the 70.7 % zone — the paraboloid's pattern
    // turned over.
    let (r, d, k) = (2000.0, 200.0, 0.5);
    let b = best_fit_sphere(r, k, d);
    let want = k * d.powi(4) / (512.0 * r.powi(3));
    assert!(rel(b.removal_depth_mm, want) < 5e-3, "{} vs {want}", b.removal_depth_mm);
    assert!(b.radius_mm < r, "best sphere R = {}", b.radius_mm);
    assert!(b.removal_mm(0.0) < 5e-3 * want && b.removal_mm(100.0) < 5e-3 * want);
    let zone = b.removal_mm(100.0 * 0.5f64.sqrt());
    assert!(rel(zone, want) < 5e-3, "removal at the 70.7 % zone {zone} vs {want}");
}

#[test]
fn conic_constants_and_lists_are_held_to_their_limits() {
    // The command's own limits, each side of each bound (common practice):
    // |K| ≤ 10⁶ and at most MAX_CONICS constants.
    let err = compare_conics(100.0, 50.0, &[f64::NAN], 550.0).unwrap_err();
    assert!(err.message.contains("between -1e6 and 1e6"), "{}", err.message);
    assert_eq!(compare_conics(100.0, 50.0, &[-2e6], 550.0).unwrap_err().field, "conics[0]");
    assert!(compare_conics(100.0, 50.0, &[-1e6], 550.0).is_ok());
    let most = vec![-1.0; MAX_CONICS];
    assert_eq!(compare_conics(1000.0, 100.0, &most, 550.0).expect("the most allowed").conics.len(), MAX_CONICS);
    let over = vec![-1.0; MAX_CONICS + 1];
    assert_eq!(compare_conics(1000.0, 100.0, &over, 550.0).unwrap_err().field, "conics");
}

#[test]
fn bad_input_names_the_field() {
    assert_eq!(parse_conics("0, -1, x").unwrap_err().field, "conics[2]");
    assert_eq!(parse_conics("0,,1").unwrap_err().field, "conics[1]");
    assert_eq!(compare_conics(-100.0, 50.0, &[0.0], 550.0).unwrap_err().field, "radius");
    assert_eq!(compare_conics(100.0, 250.0, &[0.0], 550.0).unwrap_err().field, "diameter");
    assert_eq!(compare_conics(100.0, 150.0, &[-1.0, 3.0], 550.0).unwrap_err().field, "conics[1]");
    assert_eq!(compare_conics(100.0, 50.0, &[f64::NAN], 550.0).unwrap_err().field, "conics[0]");
    assert_eq!(compare_conics(100.0, 50.0, &[0.0], 0.0).unwrap_err().field, "wavelength");
    assert_eq!(compare_conics(100.0, 50.0, &[], 550.0).unwrap_err().field, "conics");
}

/// The conic list takes commas, semicolons and spaces, in any mix, and the
/// typographic minus the page prints (common practice for number lists).
#[test]
fn conic_lists_take_commas_semicolons_and_spaces() {
    assert_eq!(parse_conics("0, -1; -2 -0.5").unwrap(), vec![0.0, -1.0, -2.0, -0.5]);
    assert_eq!(parse_conics("0 \u{2212}1").unwrap(), vec![0.0, -1.0]);
    assert_eq!(parse_conics("0;;1").unwrap_err().field, "conics[1]");
}
