//! Random layouts built from random valid values (not mutations of
//! one file), traced with few rays. Never panic on input (DESIGN.md §8):
//! every launched ray is counted as escaped or absorbed, every hit is
//! finite with a unit direction arriving on the sensitive face, no screen
//! gets more power than was launched, and the report, fan and flux maps
//! come out finite.

mod layout_support;
use catoptric::analysis::{analyse_all, flux_map};
use catoptric::trace::trace_fan;
use catoptric::{parse_layout, trace, validate, Scene, TraceOptions};
use layout_support::*;
use serde_json::{json, Value};

/// Log-uniform magnitude in [lo, hi].
fn mag(rng: &mut Rng, lo: f64, hi: f64) -> f64 {
    (lo.ln() + (hi.ln() - lo.ln()) * rng.next()).exp()
}

fn sign(rng: &mut Rng) -> f64 {
    if rng.next() < 0.5 { -1.0 } else { 1.0 }
}

fn random_mirror(rng: &mut Rng, i: usize, size: f64) -> Value {
    let d = mag(rng, 0.01 * size, size);
    let radius = if rng.next() < 0.15 { None } else { Some(sign(rng) * mag(rng, 0.3 * d, 100.0 * size)) };
    let conic = match rng.int(5) {
        0 => 0.0,
        1 => -1.0,
        2 => rng.range(-1.0, 0.0),
        3 => -mag(rng, 1.0, 100.0),
        _ => mag(rng, 1e-3, 10.0),
    };
    let offset = if rng.next() < 0.3 { rng.range(-d, d) } else { 0.0 };
    // Keep ρ inside the conic's domain.
    let mut diameter = d;
    if let Some(r) = radius {
        if conic > -1.0 {
            let lim = r.abs() / (1.0 + conic).sqrt();
            let rho = offset.abs() + 0.5 * diameter;
            if rho >= 0.999 * lim {
                diameter = (2.0 * (0.99 * lim - offset.abs())).max(1e-3 * lim);
            }
        }
    }
    let hole = if rng.next() < 0.3 { rng.range(0.0, 0.9) * diameter } else { 0.0 };
    let extruded = rng.next() < 0.3;
    let mut profile = json!({ "radius": radius, "conic": conic });
    if rng.next() < 0.3 {
        let n = 1 + rng.int(4) as usize;
        let scale = 1e-3 * diameter;
        let a: Vec<f64> = (0..n).map(|k| rng.range(-1.0, 1.0) * scale / (0.5 * diameter).powi(4 + 2 * k as i32)).collect();
        profile["aspheric"] = json!(a);
    }
    if rng.next() < 0.3 {
        let n = 2 + rng.int(12) as usize;
        let span = offset.abs() + diameter;
        let start = if extruded { -span } else { 0.0 };
        let step = (span - start) / (n - 1) as f64;
        let knots: Vec<[f64; 2]> = (0..n).map(|k| [start + step * k as f64, rng.range(-0.01, 0.01) * diameter]).collect();
        profile["departure"] = json!(knots);
    }
    let mut m = json!({
        "kind": "mirror", "id": format!("m{i}"),
        "vertex": [rng.range(-size, size), rng.range(-size, size)],
        "axis_deg": rng.range(-360.0, 360.0),
        "form": if extruded { "extruded" } else { "revolved" },
        "profile": profile,
        "aperture": { "diameter": diameter, "offset": offset, "hole": hole },
        "reflectivity": if rng.next() < 0.2 { rng.next() } else { 1.0 },
    });
    if extruded {
        m["length"] = json!(mag(rng, 0.01 * size, 2.0 * size));
    }
    m
}

fn random_layout(rng: &mut Rng) -> String {
    let size = mag(rng, 1.0, 1e5);
    let mut elements = Vec::new();
    for i in 0..(1 + rng.int(5) as usize) {
        elements.push(random_mirror(rng, i, size));
    }
    for i in 0..(1 + rng.int(3) as usize) {
        elements.push(json!({
            "kind": "screen", "id": format!("s{i}"),
            "center": [rng.range(-size, size), rng.range(-size, size)],
            "axis_deg": rng.range(-180.0, 540.0),
            "size": mag(rng, 1e-3 * size, 3.0 * size),
            "shape": if rng.next() < 0.5 { "circle" } else { "square" },
            "opaque": rng.next() < 0.5,
        }));
    }
    let mut sources = Vec::new();
    for i in 0..(1 + rng.int(3) as usize) {
        let pattern = ["hex", "grid", "random"][rng.int(3) as usize];
        let rays = 1 + rng.int(300);
        if rng.next() < 0.5 {
            sources.push(json!({
                "kind": "beam", "id": format!("b{i}"),
                "center": [rng.range(-size, size), rng.range(-size, size)],
                "direction_deg": rng.range(-720.0, 720.0),
                "out_of_plane_deg": if rng.next() < 0.3 { rng.range(-89.0, 89.0) } else { 0.0 },
                "diameter": mag(rng, 1e-3 * size, 2.0 * size), "rays": rays, "pattern": pattern,
                "sun_half_angle_mrad": if rng.next() < 0.4 { rng.range(0.0, 200.0) } else { 0.0 },
                "irradiance_w_m2": if rng.next() < 0.1 { 0.0 } else { mag(rng, 1.0, 1e6) },
            }));
        } else {
            sources.push(json!({
                "kind": "point", "id": format!("p{i}"),
                "center": [rng.range(-size, size), rng.range(-size, size)],
                "direction_deg": rng.range(-720.0, 720.0),
                "cone_half_angle_deg": rng.range(1e-6, 180.0), "rays": rays, "pattern": pattern,
                "power_w": if rng.next() < 0.1 { 0.0 } else { mag(rng, 1e-3, 1e6) },
            }));
        }
    }
    json!({ "format": "catoptric-layout", "version": 1, "name": "fuzz",
            "wavelength_nm": rng.range(100.0, 100000.0), "max_bounces": 1 + rng.int(40),
            "elements": elements, "sources": sources })
    .to_string()
}

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
        let p: f64 = h.weight.iter().sum();
        assert!(p <= launched_power * (1.0 + 1e-9) * (1 + scene.max_bounces) as f64 + 1e-300, "power {p} > launched\n{text}");
    }
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
    for _ in 0..400 {
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
