//! Flux maps and solar concentration.
//!
//! Sources: Rabl, Solar Energy 18, 93–111 (1976) and Active Solar
//! Collectors and Their Applications (1985) (value from memory;
//! Winston, Miñano & Benítez, Nonimaging Optics (2005) for the limits):
//! limits 1/sin²θs (3D) and 1/sin θs (2D); a paraboloidal
//! dish of rim angle φ with a flat circular receiver of radius
//! ρ_rim sin θs / cos(φ + θs) reaches C = sin²φ cos²(φ+θs)/sin²θs − 1, a
//! trough with a flat strip receiver C = sin φ cos(φ+θs)/sin θs − 1; the −1
//! is the receiver's own shadow on the aperture. θs = 4.65 mrad (mean sun,
//! common practice), φ = 45° → 11,453.6 and 106.03.

mod analysis_support;
use analysis_support::*;
use catoptric::analysis::{flux_map, flux_stats, trace_report};

const THETA_S: f64 = 4.65e-3;
const F: f64 = 1000.0;

/// Dish (or trough, with `length`) of focal length F and rim angle φ,
/// vertex at z = F so the focus is at the origin; a receiver screen there
/// facing the mirror; a sun beam wider than the aperture starting just
/// behind the receiver so the receiver shades the mirror.
fn collector(phi_deg: f64, receiver_size: f64, shape: &str, length: Option<f64>, rays: u64, pattern: &str) -> String {
    let phi = phi_deg.to_radians();
    let a = 2.0 * F * (phi / 2.0).tan(); // aperture half-width
    let beam_d = match length {
        Some(l) => (2.0 * a + 40.0).hypot(l + 40.0),
        None => 2.0 * a + 40.0,
    };
    layout(
        &[mirror("dish", F, 2.0 * F, -1.0, 2.0 * a, length), screen("receiver", 0.0, 0.0, receiver_size, shape, true)],
        &[beam("sun", 0.0, -50.0, beam_d, rays, pattern, 4.65)],
    )
}

/// Rim distance from the focus, 2F/(1 + cos φ) (parabola in polar form).
fn rim(phi: f64) -> f64 {
    2.0 * F / (1.0 + phi.cos())
}

#[test]
fn dish_with_rabl_receiver_reaches_the_published_concentration() {
    let phi = 45f64.to_radians();
    // 11,453.6 at φ = 45° (Rabl's formula above).
    let c_formula = phi.sin().powi(2) * (phi + THETA_S).cos().powi(2) / THETA_S.sin().powi(2) - 1.0;
    let r = rim(phi) * THETA_S.sin() / (phi + THETA_S).cos();
    let (scene, res) = run(&collector(45.0, 2.0 * r, "circle", None, 300_000, "hex"));
    let f = trace_report(&scene, &res).screens[0].flux;
    // Mean flux on the receiver over the beam's irradiance is its
    // concentration (power / receiver area / incident irradiance).
    let c = f.mean_w_m2 / 1000.0;
    eprintln!("C traced {c:.2} formula {c_formula:.2}");
    assert!(rel(c, c_formula) < 0.005, "traced {c} vs {c_formula}");
    // Intercept: every ray the dish reflects lands on the receiver; the
    // launched beam is wider than the dish, so compare with the fraction
    // of the beam's area the dish catches outside the shadow.
    let a = rim(phi) * phi.sin();
    let beam_r = a + 20.0;
    let expect = (a * a - r * r) / (beam_r * beam_r);
    assert!(rel(f.intercept.unwrap(), expect) < 0.005, "{:?} vs {expect}", f.intercept);
    // Below the 3-D limit everywhere.
    assert!(f.peak_suns.unwrap() < 1.0 / THETA_S.sin().powi(2));
}

#[test]
fn trough_with_strip_receiver_reaches_the_published_concentration() {
    let phi = 45f64.to_radians();
    // 106.03 at φ = 45° (Rabl's formula above).
    let c_formula = phi.sin() * (phi + THETA_S).cos() / THETA_S.sin() - 1.0;
    // A square receiver of side 2r in the middle of a long trough sees the
    // same flux as an endless strip (the trough is uniform along x).
    let r = rim(phi) * THETA_S.sin() / (phi + THETA_S).cos();
    let (scene, res) = run(&collector(45.0, 2.0 * r, "square", Some(200.0), 1_500_000, "hex"));
    let f = trace_report(&scene, &res).screens[0].flux;
    let c = f.mean_w_m2 / 1000.0;
    eprintln!("C traced {c:.2} formula {c_formula:.2}");
    assert!(rel(c, c_formula) < 0.01, "traced {c} vs {c_formula}");
}

#[test]
fn traced_concentration_never_exceeds_the_thermodynamic_limits() {
    // Mean concentration on a receiver that takes all the light (the Rabl
    // size) stays below 1/sin²θs for a dish and 1/sin θs for a trough; the
    // peak pixel, a local flux, stays below the radiance limit 1/sin²θs in
    // both. (The 2-D bound is on the mean: at a trough's focal line the
    // 3-D solar disk, projected into the plane, peaks at 4/π times its mean
    // brightness, so the local flux there is about (4/π) sin φ / sin θs,
    // above 1/sin θs for φ ≳ 52°, though the receiver mean never is.)
    // Grids are coarse enough for hundreds of rays per pixel: a binned peak
    // from a handful of rays reads high by chance, not by physics.
    let (lim3, lim2) = (1.0 / THETA_S.sin().powi(2), 1.0 / THETA_S.sin());
    for phi in [30.0, 45.0, 60.0, 75.0] {
        let p = f64::to_radians(phi);
        let r = rim(p) * THETA_S.sin() / (p + THETA_S).cos();
        let (scene, res) = run(&collector(phi, 2.0 * r, "circle", None, 200_000, "random"));
        let c = flux_stats(&scene, &res, 0, 32).unwrap().mean_w_m2 / 1000.0;
        assert!(c < lim3 && c > 0.9 * (p.sin() * (p + THETA_S).cos()).powi(2) * lim3 - 1.0, "dish φ = {phi}: mean {c}");
        let (scene, res) = run(&collector(phi, 3.0 * r, "square", None, 200_000, "random"));
        let peak = flux_stats(&scene, &res, 0, 32).unwrap().peak_suns.unwrap();
        assert!(peak < lim3 && peak > 0.5 * lim3 * p.sin().powi(2), "dish φ = {phi}: peak {peak}");
        let (scene, res) = run(&collector(phi, 2.0 * r, "square", Some(200.0), 1_000_000, "random"));
        let f = flux_stats(&scene, &res, 0, 8).unwrap();
        let c = f.mean_w_m2 / 1000.0;
        assert!(c < lim2 && c > 0.9 * (p.sin() * (p + THETA_S).cos() * lim2 - 1.0), "trough φ = {phi}: mean {c}");
        assert!(f.peak_suns.unwrap() < lim3, "trough φ = {phi}: peak {:?}", f.peak_suns);
    }
}

#[test]
fn flux_map_holds_all_the_power_on_the_screen() {
    // Energy conservation (common practice): Σ pixel flux × pixel area is
    // the power recorded on the screen; no sources of beams → no suns.
    let text = layout(
        &[
            mirror("m", 1000.0, 2000.0, -1.0, 200.0, None),
            screen("s", 0.0, 5.0, 10.0, "circle", false),
            screen("far", 0.0, -500.0, 40.0, "square", false),
        ],
        &[r#"{ "kind": "point", "id": "lamp", "center": [0, 300], "direction_deg": 0, "cone_half_angle_deg": 10,
               "rays": 5000, "pattern": "random", "power_w": 50 }"#
            .to_string()],
    );
    let (scene, res) = run(&text);
    let m = flux_map(&scene, &res, 0, 32, 16).unwrap();
    // Each screen is mapped over its own square: the second is 40 mm.
    assert_eq!(m.half_mm, 5.0);
    assert_eq!(flux_map(&scene, &res, 1, 8, 8).unwrap().half_mm, 20.0);
    let pix_m2 = (10.0 / 32.0) * (10.0 / 16.0) * 1e-6;
    let total: f64 = m.w_m2.iter().sum::<f64>() * pix_m2;
    let power: f64 = res.screens[0].weight.iter().sum();
    assert!(power > 0.0 && rel(total, power) < 1e-12);
    let f = flux_stats(&scene, &res, 0, 64).unwrap();
    assert!(f.peak_suns.is_none());
    assert!(rel(f.mean_w_m2, power / (std::f64::consts::PI * 25.0 * 1e-6)) < 1e-12);
    assert!(rel(f.intercept.unwrap(), power / 50.0) < 1e-12);
    // No map for a missing screen, or a grid side of 0 or too many pixels.
    let max = catoptric::analysis::MAX_FLUX_GRID;
    for (screen, nx, ny) in [(3, 8, 8), (0, 0, 16), (0, 16, 0), (0, max + 1, 16), (0, 16, max + 1)] {
        assert!(flux_map(&scene, &res, screen, nx, ny).is_none(), "screen {screen}, {nx} × {ny}");
    }
    assert!(flux_map(&scene, &res, 0, max, 1).is_some());
}
