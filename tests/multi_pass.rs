//! A screen that rays cross again and again: a lamp at one focus of an
//! ellipsoidal cavity, a small screen at the other. By the focal property
//! of the ellipse (Apollonius, Conics, Book III, prop. 48: lines from the
//! two foci make equal angles with the curve) every ray from one focus is
//! reflected through the other, back through the first, and so on — so
//! the screen is crossed once per round trip. Each ray must count once:
//! the intercept is the fraction of launched power that reaches the
//! screen (here all of it), the other crossings are reported separately,
//! and the wavefront comes from the first pass only (a perfect image: the
//! optical path from focus to focus is the same for every ray, 2a).

mod layout_support;
use catoptric::analysis::trace_report;
use catoptric::trace::{trace, trace_reference, TraceOptions};
use layout_support::*;

/// Ellipse with a = 100 mm, c = 60 mm (b = 80 mm): vertex radius
/// b²/a = 64 mm, conic −e² = −0.36; the two halves face each other with
/// vertices at z = ∓100, foci at z = ∓60. Apertures of 150 mm stay inside
/// the conic's domain (ρ < b).
fn ellipsoidal_cavity(max_bounces: u32) -> String {
    let k = -(60.0f64 / 100.0).powi(2);
    let mut v: serde_json::Value = serde_json::from_str(&layout(
        &[
            mirror("near", [0.0, -100.0], 0.0, Some(64.0), k, 150.0, 0.0, 0.0, None),
            mirror("far", [0.0, 100.0], 180.0, Some(64.0), k, 150.0, 0.0, 0.0, None),
            screen("focus", [0.0, 60.0], 0.0, 2.0, "circle", false),
        ],
        &[lamp("lamp", [0.0, -60.0], 0.0, 20.0, 2000, 100.0)],
    ))
    .unwrap();
    v["max_bounces"] = serde_json::json!(max_bounces);
    v.to_string()
}

#[test]
fn each_ray_counts_once_however_often_it_crosses_the_screen() {
    let sc = scene(&ellipsoidal_cavity(16));
    let res = trace(&sc, TraceOptions::default());
    let report = trace_report(&sc, &res);
    let s = &report.screens[0];
    // Every ray within 20° of the axis meets the far half beyond the far
    // focus (at z ≈ 78 mm, ρ ≈ 50 mm, inside the 75 mm rim), so every ray
    // arrives on its first pass, travelling toward the lamp.
    assert_eq!(s.hits, res.rays_launched, "each launched ray arrives once");
    assert!(s.crossings > 2 * s.hits, "rays come back: {} crossings for {} rays", s.crossings, s.hits);
    assert!(rel(s.power_w, 100.0) < 1e-12, "power {} W from a 100 W lamp", s.power_w);
    let intercept = s.flux.intercept.unwrap();
    assert!(rel(intercept, 1.0) < 1e-12, "intercept {intercept}");
    // First pass only: a perfect focus-to-focus image.
    let r = &s.by_source[0];
    assert_eq!(r.hits, res.rays_launched);
    let rms = r.wavefront_rms_waves.unwrap();
    let pv = r.wavefront_pv_waves.unwrap();
    assert!(rms < 1e-3 && pv < 1e-2, "wavefront RMS {rms}, P-V {pv} waves");
    assert!(r.rms_radius_um < 1e-3, "spot {} µm", r.rms_radius_um);
}

#[test]
fn first_arrivals_are_flagged_alike_by_both_tracers() {
    // The batched tracer records a ray's crossings over several rounds; it
    // must flag the same first arrivals as the one-ray-at-a-time tracer.
    let sc = scene(&ellipsoidal_cavity(16));
    let opts = TraceOptions { rays: Some(500), ..Default::default() };
    let (a, b) = (trace(&sc, opts), trace_reference(&sc, opts));
    assert_eq!(a.screens[0].first, b.screens[0].first);
    assert_eq!(a.screens[0].first.iter().filter(|&&f| f).count() as u64, a.rays_launched);
    // With one bounce allowed, the screen is crossed once per ray.
    let one = trace(&scene(&ellipsoidal_cavity(1)), opts);
    assert!(one.screens[0].first.iter().all(|&f| f));
}

#[test]
fn first_arrivals_are_counted_on_any_screen_of_the_layout() {
    // The same cavity with the crossed screen listed after two others (out
    // of every ray's way, beside the cavity): still one first arrival per
    // launched ray, from the reference tracer as from the batched one.
    let mut v: serde_json::Value = serde_json::from_str(&ellipsoidal_cavity(16)).unwrap();
    let elements = v["elements"].as_array_mut().unwrap();
    for (i, id) in ["aside-1", "aside-2"].iter().enumerate() {
        elements.insert(0, screen(id, [500.0 + 50.0 * i as f64, 0.0], 0.0, 2.0, "circle", false));
    }
    let sc = scene(&v.to_string());
    let focus = sc.screen_ids.iter().position(|s| s == "focus").unwrap();
    assert_eq!(focus, 2);
    let opts = TraceOptions { rays: Some(300), ..Default::default() };
    for res in [trace_reference(&sc, opts), trace(&sc, opts)] {
        let hits = &res.screens[focus];
        assert!(hits.len() as u64 > 2 * res.rays_launched, "rays come back: {} crossings", hits.len());
        assert_eq!(hits.first.iter().filter(|&&f| f).count() as u64, res.rays_launched);
        assert!(res.screens[0].is_empty() && res.screens[1].is_empty());
    }
}

#[test]
fn a_stack_of_screens_is_crossed_on_the_way_out_and_back_with_one_bounce() {
    // Three transparent screens in a beam in front of a plane mirror
    // (law of reflection, Hecht, Optics, 5th ed., §4.4, from memory: a
    // beam at normal incidence comes straight back), one
    // bounce allowed: each ray crosses all three going out (their backs),
    // reflects, and crosses them again coming back, where their faces
    // record it — seven events per ray, each screen one hit per ray.
    let mut v: serde_json::Value = serde_json::from_str(&layout(
        &[
            screen("a", [0.0, 10.0], 0.0, 40.0, "square", false),
            screen("b", [0.0, 20.0], 0.0, 40.0, "square", false),
            screen("c", [0.0, 30.0], 0.0, 40.0, "square", false),
            mirror("flat", [0.0, 50.0], 180.0, None, 0.0, 40.0, 0.0, 0.0, None),
        ],
        &[beam("beam", [0.0, 0.0], 0.0, 20.0, 500, "hex")],
    ))
    .unwrap();
    v["max_bounces"] = serde_json::json!(1);
    let sc = scene(&v.to_string());
    let opts = TraceOptions::default();
    for res in [trace_reference(&sc, opts), trace(&sc, opts)] {
        for (k, h) in res.screens.iter().enumerate() {
            assert_eq!(h.len() as u64, res.rays_launched, "screen {k}");
            assert!(h.dw.iter().all(|&w| (w + 1.0).abs() < 1e-12), "arriving head-on");
        }
        assert_eq!(res.rays_escaped, res.rays_launched);
    }
}
