//! Working f-number, Airy radius, wavefront error and the Strehl estimate.

mod analysis_support;
use analysis_support::*;
use catoptric::analysis::{airy_radius, f_number, focus_fit, strehl_from_rms, trace_report, wavefront, wavefront_map};

#[test]
fn airy_radius_for_550_nm_at_f8() {
    // Born & Wolf, Principles of Optics, 7th ed. (value
    // from memory): first zero 1.2197 λN → 5.367 µm at λ = 550 nm, N = 8.
    // We use the trade's 1.22, 0.03 % larger.
    let r_um = airy_radius(550e-6, 8.0) * 1e3;
    assert!(rel(r_um, 5.367) < 5e-4, "{r_um}");
}

#[test]
fn strehl_of_point_eight_needs_rms_of_about_lambda_over_13_3() {
    // Mahajan, JOSA 72, 1258 (1982), extended Maréchal exp(−(2πσ)²):
    // S = 0.8 ⇔ σ ≈ λ/13.3.
    let s = strehl_from_rms(1.0 / 13.3);
    assert!(rel(s, 0.8) < 1e-3, "{s}");
    // Maréchal's criterion λ/14 then reads 0.82 in this form.
    assert!(rel(strehl_from_rms(1.0 / 14.0), 0.8176) < 1e-3);
}

fn paraboloid_f5() -> String {
    layout(
        &[mirror("m", 1000.0, 2000.0, -1.0, 200.0, None), screen("s", 0.0, 0.0, 20.0, "square", false)],
        &[beam("star", 0.0, 500.0, 200.0, 20000, "random", 0.0)],
    )
}

#[test]
fn working_f_number_of_an_f5_paraboloid() {
    // Image-space NA = sin θ (common practice). A paraboloid of focal
    // length f sends the ray at height h to its focus from a distance
    // f + h²/(4f) (focus–directrix property of the parabola), so the
    // marginal ray of a 200 mm f/5 arrives at sin θ = 100 / 1002.5 and
    // N = 1/(2 sin θ) = 5.0125. The sampled rim falls a little short of
    // 100 mm, so allow 0.3 %.
    let (_, res) = run(&paraboloid_f5());
    let n = f_number(&res.screens[0], Some(0)).unwrap();
    assert!(rel(n, 1002.5 / 200.0) < 3e-3, "{n}");
}

#[test]
fn paraboloid_on_axis_is_perfect() {
    // Parabola focal property (any analytic-geometry text): a plane wave becomes a
    // perfect spherical wave, so P-V ≈ 0 and Strehl ≈ 1.
    let (scene, res) = run(&paraboloid_f5());
    let r = trace_report(&scene, &res);
    let b = &r.screens[0].by_source[0];
    assert!(b.wavefront_pv_waves.unwrap() < 1e-6, "{:?}", b.wavefront_pv_waves);
    assert!(b.wavefront_rms_waves.unwrap() < 1e-6);
    assert!(rel(b.strehl_estimate.unwrap(), 1.0) < 1e-9);
    assert_eq!(b.diffraction_limited, Some(true));
}

#[test]
fn slow_sphere_wavefront_matches_third_order_spherical_aberration() {
    // Third-order theory (value re-derived from the ρ⁴ term of the circle's series): a sphere's
    // wavefront departs from the paraboloid's by twice the surface
    // difference ρ⁴/(8R³), W040 = D⁴/(512 f³) = D/(512 N³) at the
    // paraxial focus; with defocus removed by least squares the residual
    // W040(ρ⁴ − ρ² + 1/6) has P-V W040/4 and RMS W040/(6√5).
    // f/8, D = 150: W040 = 5.722e-4 mm = 1.0404 waves at 550 nm.
    let (d, n, lambda) = (150.0f64, 8.0f64, 550e-6f64);
    let w040 = d / (512.0 * n.powi(3)) / lambda;
    let text = layout(
        &[mirror("m", 2000.0, 2400.0, 0.0, d, None), screen("s", 0.0, 800.0, 10.0, "square", false)],
        &[beam("star", 0.0, 1000.0, d, 40000, "hex", 0.0)],
    );
    let (scene, res) = run(&text);
    let r = trace_report(&scene, &res);
    let b = &r.screens[0].by_source[0];
    let (pv, rms) = (b.wavefront_pv_waves.unwrap(), b.wavefront_rms_waves.unwrap());
    assert!(rel(pv, w040 / 4.0) < 0.03, "P-V {pv} vs {}", w040 / 4.0);
    assert!(rel(rms, w040 / (6.0 * 5f64.sqrt())) < 0.03, "RMS {rms} vs {}", w040 / (6.0 * 5f64.sqrt()));
    // The Strehl key is exp(−(2πσ)²) of the reported RMS (Mahajan 1982).
    assert!(rel(b.strehl_estimate.unwrap(), strehl_from_rms(rms)) < 1e-12);
    // RMS 0.0775 waves is just over λ/14: not diffraction limited (Maréchal).
    assert_eq!(b.diffraction_limited, Some(false));
    // The result does not depend on the starting reference point (tilt and
    // defocus are fitted): start 0.5 mm off.
    let h = &res.screens[0];
    let p = focus_fit(h, Some(0)).unwrap().best_point().unwrap();
    let a = wavefront(h, Some(0), p, lambda).unwrap();
    let c = wavefront(h, Some(0), [p[0] + 0.5, p[1] - 0.3, p[2] + 0.5], lambda).unwrap();
    assert!(rel(c.rms_waves, a.rms_waves) < 1e-4, "{} vs {}", c.rms_waves, a.rms_waves);
    // The best diffraction focus sits half-way to the marginal focus for
    // third-order spherical aberration (W020 = −W040; common practice):
    // h²/(8R) past the paraxial focus.
    assert!(rel(a.best_point[2], 75.0 * 75.0 / (8.0 * 2400.0)) < 0.03, "{:?}", a.best_point);
    let map = wavefront_map(h, Some(0), p, lambda).unwrap();
    let (lo, hi) = map.opd_waves.iter().fold((f64::MAX, f64::MIN), |(l, u), &x| (l.min(x), u.max(x)));
    assert!(rel(hi - lo, pv) < 1e-9);
    // The map's pupil is the unit disk (normalised by the largest radius),
    // and each point carries the residual of its own pupil radius. Sag is
    // measured out of the reflective face, toward the arriving light
    // (docs/FORMATS.md §1), and the sphere's exceeds the paraboloid's by
    // ρ⁴/(8R³): its rim meets the light sooner, so those rays' paths are
    // shorter by twice that, W = −W040 ρ⁴ (W the path, as in
    // src/analysis/wavefront.rs), and −W040(ρ⁴ − ρ² + 1/6) once piston and
    // defocus are removed (the least-squares fit of {1, ρ²} over the
    // disk). The pupil coordinates
    // are direction cosines, ∝ sin 2θ rather than the mirror height:
    // ~0.6 % apart at the rim, within the 3 % allowed.
    let rmax = map.pupil_x.iter().zip(&map.pupil_y).map(|(x, y)| x.hypot(*y)).fold(0.0, f64::max);
    assert!((rmax - 1.0).abs() < 1e-12, "pupil radius {rmax}");
    for k in 0..map.opd_waves.len() {
        let r2 = map.pupil_x[k].powi(2) + map.pupil_y[k].powi(2);
        let want = -w040 * (r2 * r2 - r2 + 1.0 / 6.0);
        assert!((map.opd_waves[k] - want).abs() < 0.03 * w040, "hit {k}, ρ² = {r2}: {} vs {want} waves", map.opd_waves[k]);
    }
    // The map keeps each ray's place: an outer ray crosses the axis before
    // the paraxial focus (undercorrected spherical aberration of a concave
    // sphere), so its spot position lies along its pupil position, one
    // fixed orientation for all rays (which way up the map is drawn is a
    // convention of the page, not checked here).
    let outer: Vec<usize> = (0..h.len()).filter(|&k| map.pupil_x[k].abs() > 0.3 && map.pupil_y[k].abs() > 0.3).collect();
    assert!(outer.len() > 1000);
    let (sx, sy) = ((map.pupil_x[outer[0]] * h.u[outer[0]]).signum(), (map.pupil_y[outer[0]] * h.v[outer[0]]).signum());
    for &k in &outer {
        assert_eq!((map.pupil_x[k] * h.u[k]).signum(), sx, "hit {k}: pupil x and u");
        assert_eq!((map.pupil_y[k] * h.v[k]).signum(), sy, "hit {k}: pupil y and v");
    }
}

#[test]
fn every_wavelength_dependent_figure_follows_the_layout_wavelength() {
    // The f/8 sphere above traced at 550, 632.8 (He-Ne) and 1064 nm
    // (Nd:YAG). The rays do not depend on λ; the figures do:
    // - Airy radius 1.22 λN (Born & Wolf, Principles of Optics, 7th ed.,
    //   value from memory; the trade's 1.22), with N = 1/(2 sin 2θ) for the
    //   marginal ray, sin θ = 75/2400 (law of reflection at a sphere);
    // - wavefront in waves = optical path difference / λ, so it scales as
    //   1/λ, and matches third-order spherical aberration at each λ
    //   (RMS W040/(6√5), W040 = D/(512 N³), as above);
    // - Strehl exp(−(2πσ)²) of that σ (Mahajan, JOSA 72, 1258 (1982));
    // - the Maréchal verdict σ ≤ λ/14: the RMS is 0.0775 waves at 550 nm
    //   (not diffraction limited) but 0.0674 at 632.8 nm and 0.0401 at
    //   1064 nm (diffraction limited).
    let (d, n) = (150.0f64, 8.0f64);
    let base = layout(
        &[mirror("m", 2000.0, 2400.0, 0.0, d, None), screen("s", 0.0, 800.0, 10.0, "square", false)],
        &[beam("star", 0.0, 1000.0, d, 40000, "hex", 0.0)],
    );
    let th = (75.0f64 / 2400.0).asin();
    let n_marginal = 1.0 / (2.0 * (2.0 * th).sin());
    let mut first: Option<(f64, f64, f64, f64)> = None;
    for (nm, limited) in [(550.0, false), (632.8, true), (1064.0, true)] {
        let text = base.replace("\"wavelength_nm\": 550,", &format!("\"wavelength_nm\": {nm},"));
        assert!(text.contains(&format!("\"wavelength_nm\": {nm},")));
        let (scene, res) = run(&text);
        let r = trace_report(&scene, &res);
        let b = &r.screens[0].by_source[0];
        let lambda_mm = nm * 1e-6;
        let f_num = b.f_number.unwrap();
        assert!(rel(f_num, n_marginal) < 5e-3, "{nm} nm: N {f_num} vs {n_marginal}");
        let airy = b.airy_radius_um.unwrap();
        assert!(rel(airy, 1.22 * lambda_mm * f_num * 1e3) < 1e-12, "{nm} nm: Airy {airy} µm");
        assert!(rel(airy, 1.22 * lambda_mm * n_marginal * 1e3) < 5e-3, "{nm} nm: Airy {airy} µm");
        let rms = b.wavefront_rms_waves.unwrap();
        let pv = b.wavefront_pv_waves.unwrap();
        let w040 = d / (512.0 * n.powi(3)) / lambda_mm;
        assert!(rel(rms, w040 / (6.0 * 5f64.sqrt())) < 0.03, "{nm} nm: RMS {rms} waves");
        assert!(rel(pv, w040 / 4.0) < 0.03, "{nm} nm: P-V {pv} waves");
        assert!(rel(b.strehl_estimate.unwrap(), (-(std::f64::consts::TAU * rms).powi(2)).exp()) < 1e-12);
        assert_eq!(b.diffraction_limited, Some(limited), "{nm} nm: RMS {rms} waves");
        // Geometric figures stay put; the wavefront in mm is the same.
        let (ee50, ee80) = (b.ee50_radius_um.unwrap(), b.ee80_radius_um.unwrap());
        match first {
            None => first = Some((rms * nm, pv * nm, ee50, ee80)),
            Some((rms_nm, pv_nm, e50, e80)) => {
                assert!(rel(rms * nm, rms_nm) < 1e-9 && rel(pv * nm, pv_nm) < 1e-9, "{nm} nm: waves must scale as 1/λ");
                assert_eq!((ee50, ee80), (e50, e80));
            }
        }
    }
}

#[test]
fn solar_disk_and_few_hits_give_null_keys() {
    // By definition (docs/FORMATS.md §3): an extended source has no single
    // wavefront; fewer than 3 hits carry no spread.
    let text = layout(
        &[mirror("m", 1000.0, 2000.0, -1.0, 200.0, None), screen("s", 0.0, 0.0, 40.0, "square", false)],
        &[beam("sun", 0.0, 500.0, 200.0, 3000, "hex", 4.65), beam("one", 0.0, 500.0, 1.0, 1, "hex", 0.0)],
    );
    let (scene, res) = run(&text);
    let r = trace_report(&scene, &res);
    let sun = &r.screens[0].by_source[0];
    assert!(sun.wavefront_rms_waves.is_none() && sun.strehl_estimate.is_none() && sun.diffraction_limited.is_none());
    assert!(sun.f_number.is_some() && sun.ee80_radius_um.is_some());
    let one = &r.screens[0].by_source[1];
    assert_eq!(one.hits, 1);
    assert!(one.best_focus_shift_mm.is_none() && one.f_number.is_none() && one.ee50_radius_um.is_none());
    let json = serde_json::to_value(&r).unwrap();
    assert!(json["screens"][0]["by_source"][1]["strehl_estimate"].is_null());
}

#[test]
fn an_out_of_plane_star_maps_onto_a_centred_pupil() {
    // Pupil coordinates are the direction cosines across the mean
    // direction, scaled so the largest radius is 1 (src/analysis/wavefront.rs,
    // WavefrontMap), so a filled circular aperture maps onto the unit disk
    // centred on 0 (common practice) whichever way the light arrives. A star
    // 1° out of the layout plane on the f/5 paraboloid: its coma makes a
    // real map, and the mean direction leaves the layout plane.
    let text = paraboloid_f5().replace("\"direction_deg\": 0,", "\"direction_deg\": 0, \"out_of_plane_deg\": 1,");
    assert!(text.contains("out_of_plane_deg"));
    let text = text.replace("\"size\": 20,", "\"size\": 60,");
    let (_, res) = run(&text);
    let h = &res.screens[0];
    let p = focus_fit(h, Some(0)).unwrap().best_point().unwrap();
    let map = wavefront_map(h, Some(0), p, 550e-6).unwrap();
    let n = map.pupil_x.len() as f64;
    assert!(n > 15000.0, "{n} hits");
    let (mx, my) = (map.pupil_x.iter().sum::<f64>() / n, map.pupil_y.iter().sum::<f64>() / n);
    assert!(mx.abs() < 0.02 && my.abs() < 0.02, "pupil centre ({mx}, {my})");
    let rmax = map.pupil_x.iter().zip(&map.pupil_y).map(|(x, y)| x.hypot(*y)).fold(0.0, f64::max);
    assert!((rmax - 1.0).abs() < 1e-12, "pupil radius {rmax}");
}

#[test]
fn five_hits_are_enough_for_a_wavefront_four_are_not() {
    // The fit removes four terms (piston, two tilts, defocus), so a
    // residual needs at least five rays (common practice for least squares;
    // the report's documented minimum). Five rays of a slow sphere.
    let text = layout(
        &[mirror("m", 2000.0, 2400.0, 0.0, 150.0, None), screen("s", 0.0, 800.0, 10.0, "square", false)],
        &[beam("star", 0.0, 1000.0, 150.0, 5, "random", 0.0)],
    );
    let (_, res) = run(&text);
    let h = &res.screens[0];
    assert_eq!(h.len(), 5, "five rays on the screen");
    let p = [0.0, 0.0, 0.0];
    let w = wavefront(h, Some(0), p, 550e-6).expect("five hits give a wavefront");
    assert!(w.rms_waves.is_finite() && w.pv_waves >= 0.0);
    let mut four = h.clone();
    for col in [&mut four.u, &mut four.v, &mut four.du, &mut four.dv, &mut four.dw, &mut four.opl, &mut four.weight] {
        col.truncate(4);
    }
    four.source.truncate(4);
    four.first.truncate(4);
    assert!(wavefront(&four, Some(0), p, 550e-6).is_none());
}

#[test]
fn a_parabolic_trough_has_a_perfect_cylindrical_wavefront() {
    // The parabola's focal property (any analytic-geometry text) holds in
    // each section of a trough: a plane wave along the axis reflects into
    // rays through the focal line, all with the same path, so the
    // wavefront error is zero. The rays keep no component along the
    // trough, so one pupil direction has no spread at all: the fit must
    // drop that column, not fail.
    let text = layout(
        &[mirror("m", 1000.0, 2000.0, -1.0, 200.0, Some(150.0)), screen("s", 0.0, 0.0, 200.0, "square", false)],
        &[beam("star", 0.0, 500.0, 120.0, 5000, "hex", 0.0)],
    );
    let (scene, res) = run(&text);
    let b = &trace_report(&scene, &res).screens[0].by_source[0];
    assert!(b.hits > 4000, "{} hits", b.hits);
    let (pv, rms) = (b.wavefront_pv_waves.expect("a wavefront"), b.wavefront_rms_waves.expect("a wavefront"));
    assert!(pv < 1e-6 && rms < 1e-6, "P-V {pv}, RMS {rms} waves");
}

#[test]
fn a_slow_beam_has_its_defocus_removed_too() {
    // Across an f/50 pupil the defocus term (the cosine of the ray angle)
    // varies a hundred thousand times less than the tilts, yet a defocused
    // screen must still see the paraboloid's perfect spherical wave
    // (focal property of the parabola): the fit's cut-off for dropping a
    // term is relative to each term's own spread. A 40 mm f/50 paraboloid,
    // the wavefront taken about a point 20 mm short of the focus (the fit
    // moves it there) and about one 20 mm beyond.
    let text = layout(
        &[mirror("m", 2000.0, 4000.0, -1.0, 40.0, None), screen("s", 0.0, 20.0, 40.0, "square", false)],
        &[beam("star", 0.0, 1000.0, 40.0, 5000, "hex", 0.0)],
    );
    let (_, res) = run(&text);
    let h = &res.screens[0];
    assert!(h.len() > 4000, "{} hits", h.len());
    for z in [0.0, -40.0] {
        let w = wavefront(h, Some(0), [0.0, 0.0, z], 550e-6).expect("a wavefront");
        assert!(w.rms_waves < 1e-6, "reference at {z}: RMS {} waves", w.rms_waves);
        // The best reference point is the focus, 20 mm behind the screen.
        assert!((w.best_point[2] + 20.0).abs() < 1e-6, "reference at {z}: {:?}", w.best_point);
    }
}
