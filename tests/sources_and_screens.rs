//! Sources (power, angular distribution, out-of-plane tilt),
//! screens (shape, face, opacity, series) and determinism.

mod layout_support;
use catoptric::analysis::spot_stats;
use catoptric::geometry::Vec3;
use catoptric::trace::{trace_fan, Emitter};
use catoptric::{parse_layout, trace, TraceOptions};
use layout_support::*;
use serde_json::json;
use std::f64::consts::PI;

fn source_of(v: serde_json::Value) -> catoptric::layout::Source {
    parse_layout(&layout(&[], &[v])).unwrap().sources.remove(0)
}

/// Cube symmetry (common practice): the six faces of a cube subtend equal
/// solid angles, 4π/6 each, at its centre. An isotropic lamp (cone 180°)
/// at the centre of four faces (the ±y and ±z ones; screens turn only in
/// the layout plane) puts power_w/6 on each; the rest escapes along ±x.
/// Power is conserved: every launched watt is on a screen or escaped.
#[test]
fn isotropic_lamp_puts_a_sixth_of_its_power_on_each_cube_face() {
    let a = 100.0;
    let p = 60.0;
    let faces = [
        screen("py", [a, 0.0], -90.0, 2.0 * a, "square", true),
        screen("ny", [-a, 0.0], 90.0, 2.0 * a, "square", true),
        screen("pz", [0.0, a], 180.0, 2.0 * a, "square", true),
        screen("nz", [0.0, -a], 0.0, 2.0 * a, "square", true),
    ];
    let (_, res) = run(&layout(&faces, &[lamp("l", [0.0, 0.0], 30.0, 180.0, 60000, p)]));
    assert_eq!(res.power_by_source, vec![p]);
    let mut total = 0.0;
    for (i, h) in res.screens.iter().enumerate() {
        let w: f64 = h.weight.iter().sum();
        assert!(rel(w, p / 6.0) < 0.01, "face {i}: {w} W");
        total += w;
    }
    assert!(rel(total, 4.0 * p / 6.0) < 0.003, "{total}");
    assert_eq!(res.rays_launched, res.rays_escaped + res.rays_absorbed);
    let escaped = res.rays_escaped as f64 * p / res.rays_launched as f64;
    assert!(rel(total + escaped, p) < 1e-12, "power lost: {} W", p - total - escaped);
}

/// An isotropic lamp fills its cone uniformly in solid angle (common
/// practice): a disk of half-angle β on the axis of a cone of half-angle
/// α catches (1 − cos β)/(1 − cos α) of the power.
#[test]
fn lamp_power_follows_solid_angle() {
    let d = 500.0;
    let beta = 20.0f64.to_radians();
    let alpha = 60.0f64.to_radians();
    let s = screen("s", [0.0, d], 180.0, 2.0 * d * beta.tan(), "circle", true);
    let (_, res) = run(&layout(&[s], &[lamp("l", [0.0, 0.0], 0.0, 60.0, 40000, 10.0)]));
    let w: f64 = res.screens[0].weight.iter().sum();
    let want = 10.0 * (1.0 - beta.cos()) / (1.0 - alpha.cos());
    assert!(rel(w, want) < 0.01, "{w} vs {want}");
}

/// Beam power is irradiance × area of the launch disk (definition of
/// irradiance), whatever the pattern and tilt; each reflection multiplies
/// it by the mirror's reflectivity.
#[test]
fn beam_power_is_irradiance_times_area_and_reflectivity_scales_it() {
    for (pattern, tilt) in [("hex", 0.0), ("grid", 20.0), ("random", -35.0)] {
        let mut b = beam("b", [0.0, 0.0], 0.0, 100.0, 7000, pattern);
        b["irradiance_w_m2"] = json!(800.0);
        b["out_of_plane_deg"] = json!(tilt);
        let s = screen("s", [0.0, 200.0], 180.0, 2000.0, "square", true);
        let (_, res) = run(&layout(&[s], &[b]));
        let want = 800.0 * PI * 0.05f64.powi(2);
        assert!(rel(res.power_by_source[0], want) < 1e-14);
        let w: f64 = res.screens[0].weight.iter().sum();
        assert_eq!(res.screens[0].len() as u64, res.rays_launched, "{pattern}");
        assert!(rel(w, want) < 1e-12, "{pattern}: {w} vs {want}");
    }
    // Two flats at 45° fold the beam twice: power × ρ₁ρ₂.
    let mut m1 = mirror("m1", [0.0, 300.0], 135.0, None, 0.0, 200.0, 0.0, 0.0, None);
    m1["reflectivity"] = json!(0.9);
    let mut m2 = mirror("m2", [300.0, 300.0], 225.0, None, 0.0, 200.0, 0.0, 0.0, None);
    m2["reflectivity"] = json!(0.8);
    let s = screen("s", [300.0, 0.0], 0.0, 500.0, "square", true);
    let (_, res) = run(&layout(&[m1, m2, s], &[beam("b", [0.0, 0.0], 0.0, 100.0, 5000, "hex")]));
    let h = &res.screens[0];
    assert_eq!(h.len() as u64, res.rays_launched);
    let w: f64 = h.weight.iter().sum();
    assert!(rel(w, 0.72 * res.power_by_source[0]) < 1e-12, "{w}");
    // Path: 300 up, 300 across, 300 down.
    assert!(h.opl.iter().all(|&o| (o - 900.0).abs() < 1e-9));
}

/// The sun as a uniform disk of half-angle θs (docs/FORMATS.md §2): a uniform
/// disk has a fraction (θ/θs)² of its directions within θ, mean θ² of
/// θs²/2 and no direction beyond θs (geometry of the disk; common
/// practice).
#[test]
fn sun_directions_fill_a_uniform_disk() {
    for (dir, tilt) in [(0.0, 0.0), (123.0, 0.0), (-40.0, 30.0)] {
        let mut b = beam("sun", [10.0, -20.0], dir, 500.0, 40000, "hex");
        b["sun_half_angle_mrad"] = json!(4.65);
        b["out_of_plane_deg"] = json!(tilt);
        let em = Emitter::new(&source_of(b), 40000);
        // The central direction: in the plane at `dir`, turned out of it
        // toward +x by `tilt`.
        let (so, co) = f64::to_radians(tilt).sin_cos();
        let (sd, cd) = f64::to_radians(dir).sin_cos();
        let axis = Vec3::new(so, co * sd, co * cd);
        assert!((em.axis() - axis).norm() < 1e-15);
        let ts = 4.65e-3;
        let (mut inside, mut m2, mut tmax, mut mean) = (0usize, 0.0, 0.0f64, Vec3::zeros());
        let n = em.len();
        for i in 0..n {
            let d = em.ray(i).dir;
            assert!((d.norm() - 1.0).abs() < 1e-14);
            let t = d.cross(&axis).norm().atan2(d.dot(&axis));
            tmax = tmax.max(t);
            m2 += t * t;
            if t <= ts / 2f64.sqrt() {
                inside += 1;
            }
            mean += d;
        }
        let frac = inside as f64 / n as f64;
        assert!(tmax <= ts * (1.0 + 1e-9) && tmax > 0.99 * ts, "largest angle {tmax}");
        assert!((frac - 0.5).abs() < 0.01, "fraction inside θs/√2: {frac}");
        assert!(rel(m2 / n as f64, ts * ts / 2.0) < 0.01);
        let m = mean / n as f64;
        assert!((m.normalize() - axis).norm() < 0.01 * ts, "mean direction off by {}", (m.normalize() - axis).norm());
    }
}

/// The sun's image at the focus of a slow paraboloid is a disk of radius
/// f·θs with a uniform fill, so RMS radius f·θs/√2 (common practice: image
/// size = focal length × angular size).
#[test]
fn sun_image_at_a_slow_paraboloid_is_f_times_theta() {
    let f = 2000.0;
    // The beam overfills the mirror so that every direction lights all of it.
    let mut b = beam("sun", [0.0, 2100.0], 180.0, 140.0, 40000, "random");
    b["sun_half_angle_mrad"] = json!(4.65);
    let m = mirror("m", [0.0, 0.0], 0.0, Some(2.0 * f), -1.0, 100.0, 0.0, 0.0, None);
    let s = screen("s", [0.0, f], 180.0, 60.0, "circle", false);
    let (_, res) = run(&layout(&[m, s], &[b]));
    let st = spot_stats(&res.screens[0], None);
    let r = f * 4.65e-3;
    // f/20: the rim zone sees the focus from f(1 + 1/1600): 0.1 % larger.
    assert!(rel(st.max_radius, r) < 0.005, "{} vs {r}", st.max_radius);
    assert!(rel(st.rms_radius, r / 2f64.sqrt()) < 0.01, "{} vs {}", st.rms_radius, r / 2f64.sqrt());
}

/// A beam tilted out of the layout plane by α onto a paraboloid (f/5,
/// stop at the mirror): the chief ray through the vertex lands at f·tan α
/// on the focal plane (reflection at the vertex, exact), and the spot is
/// the third-order comatic figure: sagittal coma S = θ f/(16 N²), the
/// figure spans 2S across the field and 3S along it, outward from the
/// axis, with its centroid S outward of the chief ray (Schroeder,
/// Astronomical Optics, 2nd ed., ch. 5, angular coma of a paraboloid
/// θ/(16F²) sagittal, three times that tangential — value from memory;
/// the comatic circle geometry is standard third-order theory). Coma grows
/// linearly with the field angle.
#[test]
fn out_of_plane_beam_on_a_paraboloid_shows_first_order_image_and_third_order_coma() {
    let (f, d) = (1000.0f64, 200.0);
    let n = f / d;
    let mut prev_s = None;
    for alpha_deg in [0.1f64, 0.2] {
        let alpha = alpha_deg.to_radians();
        // The beam overfills the mirror, which is the stop.
        let mut b = beam("star", [0.0, 1500.0], 180.0, d + 20.0, 40000, "hex");
        b["out_of_plane_deg"] = json!(alpha_deg);
        let m = mirror("m", [0.0, 0.0], 0.0, Some(2.0 * f), -1.0, d, 0.0, 0.0, None);
        let s = screen("s", [0.0, f], 180.0, 100.0, "square", false);
        let (_, res) = run(&layout(&[m, s], &[b]));
        let h = &res.screens[0];
        assert!(h.len() > 30000);
        let u0 = f * alpha.tan();
        let sc = alpha * f / (16.0 * n * n);
        let st = spot_stats(h, None);
        let (umin, umax) = h.u.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &u| (a.min(u), b.max(u)));
        let (vmin, vmax) = h.v.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| (a.min(v), b.max(v)));
        assert!(rel(st.centroid[0], u0) < 0.01, "centroid {} vs f tan α {u0}", st.centroid[0]);
        assert!(st.centroid[1].abs() < 1e-9, "stays symmetric about the layout plane");
        assert!(rel(st.centroid[0] - u0, sc) < 0.05, "centroid offset {} vs S {sc}", st.centroid[0] - u0);
        assert!(umin >= u0 - 0.05 * sc, "flare points outward: umin {umin} vs {u0}");
        assert!(rel(umax - u0, 3.0 * sc) < 0.05, "tangential {} vs 3S {}", umax - u0, 3.0 * sc);
        assert!(rel(vmax - vmin, 2.0 * sc) < 0.05, "sagittal {} vs 2S {}", vmax - vmin, 2.0 * sc);
        if let Some(p) = prev_s {
            let measured: f64 = vmax - vmin;
            assert!(rel(measured / p, 2.0) < 0.02, "coma linear in the field angle");
        }
        prev_s = Some(vmax - vmin);
    }
}

/// Screen behaviour (docs/FORMATS.md §1, §2): a square of side s catches the part
/// of a uniform beam inside the square, a circle of diameter s the part
/// inside the circle (area ratios, common practice); hits arriving on the
/// back face are not recorded; a transparent screen lets rays on, an opaque
/// one stops them from either side.
#[test]
fn screens_shape_face_and_opacity() {
    let b = beam("b", [0.0, 0.0], 0.0, 100.0, 40000, "random");
    for (shape, want) in [("square", 2500.0 / (PI * 2500.0)), ("circle", 0.25)] {
        let s = screen("s", [0.0, 100.0], 180.0, 50.0, shape, false);
        let (_, res) = run(&layout(&[s], std::slice::from_ref(&b)));
        let frac = res.screens[0].len() as f64 / res.rays_launched as f64;
        assert!(rel(frac, want) < 0.01, "{shape}: {frac} vs {want}");
    }
    // Three transparent screens in series, the middle one facing away:
    // first and last record every ray, the middle none; OPL grows by the
    // spacing.
    let scr = [
        screen("s1", [0.0, 100.0], 180.0, 200.0, "square", false),
        screen("s2", [0.0, 250.0], 0.0, 200.0, "square", false),
        screen("s3", [0.0, 400.0], 180.0, 200.0, "square", false),
    ];
    let (_, res) = run(&layout(&scr, std::slice::from_ref(&b)));
    let n = res.rays_launched as usize;
    assert_eq!(res.screens[0].len(), n);
    assert_eq!(res.screens[1].len(), 0, "back face records nothing");
    assert_eq!(res.screens[2].len(), n);
    assert_eq!(res.rays_escaped, res.rays_launched);
    for i in 0..n {
        assert!((res.screens[2].opl[i] - res.screens[0].opl[i] - 300.0).abs() < 1e-9);
        assert!((res.screens[0].dw[i] + 1.0).abs() < 1e-15);
    }
    // The middle one opaque: it stops the beam from behind; nothing reaches c.
    let mut scr2 = scr.to_vec();
    scr2[1]["opaque"] = json!(true);
    let (_, res) = run(&layout(&scr2, std::slice::from_ref(&b)));
    assert_eq!(res.screens[0].len(), n);
    assert_eq!(res.screens[1].len(), 0);
    assert_eq!(res.screens[2].len(), 0);
    assert_eq!(res.rays_absorbed, res.rays_launched);
    // A screen tilted 60° to the beam: the beam's footprint stretches by
    // 1/cos 60° along v and the arriving direction has dw = −cos 60°.
    let s = screen("s", [0.0, 100.0], 180.0 + 60.0, 400.0, "square", false);
    let (_, res) = run(&layout(&[s], &[b]));
    let h = &res.screens[0];
    assert_eq!(h.len() as u64, res.rays_launched);
    let vmax = h.v.iter().fold(0.0f64, |m, &v| m.max(v.abs()));
    assert!(rel(vmax, 50.0 / 60f64.to_radians().cos()) < 0.01, "{vmax}");
    assert!(h.dw.iter().all(|&w| (w + 0.5).abs() < 1e-12));
}

/// A lamp at the centre of curvature of a sphere, on a transparent screen
/// facing the mirror: the lamp's own rays leave the screen plane at zero
/// distance and are not recorded; the sphere sends them back to the centre
/// (a sphere images its centre onto itself, elementary geometry) where the
/// screen records them at (0, 0) after a path of 2R.
#[test]
fn lamp_on_a_screen_records_only_the_returning_light() {
    let r = 500.0;
    let m = mirror("m", [0.0, 0.0], 0.0, Some(r), 0.0, 200.0, 0.0, 0.0, None);
    let s = screen("s", [0.0, r], 180.0, 10.0, "square", false);
    let (_, res) = run(&layout(&[m, s], &[lamp("l", [0.0, r], 180.0, 10.0, 5000, 1.0)]));
    let h = &res.screens[0];
    assert_eq!(h.len() as u64, res.rays_launched, "every ray returns once");
    for i in 0..h.len() {
        assert!(h.u[i].hypot(h.v[i]) < 1e-9);
        assert!((h.opl[i] - 2.0 * r).abs() < 1e-9);
    }
}

/// Determinism (docs/FORMATS.md §4): two traces of the same layout, and two
/// fans, are bit-identical within one process (a cloned scene, so no state
/// is shared). Across builds and runs, the stored reports of
/// tests/golden_reports.rs catch a change.
#[test]
fn traces_repeat_bit_for_bit() {
    let mut sun = beam("sun", [0.0, 1500.0], 180.0, 300.0, 9000, "random");
    sun["sun_half_angle_mrad"] = json!(4.65);
    let text = layout(
        &[
            mirror("m", [0.0, 0.0], 0.0, Some(1500.0), -0.7, 300.0, 0.0, 20.0, None),
            screen("s", [0.0, 700.0], 180.0, 50.0, "circle", false),
        ],
        &[sun, lamp("l", [0.0, 800.0], 180.0, 20.0, 5000, 3.0), beam("b", [0.0, 900.0], 181.0, 250.0, 6000, "hex")],
    );
    let scene = scene(&text);
    let a = trace(&scene, TraceOptions::default());
    let b = trace(&scene.clone(), TraceOptions::default());
    let bits = |r: &catoptric::TraceResult| -> Vec<u64> {
        r.screens.iter().flat_map(|h| h.u.iter().chain(&h.v).chain(&h.opl).chain(&h.dw).map(|x| x.to_bits())).collect()
    };
    assert_eq!(bits(&a), bits(&b));
    assert_eq!(a, b);
    assert!(a.screens[0].len() > 10000);
    assert_eq!(trace_fan(&scene, 41, None), trace_fan(&scene, 41, None));
}
