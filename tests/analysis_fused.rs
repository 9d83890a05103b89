//! The report's figures come from two fused passes over the hits; each
//! must equal the figure of the separate analysis function (spot, best
//! focus, f-number, wavefront, encircled energy) on every preset. Common
//! practice for a fused fast path: the plain functions are its oracle.

mod layout_support;
use catoptric::analysis::{
    airy_radius, encircled_energy, f_number, focus_fit, spot_stats, trace_report, wavefront,
};
use catoptric::layout::Source;
use catoptric::trace::{trace, TraceOptions};
use layout_support::*;

fn close(a: Option<f64>, b: Option<f64>, what: &str) {
    match (a, b) {
        (Some(x), Some(y)) => assert!((x - y).abs() <= 1e-9 * (1.0 + y.abs()), "{what}: {x} vs {y}"),
        (x, y) => assert_eq!(x.is_some(), y.is_some(), "{what}: {x:?} vs {y:?}"),
    }
}

/// Checks every figure of the report against the separate functions;
/// returns the number of (screen, source) pairs checked.
fn check_report(sc: &catoptric::Scene, res: &catoptric::TraceResult, label: &str) -> usize {
    let report = trace_report(sc, res);
    let mut checked = 0;
    for (k, screen) in report.screens.iter().enumerate() {
        let h = &res.screens[k];
        for r in &screen.by_source {
            let si = sc.sources.iter().position(|s| s.id() == r.source).unwrap();
            let src = Some(si as u32);
            let what = format!("{label} / {} / {}", screen.id, r.source);
            let st = spot_stats(h, src);
            close(Some(r.rms_radius_um), Some(st.rms_radius * 1e3), &format!("{what}: rms"));
            close(Some(r.max_radius_um), Some(st.max_radius * 1e3), &format!("{what}: max"));
            close(Some(r.centroid_mm[0]), Some(st.centroid[0]), &format!("{what}: centroid"));
            let fit = focus_fit(h, src);
            close(r.best_focus_shift_mm, fit.and_then(|f| f.best_shift()), &format!("{what}: best focus"));
            let n = f_number(h, src);
            close(r.f_number, n, &format!("{what}: f-number"));
            close(r.airy_radius_um, n.map(|n| airy_radius(sc.wavelength_mm, n) * 1e3), &format!("{what}: airy"));
            let extended = matches!(&sc.sources[si], Source::Beam(b) if b.sun_half_angle_mrad > 0.0);
            let reference = fit.and_then(|f| f.best_point()).unwrap_or([st.centroid[0], st.centroid[1], 0.0]);
            let wf = if extended { None } else { wavefront(h, src, reference, sc.wavelength_mm) };
            close(r.wavefront_rms_waves, wf.map(|w| w.rms_waves), &format!("{what}: wavefront rms"));
            close(r.wavefront_pv_waves, wf.map(|w| w.pv_waves), &format!("{what}: wavefront pv"));
            let ee = encircled_energy(h, src).filter(|_| st.hits >= 3);
            close(r.ee80_radius_um, ee.as_ref().and_then(|e| e.radius_for(0.8)).map(|x| x * 1e3), &format!("{what}: ee80"));
            checked += 1;
        }
    }
    checked
}

#[test]
fn report_equals_the_separate_analyses_on_every_preset() {
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/www/presets");
    let mut checked = 0;
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_none_or(|x| x != "json") || p.ends_with("index.json") {
            continue;
        }
        let sc = scene(&std::fs::read_to_string(&p).unwrap());
        let res = trace(&sc, TraceOptions { rays: Some(4000), ..Default::default() });
        checked += check_report(&sc, &res, &p.display().to_string());
    }
    assert!(checked >= 8, "only {checked} (screen, source) pairs checked");
}

#[test]
fn report_equals_the_separate_analyses_without_symmetry_across_the_section() {
    // Every preset is symmetric about the drawing's plane, so across it
    // (the pupil's second direction) every odd sum vanishes whatever its
    // weight. Random pupil points on a tilted beam and a lamp's random
    // cone break that symmetry: each of the fit's sums then shows.
    let text = layout(
        &[
            mirror("m", [0.0, 800.0], 180.0, Some(1600.0), -1.0, 200.0, 0.0, 0.0, None),
            screen("s", [0.0, 0.0], 0.0, 60.0, "square", false),
        ],
        &[beam("b", [0.0, 400.0], 0.5, 180.0, 3000, "random"), lamp("l", [3.0, -800.0], 0.0, 3.5, 3000, 1.0)],
    );
    let sc = scene(&text);
    let res = trace(&sc, TraceOptions::default());
    assert_eq!(check_report(&sc, &res, "asymmetric"), 2);
    // Hit counts that leave 1 to 3 hits past the last whole group of four
    // (the passes' scalar tails; 32,769 leaves one hit in a chunk of its
    // own), and too few hits for a cone or a fit.
    for rays in [2, 3, 5, 6, 7, 9, 257, 258, 259, 32_769] {
        let res = trace(&sc, TraceOptions { rays: Some(rays), ..Default::default() });
        let beam_hits = res.screens[0].source.iter().filter(|&&s| s == 0).count();
        assert_eq!(beam_hits, rays, "every ray of the beam arrives");
        assert_eq!(check_report(&sc, &res, &format!("{rays} rays")), 2);
    }
}

/// Every figure and curve of `analyse_all` on a pool of `threads` threads.
fn analyses_on(threads: usize, sc: &catoptric::Scene, res: &catoptric::TraceResult) -> String {
    let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
    let a = pool.install(|| catoptric::analysis::analyse_all(sc, res));
    // Debug output prints every f64 exactly (shortest round trip).
    format!("{:?} {:?} {:?}", a.report, a.curves, a.flux_maps)
}

#[test]
fn figures_over_many_chunks_are_the_same_on_any_number_of_threads() {
    // Common practice for a parallel reduction: partial sums merged in a
    // fixed order give bit-identical figures whatever the thread count.
    // 150,000 rays span several of the passes' chunks.
    for name in ["paraboloid-f5.json", "cassegrain.json"] {
        let path = format!("{}/www/presets/{name}", env!("CARGO_MANIFEST_DIR"));
        let sc = scene(&std::fs::read_to_string(&path).unwrap());
        let res = trace(&sc, TraceOptions { rays: Some(150_000), ..Default::default() });
        assert!(res.screens.iter().map(|s| s.len()).sum::<usize>() > 100_000, "{name}: too few hits to span chunks");
        let one = analyses_on(1, &sc, &res);
        for threads in [2, 3] {
            assert!(one == analyses_on(threads, &sc, &res), "{name}: {threads} threads differ from one");
        }
        // And the many-chunk figures still equal the separate functions.
        let report = trace_report(&sc, &res);
        let r = &report.screens[0].by_source[0];
        let h = &res.screens[0];
        let st = spot_stats(h, Some(0));
        close(Some(r.rms_radius_um), Some(st.rms_radius * 1e3), &format!("{name}: rms"));
        let ee = encircled_energy(h, Some(0));
        close(r.ee50_radius_um, ee.as_ref().and_then(|e| e.radius_for(0.5)).map(|x| x * 1e3), &format!("{name}: ee50"));
        close(r.f_number, f_number(h, Some(0)), &format!("{name}: f-number"));
    }
}
