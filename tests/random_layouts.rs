//! Random layouts built from random valid values (not mutations of
//! one file), traced with few rays. Never panic on input (docs/FORMATS.md §4):
//! every launched ray is counted as escaped or absorbed, every hit is
//! finite with a unit direction arriving on the sensitive face, no hit
//! carries more power than its ray was launched with, opaque screens
//! together receive no more than was launched (a transparent screen may
//! count a ray once per leg that crosses it), and the report, fan and flux
//! maps come out finite.

mod layout_support;
use catoptric::analysis::{analyse_all, flux_map};
use catoptric::trace::trace_fan;
use catoptric::{parse_layout, trace, validate, Scene, TraceOptions};
use layout_support::*;
use serde_json::{json, Value};

/// Traces and checks one layout; false when validation refuses it.
fn exercise(text: &str) -> bool {
    let Ok(layout) = parse_layout(text) else { return false };
    validate(&layout).unwrap();
    let scene = Scene::compile(&layout);
    let res = trace(&scene, TraceOptions::default());
    assert_eq!(res.rays_launched, res.rays_escaped + res.rays_absorbed, "{text}");
    assert_eq!(res.launched_by_source.iter().sum::<u64>(), res.rays_launched);
    let launched_power: f64 = res.power_by_source.iter().sum();
    for h in &res.screens {
        for k in 0..h.len() {
            for x in [h.u[k], h.v[k], h.du[k], h.dv[k], h.dw[k], h.opl[k], h.weight[k]] {
                assert!(x.is_finite(), "non-finite hit value\n{text}");
            }
            let n = (h.du[k].powi(2) + h.dv[k].powi(2) + h.dw[k].powi(2)).sqrt();
            assert!((n - 1.0).abs() < 1e-9, "direction norm {n}\n{text}");
            assert!(h.dw[k] < 0.0, "recorded from the back\n{text}");
            assert!(h.opl[k] >= 0.0 && h.weight[k] >= 0.0);
        }
        // No gain on reflection (reflectivity ≤ 1): a hit carries at most
        // the power its ray was launched with.
        for k in 0..h.len() {
            let s = h.source[k] as usize;
            let launched_w = res.power_by_source[s] / res.launched_by_source[s] as f64;
            assert!(h.weight[k] <= launched_w * (1.0 + 1e-12), "hit {k} carries {} W > {launched_w} W launched\n{text}", h.weight[k]);
        }
        // A transparent screen records a ray once per leg that crosses it
        // toward its face, and a ray makes at most max_bounces + 1 legs.
        let p: f64 = h.weight.iter().sum();
        assert!(h.len() as u64 <= res.rays_launched * (1 + scene.max_bounces as u64), "{} hits\n{text}", h.len());
        assert!(p <= launched_power * (1.0 + 1e-9) * (1 + scene.max_bounces) as f64, "power {p} W\n{text}");
    }
    // An opaque screen ends every ray it records, so all opaque screens
    // together receive no more than was launched (energy conservation).
    let opaque: f64 = scene
        .elements
        .iter()
        .filter_map(|e| match e.part {
            catoptric::scene::Part::Screen { opaque: true, index, .. } => Some(res.screens[index].weight.iter().sum::<f64>()),
            _ => None,
        })
        .sum();
    assert!(opaque <= launched_power * (1.0 + 1e-9), "opaque screens receive {opaque} W of {launched_power} W\n{text}");
    let all = analyse_all(&scene, &res);
    let json = serde_json::to_value(&all.report).unwrap();
    fn finite(v: &Value, path: &str, text: &str) {
        match v {
            Value::Number(n) => assert!(n.as_f64().is_some_and(f64::is_finite), "{path}\n{text}"),
            Value::Array(a) => a.iter().enumerate().for_each(|(i, x)| finite(x, &format!("{path}[{i}]"), text)),
            Value::Object(o) => o.iter().for_each(|(k, x)| finite(x, &format!("{path}.{k}"), text)),
            _ => {}
        }
    }
    finite(&json, "report", text);
    for m in &all.flux_maps {
        assert!(m.w_m2.iter().all(|w| w.is_finite() && *w >= 0.0));
    }
    for i in 0..scene.screen_ids.len() {
        assert!(flux_map(&scene, &res, i, 7, 3).is_some());
    }
    let fan = trace_fan(&scene, 9, None);
    assert!(fan.segments.iter().all(|x| x.is_finite()), "fan\n{text}");
    assert_eq!(fan.segments.len(), 4 * fan.source.len());
    true
}

#[test]
fn random_valid_layouts_trace_without_panic() {
    let mut rng = Rng(20240611);
    let mut valid = 0;
    for _ in 0..400 * fuzz_scale() {
        let text = random_layout(&mut rng);
        valid += exercise(&text) as usize;
    }
    // The generator aims inside the valid ranges; a few draws (an offset
    // segment past a small conic's domain) are refused.
    assert!(valid > 300, "only {valid} of 400 random layouts were valid");
}

/// Values at the edges of what validation allows.
#[test]
fn extreme_valid_values_trace_without_panic() {
    let cases = [
        // Tiny fast sphere, nearly a hemisphere.
        (Some(1e-3), 0.0, 1.99e-3, 0.0),
        // Huge radius, tiny conic domain margin (oblate).
        (Some(1e7), 1e6, 19.9e3, 0.0),
        // Hyperboloid with K = −1e6.
        (Some(1.0), -1e6, 1e4, 0.0),
        // Flat, 10 km across, far off the origin.
        (None, 0.0, 1e7, 5e6),
    ];
    for (r, k, d, off) in cases {
        let m = mirror("m", [off, -off], 33.0, r, k, d, off * 0.0, 0.0, None);
        let s = screen("s", [off, 1e6 - off], 180.0, 1e7, "square", false);
        let text = layout(
            &[m, s],
            &[
                lamp("l", [off, 10.0 - off], 213.0, 180.0, 500, 1e12),
                json!({ "kind": "beam", "id": "b", "center": [off, 1e6 - off], "direction_deg": 180,
                        "out_of_plane_deg": 89, "diameter": 1e7, "rays": 500, "pattern": "grid",
                        "sun_half_angle_mrad": 200, "irradiance_w_m2": 1e9 }),
            ],
        );
        assert!(exercise(&text), "refused: {text}");
    }
}
