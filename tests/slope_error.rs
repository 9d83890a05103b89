//! Mirror slope errors (docs/FORMATS.md §2, `slope_error_mrad`): the
//! surface normal tilted by a Gaussian of σ per tangent axis at each
//! reflection. Checked against an independent Monte Carlo of the same
//! error model written here (its own random numbers, its own reflection),
//! against the closed form for a slow dish (the reflected ray turns by
//! twice the normal's tilt, so the focal spot is a circular Gaussian of
//! σ_spot = 2σf per axis: Rabl, Active Solar Collectors and Their
//! Applications, 1985, ch. 8 — the optical error budget doubles slope
//! errors; value from memory, the doubling is the law of reflection), and
//! σ = 0 against today's exact paraboloid focus.

use catoptric::analysis::trace_report;
use catoptric::{parse_layout, trace, Scene, TraceOptions};

fn dish(radius: f64, diameter: f64, sigma: f64, screen_size: f64, shape: &str) -> String {
    let f = radius / 2.0;
    let slope = if sigma.is_nan() { String::new() } else { format!(r#","slope_error_mrad":{sigma}"#) };
    format!(
        r#"{{"format":"catoptric-layout","version":1,"name":"dish","wavelength_nm":550,"max_bounces":4,
        "elements":[
          {{"kind":"mirror","id":"dish","vertex":[0,0],"axis_deg":0,"form":"revolved",
            "profile":{{"radius":{radius},"conic":-1}},"aperture":{{"diameter":{diameter}}}{slope}}},
          {{"kind":"screen","id":"focus","center":[0,{f}],"axis_deg":180,"size":{screen_size},"shape":"{shape}"}}],
        "sources":[{{"kind":"beam","id":"star","center":[0,{top}],"direction_deg":180,"diameter":{diameter},
          "rays":100000,"pattern":"random"}}]}}"#,
        top = f * 1.2
    )
}

fn report(text: &str) -> serde_json::Value {
    let layout = parse_layout(text).unwrap();
    let sc = Scene::compile(&layout);
    let res = trace(&sc, TraceOptions::default());
    serde_json::to_value(trace_report(&sc, &res)).unwrap()
}

/// xorshift64* and Box–Muller: the test's own random numbers.
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        ((self.0.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn gauss(&mut self) -> f64 {
        (-2.0 * self.next().ln()).sqrt() * (std::f64::consts::TAU * self.next()).cos()
    }
}

/// RMS spot radius (mm) about the centroid in the focal plane of a
/// paraboloid z = ρ²/(4f) lit along −z, with the normal tilted by σ per
/// tangent axis: a Monte Carlo independent of the tracer.
fn monte_carlo_rms(f: f64, diameter: f64, sigma: f64, n: usize) -> f64 {
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    let mut pts = Vec::with_capacity(n);
    while pts.len() < n {
        let (x, y) = ((2.0 * rng.next() - 1.0) * diameter / 2.0, (2.0 * rng.next() - 1.0) * diameter / 2.0);
        if x * x + y * y > diameter * diameter / 4.0 {
            continue;
        }
        let z = (x * x + y * y) / (4.0 * f);
        let norm = |v: [f64; 3]| {
            let l = (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
            [v[0] / l, v[1] / l, v[2] / l]
        };
        let nrm = norm([-x / (2.0 * f), -y / (2.0 * f), 1.0]);
        // Tangent axes: any orthonormal pair (the error is isotropic).
        let t1 = norm([nrm[2], 0.0, -nrm[0]]);
        let t2 = [nrm[1] * t1[2] - nrm[2] * t1[1], nrm[2] * t1[0] - nrm[0] * t1[2], nrm[0] * t1[1] - nrm[1] * t1[0]];
        let (g1, g2) = (sigma * rng.gauss(), sigma * rng.gauss());
        let m = norm([0, 1, 2].map(|k| nrm[k] + g1 * t1[k] + g2 * t2[k]));
        let d = [0.0, 0.0, -1.0];
        let dn = d[2] * m[2];
        let r = [d[0] - 2.0 * dn * m[0], d[1] - 2.0 * dn * m[1], d[2] - 2.0 * dn * m[2]];
        let t = (f - z) / r[2];
        pts.push((x + t * r[0], y + t * r[1]));
    }
    let (cx, cy) = pts.iter().fold((0.0, 0.0), |a, p| (a.0 + p.0, a.1 + p.1));
    let (cx, cy) = (cx / n as f64, cy / n as f64);
    (pts.iter().map(|p| (p.0 - cx).powi(2) + (p.1 - cy).powi(2)).sum::<f64>() / n as f64).sqrt()
}

fn rms_mm(r: &serde_json::Value) -> f64 {
    r["screens"][0]["by_source"][0]["rms_radius_um"].as_f64().unwrap() * 1e-3
}

#[test]
fn the_focal_spot_widens_as_an_independent_monte_carlo_says() {
    // A slow dish (f/25) and a fast one (rim angle about 45°).
    for (radius, diameter, sigma, screen) in [(20_000.0, 400.0, 1.0, 400.0), (1200.0, 1000.0, 3.0, 200.0)] {
        let r = report(&dish(radius, diameter, sigma, screen, "square"));
        let traced = rms_mm(&r);
        let mc = monte_carlo_rms(radius / 2.0, diameter, sigma * 1e-3, 200_000);
        assert!((traced / mc - 1.0).abs() < 0.02, "R {radius}, σ {sigma} mrad: traced RMS {traced} mm, Monte Carlo {mc} mm");
    }
}

#[test]
fn a_slow_dish_spreads_the_focus_by_twice_the_slope_error() {
    // Near normal incidence the spot is a circular Gaussian of 2σf per
    // axis: RMS radius 2√2·σf, and the share inside a circle of radius a is
    // 1 − exp(−a²/(2(2σf)²)) (Rayleigh distribution).
    let (radius, diameter, sigma) = (20_000.0, 400.0, 1.0);
    let f = radius / 2.0;
    let s = 2.0 * sigma * 1e-3 * f;
    let r = report(&dish(radius, diameter, sigma, 400.0, "square"));
    let want = 2f64.sqrt() * s;
    assert!((rms_mm(&r) / want - 1.0).abs() < 0.02, "RMS {} mm, closed form {want} mm", rms_mm(&r));
    for a in [10.0, 20.0, 40.0] {
        let r = report(&dish(radius, diameter, sigma, 2.0 * a, "circle"));
        let got = r["screens"][0]["flux"]["intercept"].as_f64().unwrap();
        let want = 1.0 - (-a * a / (2.0 * s * s)).exp();
        assert!((got - want).abs() < 0.01, "receiver radius {a} mm: intercept {got}, closed form {want}");
    }
}

#[test]
fn no_slope_error_reproduces_the_perfect_focus_bit_for_bit() {
    // σ = 0 written out, or left out: the same trace, bit for bit, and a
    // paraboloid still brings every ray to its focus (focal property of
    // the parabola).
    let lay = |sigma: f64| Scene::compile(&parse_layout(&dish(1200.0, 1000.0, sigma, 20.0, "circle")).unwrap());
    let (a, b) = (lay(0.0), lay(f64::NAN));
    let (ra, rb) = (trace(&a, TraceOptions::default()), trace(&b, TraceOptions::default()));
    assert_eq!(ra, rb);
    let r = serde_json::to_value(trace_report(&a, &ra)).unwrap();
    assert!(r["screens"][0]["by_source"][0]["max_radius_um"].as_f64().unwrap() < 1e-3);
}

#[test]
fn slope_errors_repeat_and_differ_between_mirrors() {
    let text = dish(1200.0, 1000.0, 2.0, 200.0, "square");
    let sc = Scene::compile(&parse_layout(&text).unwrap());
    let one = trace(&sc, TraceOptions { threads: Some(1), ..Default::default() });
    let two = trace(&sc, TraceOptions { threads: Some(2), ..Default::default() });
    assert_eq!(one, two, "seeded: the same draws whatever the threads");
    // Another mirror id draws other errors (its own seed) of the same size.
    let other = Scene::compile(&parse_layout(&text.replace("\"id\":\"dish\"", "\"id\":\"dish-b\"")).unwrap());
    let three = trace(&other, TraceOptions::default());
    assert_ne!(one.screens[0].u, three.screens[0].u);
    let rms = |s: &Scene, r: &catoptric::TraceResult| rms_mm(&serde_json::to_value(trace_report(s, r)).unwrap());
    assert!((rms(&sc, &one) / rms(&other, &three) - 1.0).abs() < 0.02);
}
