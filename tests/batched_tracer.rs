//! The batched, multi-threaded tracer against the scalar reference tracer
//! (`trace_reference`, one ray at a time): same fates, same hits, bit for
//! bit, on the presets, the benchmark scenes and random valid layouts;
//! identical results whatever the thread count; slices of a trace merge
//! into exactly the whole trace; a result traced into twice holds only the
//! second trace. Common practice for an optimised kernel: keep the simple
//! version as the oracle.

mod layout_support;
use catoptric::bench_scenes::scenes;
use catoptric::trace::{merge_parts, Kernel, trace_into, trace_part, trace_reference, TraceOptions, TraceResult};
use catoptric::{parse_layout, trace, Scene};
use layout_support::*;
use serde_json::json;

fn opts(rays: Option<usize>, threads: usize) -> TraceOptions {
    TraceOptions { rays, threads: Some(threads), ..Default::default() }
}

/// Bit-for-bit equality of two results, with a message naming the first
/// difference.
fn same(a: &TraceResult, b: &TraceResult, what: &str) {
    assert_eq!(
        (a.rays_launched, a.rays_escaped, a.rays_absorbed, a.surface_hits),
        (b.rays_launched, b.rays_escaped, b.rays_absorbed, b.surface_hits),
        "{what}: counters"
    );
    assert_eq!(a.launched_by_source, b.launched_by_source, "{what}");
    assert_eq!(a.power_by_source, b.power_by_source, "{what}");
    assert_eq!(a.screens.len(), b.screens.len(), "{what}");
    for (k, (x, y)) in a.screens.iter().zip(&b.screens).enumerate() {
        assert_eq!(x.len(), y.len(), "{what}: hits on screen {k}");
        let cols = |h: &catoptric::trace::ScreenHits| {
            [h.u.clone(), h.v.clone(), h.du.clone(), h.dv.clone(), h.dw.clone(), h.opl.clone(), h.weight.clone()]
        };
        for (c, (p, q)) in cols(x).iter().zip(cols(y).iter()).enumerate() {
            for (i, (u, v)) in p.iter().zip(q).enumerate() {
                assert!(u.to_bits() == v.to_bits() || (u.is_nan() && v.is_nan()), "{what}: screen {k} column {c} hit {i}: {u} vs {v}");
            }
        }
        assert_eq!(x.source, y.source, "{what}: sources on screen {k}");
        assert_eq!(x.first, y.first, "{what}: first arrivals on screen {k}");
        assert_eq!(x.first.len(), x.len(), "{what}: one first-arrival flag per hit");
    }
}

fn presets() -> Vec<(String, String)> {
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/www/presets");
    let mut out = Vec::new();
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_some_and(|x| x == "json") && !p.ends_with("index.json") {
            out.push((p.display().to_string(), std::fs::read_to_string(&p).unwrap()));
        }
    }
    assert!(out.len() >= 5, "presets found: {}", out.len());
    out
}

#[test]
fn presets_and_bench_scenes_match_the_reference_bit_for_bit() {
    let mut layouts: Vec<(String, Scene)> = presets().into_iter().map(|(n, t)| (n, scene(&t))).collect();
    layouts.extend(scenes().into_iter().map(|s| (s.key.to_string(), Scene::compile(&s.layout))));
    for (name, sc) in &layouts {
        let reference = trace_reference(sc, opts(Some(3000), 1));
        assert!(reference.surface_hits > 0, "{name}: nothing hit");
        for k in Kernel::available() {
            let o = TraceOptions { kernel: Some(k), ..opts(Some(3000), 1) };
            same(&trace(sc, o), &reference, &format!("{name}, kernel {}", k.name()));
        }
    }
}

#[test]
fn random_layouts_match_the_reference_bit_for_bit_with_every_kernel() {
    let kernels = Kernel::available();
    assert_eq!(kernels[0], Kernel::Portable);
    let mut rng = Rng(0x5eed_ba7c);
    let mut traced = 0;
    for case in 0..400 {
        let text = random_layout(&mut rng);
        let Ok(layout) = parse_layout(&text) else { continue };
        let sc = Scene::compile(&layout);
        let reference = trace_reference(&sc, opts(None, 1));
        for &k in &kernels {
            let o = TraceOptions { kernel: Some(k), ..opts(None, 2) };
            same(&trace(&sc, o), &reference, &format!("case {case}, kernel {}: {text}", k.name()));
        }
        traced += 1;
    }
    assert!(traced > 200, "only {traced} random layouts were valid");
}

#[test]
fn a_ray_meeting_one_concave_mirror_twice_is_traced_like_the_reference() {
    // Two facing concave spheres (a cavity): rays bounce between them many
    // times, meeting each mirror again on later legs, and the screen in
    // the middle is crossed on several rounds (its hits must still come out
    // in ray order).
    let text = layout(
        &[
            mirror("left", [0.0, -100.0], 0.0, Some(150.0), 0.0, 80.0, 0.0, 0.0, None),
            mirror("right", [0.0, 100.0], 180.0, Some(150.0), 0.0, 80.0, 0.0, 0.0, None),
            screen("mid", [0.0, 0.0], 180.0, 60.0, "circle", false),
        ],
        &[lamp("lamp", [5.0, 0.0], 0.0, 20.0, 3000, 10.0)],
    );
    let sc = scene(&text);
    let reference = trace_reference(&sc, opts(None, 1));
    assert!(reference.surface_hits > 4 * reference.rays_launched, "rays should bounce back and forth");
    for threads in [1, 2, 3, 8] {
        same(&trace(&sc, opts(None, threads)), &reference, &format!("{threads} threads"));
    }
    // Over several chunks on several threads, where the threads write hits
    // straight into the result: more hits on the screen than rays, so some
    // chunk has more hits than its share of the result and puts the rest
    // aside.
    let rays = 3 * catoptric::trace::CHUNK + 1000;
    let reference = trace_reference(&sc, opts(Some(rays), 1));
    assert!(reference.screens[0].len() > rays, "the screen should be crossed more than once per ray");
    for threads in [2, 3] {
        same(&trace(&sc, opts(Some(rays), threads)), &reference, &format!("{rays} rays on {threads} threads"));
    }
}

#[test]
fn a_tie_between_two_elements_goes_to_the_one_listed_first() {
    // A screen in the tangent plane of a concave mirror's vertex: the
    // beam's central ray (the hex lattice's centre point) meets both at
    // the same distance. Both tracers give it to the element listed first
    // (common practice for a deterministic tie rule): the mirror, which
    // sends it straight back, so the screen — behind every other ray's
    // hit on the mirror's rising face — records nothing; listed the other
    // way round, the screen takes that one ray.
    let text = |mirror_first: bool| {
        let m = mirror("bowl", [0.0, 0.0], 180.0, Some(200.0), 0.0, 40.0, 0.0, 0.0, None);
        let s = screen("touch", [0.0, 0.0], 180.0, 1.0, "circle", false);
        let elements = if mirror_first { [m, s] } else { [s, m] };
        layout(&elements, &[beam("beam", [0.0, -100.0], 0.0, 20.0, 301, "hex")])
    };
    for (mirror_first, hits) in [(true, 0), (false, 1)] {
        let sc = scene(&text(mirror_first));
        let reference = trace_reference(&sc, opts(None, 1));
        assert_eq!(reference.screens[0].len(), hits, "mirror listed first: {mirror_first}");
        same(&trace(&sc, opts(None, 2)), &reference, &format!("mirror listed first: {mirror_first}"));
    }
}

#[test]
fn rays_meeting_a_deep_bowl_again_straight_after_reflecting_match_the_reference() {
    // The batched tracer rules out a return to the mirror just left from
    // the reflected line's second root on the conic (it keeps the root's
    // rim, hole and branch tests away from rounding). Deep bowls — sphere,
    // prolate and oblate ellipsoids, paraboloid, revolved and extruded,
    // with a hole — where many rays meet the same mirror on consecutive
    // legs, and many second roots land near the rim or the hole, must
    // still trace exactly like the reference, which always solves.
    let mut repeats = 0;
    for conic in [0.0, -0.5, 0.6, -1.0] {
        // The oblate ellipsoid ends at ρ = R/√(1+K) = 79 mm.
        let diameter = if conic > 0.0 { 150.0 } else { 190.0 };
        for length in [None, Some(150.0)] {
            let text = layout(
                &[
                    mirror("bowl", [0.0, 0.0], 0.0, Some(100.0), conic, diameter, 0.0, 20.0, length),
                    screen("lid", [0.0, 120.0], 180.0, 400.0, "square", true),
                ],
                &[lamp("floor", [0.0, 12.0], 90.0, 80.0, 3000, 1.0), lamp("wall", [-70.0, 60.0], 150.0, 25.0, 3000, 1.0)],
            );
            let sc = scene(&text);
            let reference = trace_reference(&sc, opts(None, 1));
            let on_lid = reference.screens[0].len() as u64;
            // Every hit not on the lid is on the bowl, and the lid is
            // opaque: each bowl hit beyond one per ray came on the leg
            // straight after a reflection off the bowl itself.
            repeats += (reference.surface_hits - on_lid).saturating_sub(reference.rays_launched);
            for k in Kernel::available() {
                let o = TraceOptions { kernel: Some(k), ..opts(None, 2) };
                same(&trace(&sc, o), &reference, &format!("K = {conic}, length {length:?}, kernel {}", k.name()));
            }
        }
    }
    assert!(repeats > 2_000, "too few repeated bowl hits to exercise the prediction: {repeats}");
}

#[test]
fn second_hits_on_an_off_axis_segment_and_beside_a_hole_are_kept() {
    // A ray inside a concave sphere of radius R is reflected along a chord
    // of the same length as the one it came in on (the law of reflection
    // on a circle: both chords make equal angles with the radius at the
    // hit; elementary geometry, common practice). With θ the angle at the
    // centre from the vertex, the points are (y, z) = R(sin θ, 1 − cos θ),
    // and a ray entering along the chord θ₀ → θ₀ + Δ meets the mirror at
    // θ₀ + Δ, θ₀ + 2Δ, … while those lie on it, leaving along the chord
    // θ → θ + Δ, of direction angle 90° − θ − Δ/2. The batched tracer
    // predicts each return from the reflected line's second root and
    // skips the mirror when that root is clearly off it (its margin is
    // some 2.5e-4 mm here: 1e3 self-hit distances of 1e-9 of the scene).
    // Here the returns land where they must be kept: on an off-axis
    // segment (which the aperture's offset must place); 5e-5 mm outside a
    // central hole; on the vertex of a mirror without a hole (within the
    // margin of the axis); 0.8 mm from the axis beside a hole of 1 mm
    // (closer than 1 mm, and than √2 hole radii); on a trough 1e-4 mm
    // long, whose ends the returns lie within the margin of.
    let r = 100.0f64;
    let at = |deg: f64| [r * deg.to_radians().sin(), r * (1.0 - deg.to_radians().cos())];
    let leaving = |deg: f64, step: f64| 90.0 - deg - step / 2.0;
    let edge = r * 10f64.to_radians().sin() - 5e-5;
    let beside = (0.8 / r).asin().to_degrees();
    // (aperture diameter, offset, hole, trough length), entry chord start,
    // step, hits (each entry point off the mirror).
    let cases = [
        (58.0, 70.0, 0.0, None, 20.0, 20.0, 3u64),
        (160.0, 0.0, 2.0 * edge, None, -90.0, 50.0, 2),
        (160.0, 0.0, 0.0, None, -60.0, 30.0, 3),
        (160.0, 0.0, 1.0, None, beside - 60.0, 30.0, 3),
        (160.0, 0.0, 0.0, Some(1e-4), -60.0, 40.0, 2),
    ];
    for (diameter, offset, hole, length, from, step, hits) in cases {
        let last = from + step * hits as f64;
        let (a_in, a_out) = (leaving(from, step), leaving(last, step));
        let dir = |a: f64| [a.to_radians().sin(), a.to_radians().cos()];
        let (p0, d0) = (at(from), dir(a_in));
        let (p1, d1) = (at(last), dir(a_out));
        let text = layout(
            &[
                mirror("sphere", [0.0, 0.0], 0.0, Some(r), 0.0, diameter, offset, hole, length),
                screen("catch", [p1[0] + 40.0 * d1[0], p1[1] + 40.0 * d1[1]], a_out + 180.0, 2.0, "circle", true),
            ],
            &[beam("chord", [p0[0] - 20.0 * d0[0], p0[1] - 20.0 * d0[1]], a_in, 1e-5, 7, "hex")],
        );
        let sc = scene(&text);
        let reference = trace_reference(&sc, opts(None, 1));
        let what = format!("offset {offset}, hole {hole}, length {length:?}, returns from {from}° by {step}°");
        let n = reference.rays_launched;
        assert_eq!(reference.screens[0].len() as u64, n, "{what}: every ray leaves along the predicted chord");
        assert_eq!(reference.surface_hits, n * (hits + 1), "{what}: {hits} mirror hits and the screen per ray");
        for (&u, &v) in reference.screens[0].u.iter().zip(&reference.screens[0].v) {
            assert!(u.hypot(v) < 1e-3, "{what}: hit ({u}, {v}) mm from the chord's line");
        }
        for k in Kernel::available() {
            let o = TraceOptions { kernel: Some(k), ..opts(None, 2) };
            same(&trace(&sc, o), &reference, &format!("{what}, kernel {}", k.name()));
        }
    }
}

#[test]
fn returns_all_over_a_deep_bowl_match_the_reference() {
    // A lamp inside a deep concave sphere (the aperture reaches 72° from
    // the vertex), with and without a central hole, aimed along the wall:
    // a ray inside a sphere keeps its distance from the centre at every
    // reflection (elementary geometry), so these near-grazing rays meet
    // the bowl again and again (in the ellipsoids about as often), at
    // points spread over it and out of the layout's plane, before leaving
    // through its mouth or the hole. The batched tracer's prediction that
    // a reflected ray cannot come back must never drop one of those
    // returns (common practice: the scalar tracer is the oracle, and its
    // exact solve finds every return).
    //
    // (conic constant, aperture, hole, lamp position, aim, cone
    // half-angle): a sphere, and a prolate and an oblate ellipsoid, whose
    // returns test the conic terms of the prediction.
    let cases = [
        (0.0, 190.0, 20.0, [-77.8, 45.5], 145.0, 25.0),
        (0.0, 190.0, 0.0, [-77.8, 45.5], 145.0, 25.0),
        (0.0, 190.0, 20.0, [60.0, 40.0], 215.0, 40.0),
        (-0.5, 190.0, 20.0, [-70.0, 40.0], 150.0, 25.0),
        (0.6, 150.0, 0.0, [55.0, 35.0], 215.0, 30.0),
    ];
    for (conic, diameter, hole, centre, aim, half) in cases {
        let text = layout(
            &[
                mirror("bowl", [0.0, 0.0], 0.0, Some(100.0), conic, diameter, 0.0, hole, None),
                screen("lid", [0.0, 160.0], 180.0, 400.0, "square", true),
            ],
            &[lamp("inside", centre, aim, half, 4000, 1.0)],
        );
        let sc = scene(&text);
        let reference = trace_reference(&sc, opts(None, 1));
        let what = format!("conic {conic}, hole {hole}, lamp at {centre:?}");
        let (n, mirror_hits) = (reference.rays_launched, reference.surface_hits - reference.screens[0].len() as u64);
        assert!(2 * mirror_hits > 3 * n, "{what}: the rays come back ({mirror_hits} mirror hits for {n} rays)");
        for k in Kernel::available() {
            let o = TraceOptions { kernel: Some(k), ..opts(None, 2) };
            same(&trace(&sc, o), &reference, &format!("{what}, kernel {}", k.name()));
        }
    }
}

#[test]
fn thread_counts_give_identical_results_and_reports() {
    // Common practice for parallel numerics: a fixed split into numbered
    // chunks, merged in order, so the answer never depends on scheduling.
    for s in scenes() {
        let sc = Scene::compile(&s.layout);
        let one = trace(&sc, opts(Some(100_000), 1));
        let report = serde_json::to_string(&catoptric::analysis::trace_report(&sc, &one)).unwrap();
        for threads in [2, 3, 8] {
            let many = trace(&sc, opts(Some(100_000), threads));
            same(&many, &one, &format!("{} on {threads} threads", s.key));
            let r = serde_json::to_string(&catoptric::analysis::trace_report(&sc, &many)).unwrap();
            assert_eq!(r, report, "{}: report on {threads} threads", s.key);
        }
    }
}

#[test]
fn a_trace_of_many_progress_waves_is_identical_on_any_thread_count() {
    // More chunks than one progress wave holds (8 per thread): every wave's
    // chunks must meet their own places in the result.
    let sc = Scene::compile(&scenes()[0].layout);
    let rays = 40 * catoptric::trace::CHUNK + 7;
    let one = trace(&sc, opts(Some(rays), 1));
    for threads in [2, 3] {
        same(&trace(&sc, opts(Some(rays), threads)), &one, &format!("{rays} rays on {threads} threads"));
    }
}

#[test]
fn slices_merge_into_exactly_the_whole_trace() {
    // As the page's worker pool does: each worker traces slice k of K.
    for s in scenes() {
        let sc = Scene::compile(&s.layout);
        let whole = trace(&sc, opts(Some(20_000), 1));
        for parts in [1usize, 2, 3, 7] {
            let slices: Vec<TraceResult> = (0..parts)
                .map(|k| {
                    let mut r = TraceResult::default();
                    trace_part(&sc, opts(Some(20_000), 1), k, parts, &mut r, &mut |_, _| {});
                    r
                })
                .collect();
            same(&merge_parts(&slices), &whole, &format!("{} in {parts} slices", s.key));
        }
    }
}

#[test]
fn tracing_twice_into_one_result_keeps_only_the_second_trace() {
    let all = scenes();
    let (a, b) = (Scene::compile(&all[0].layout), Scene::compile(&all[1].layout));
    let mut res = TraceResult::default();
    trace_into(&a, opts(Some(5000), 2), &mut res, &mut |_, _| {});
    trace_into(&b, opts(Some(3000), 2), &mut res, &mut |_, _| {});
    same(&res, &trace_reference(&b, opts(Some(3000), 1)), "second trace into a used result");
}

#[test]
fn progress_reaches_the_total_once_and_never_goes_back() {
    let sc = Scene::compile(&scenes()[0].layout);
    for threads in [1, 2] {
        let mut seen: Vec<(u64, u64)> = Vec::new();
        let res = catoptric::trace::trace_with(&sc, opts(Some(200_000), threads), &mut |d, t| seen.push((d, t)));
        assert!(seen.windows(2).all(|w| w[0].0 < w[1].0), "{threads} threads: {seen:?}");
        assert_eq!(seen.last().copied(), Some((res.rays_launched, res.rays_launched)));
    }
}

/// A layout with slope errors on a conic dish and an aspheric (general)
/// mirror, a csr sun and a lamp: the extra reflection step must give the
/// same bits in both tracers, on any threads and in any slices.
fn slope_error_scene() -> Scene {
    let text = r#"{"format":"catoptric-layout","version":1,"name":"slope errors","wavelength_nm":550,"max_bounces":8,
      "elements":[
        {"kind":"mirror","id":"dish","vertex":[0,0],"axis_deg":0,"form":"revolved",
         "profile":{"radius":1200,"conic":-1},"aperture":{"diameter":1000},"slope_error_mrad":3},
        {"kind":"mirror","id":"fold","vertex":[0,700],"axis_deg":180,"form":"revolved",
         "profile":{"radius":-900,"conic":0,"aspheric":[1e-9]},"aperture":{"diameter":200},"slope_error_mrad":1.5},
        {"kind":"screen","id":"rx","center":[0,400],"axis_deg":0,"size":120,"shape":"circle"}],
      "sources":[
        {"kind":"beam","id":"sun","center":[0,1000],"direction_deg":180,"diameter":1000,"rays":30000,
         "pattern":"random","sun_half_angle_mrad":4.65,"sunshape":"csr","csr":0.1},
        {"kind":"point","id":"lamp","center":[0,650],"direction_deg":180,"cone_half_angle_deg":30,"rays":5000,
         "pattern":"random","power_w":10}]}"#;
    scene(text)
}

#[test]
fn slope_errors_match_the_reference_bit_for_bit_on_any_threads_and_slices() {
    let sc = slope_error_scene();
    let reference = trace_reference(&sc, opts(None, 1));
    assert!(reference.screens[0].len() > 1000, "the receiver should be lit: {}", reference.screens[0].len());
    for k in Kernel::available() {
        for threads in [1, 3] {
            let o = TraceOptions { kernel: Some(k), ..opts(None, threads) };
            same(&trace(&sc, o), &reference, &format!("slope errors, kernel {}, {threads} threads", k.name()));
        }
    }
    for parts in [2usize, 5] {
        let slices: Vec<TraceResult> = (0..parts)
            .map(|k| {
                let mut r = TraceResult::default();
                trace_part(&sc, opts(None, 2), k, parts, &mut r, &mut |_, _| {});
                r
            })
            .collect();
        same(&merge_parts(&slices), &reference, &format!("slope errors in {parts} slices"));
    }
}

#[test]
fn a_trace_too_large_to_write_in_place_merges_chunk_buffers_identically() {
    // Rays × screens past the room reserved for writing hits in place
    // (2²¹ slots): the threads trace into chunk buffers that are appended
    // in ray order instead. A beam through a stack of 12 transparent
    // screens, each ray crossing every one, on 1, 2 and 3 threads.
    let screens: Vec<_> = (0..12).map(|i| screen(&format!("s{i}"), [0.0, 10.0 * i as f64], 180.0, 200.0, "square", false)).collect();
    let text = layout(&screens, &[beam("beam", [0.0, -20.0], 0.0, 100.0, 180_000, "random")]);
    let sc = scene(&text);
    let one = trace(&sc, opts(None, 1));
    let slots = one.rays_launched as usize * sc.screen_ids.len();
    assert!(slots > 1 << 21, "{slots} slots");
    assert!(one.screens.iter().all(|h| h.len() as u64 == one.rays_launched), "every ray crosses every screen");
    for threads in [2, 3] {
        same(&trace(&sc, opts(None, threads)), &one, &format!("{threads} threads"));
    }
}

#[test]
fn marginal_rays_of_a_deep_sphere_return_to_it_across_the_axis() {
    // A beam down the axis of a sphere of radius 100 mm opened to 160 mm:
    // a ray at height h reflects to cross the axis R − R/(2 cos θ) above
    // the vertex (sin θ = h/R; spherical aberration, elementary geometry),
    // so the outer rays (from about h = 67 mm) cross it low and meet the
    // bowl again on the far side. Their second root lies across the
    // aperture, while the point as far behind the first hit lies well
    // outside it: the return prediction must look ahead along the
    // reflected ray. The same bowl a thousand times smaller too (the
    // geometry has no scale; the tracer's tolerances follow the scene's
    // size), where the line's quadratic coefficients exceed 1. Bit for bit
    // with the reference (common practice: the scalar tracer as oracle).
    for scale in [1.0, 1e-3] {
        let text = layout(
            &[mirror("bowl", [0.0, 0.0], 0.0, Some(100.0 * scale), 0.0, 160.0 * scale, 0.0, 0.0, None)],
            &[beam("star", [0.0, 150.0 * scale], 180.0, 160.0 * scale, 3000, "hex")],
        );
        let sc = scene(&text);
        let reference = trace_reference(&sc, opts(None, 1));
        let (hits, rays) = (reference.surface_hits, reference.rays_launched);
        assert!(hits > rays + 100, "scale {scale}: the outer rays should meet the bowl twice ({hits} hits, {rays} rays)");
        for k in Kernel::available() {
            let o = TraceOptions { kernel: Some(k), ..opts(None, 1) };
            same(&trace(&sc, o), &reference, &format!("scale {scale}, kernel {}", k.name()));
        }
    }
}

#[test]
fn a_general_mirror_beyond_or_behind_a_nearer_crossing_is_traced_like_the_reference() {
    // Aspheric mirrors take the exact scalar solver, after their own
    // bounding-sphere cull and with the search cut off at the nearest hit
    // so far. Two layouts list a see-through screen, facing the source,
    // before the mirror, so that its crossing is that nearest hit when
    // the mirror is tested:
    // (a) an f/5 asphere under a distant beam, the screen 30 mm in front
    //     of it, inside its bounding sphere: the centre rays cross the
    //     screen before the mirror, which must not take them (the search
    //     ends at the crossing, measured from the sphere's entry point);
    // (b) a mirror 1 mm across lit by a lamp 2 mm in front of it, the
    //     screen 0.5 mm behind it: the mirror comes first and keeps every
    //     ray (the cull compares where the ray enters the sphere with the
    //     crossing, and the sphere is small against the lamp's distance).
    // Bit for bit with the scalar reference (common practice: the
    // reference tracer as oracle); the counts say which element each ray
    // met first (elementary geometry: a 40 mm square takes 1600/31416 ≈
    // 5.1 % of a 200 mm beam; the lamp's 10° cone stays within the 1 mm
    // mirror).
    let asphere = |d: f64, r: f64| {
        let mut m = mirror("asphere", [0.0, 0.0], 0.0, Some(r), -1.0, d, 0.0, 0.0, None);
        m["profile"]["aspheric"] = json!([1e-12 / r.powi(3)]);
        m
    };
    let far = layout(
        &[screen("early", [0.0, 30.0], 0.0, 40.0, "square", false), asphere(200.0, 2000.0)],
        &[beam("star", [0.0, 1500.0], 180.0, 200.0, 4000, "hex")],
    );
    let near = layout(
        &[screen("behind", [0.0, -0.5], 0.0, 10.0, "circle", false), asphere(1.0, 20.0)],
        &[lamp("bulb", [0.0, 2.0], 180.0, 10.0, 2000, 1.0)],
    );
    for (name, text) in [("far beam", far), ("near lamp", near)] {
        let sc = scene(&text);
        let general = sc.elements.iter().any(|e| matches!(&e.part, catoptric::scene::Part::Mirror { surface, .. } if !surface.profile.is_conic()));
        assert!(general, "{name}: the mirror takes the general solver");
        let reference = trace_reference(&sc, opts(None, 1));
        let (rays, arrived) = (reference.rays_launched as usize, reference.screens[0].len());
        if name == "far beam" {
            assert!(rays / 25 < arrived && arrived < rays / 15, "{name}: {arrived} of {rays} rays arrived on the screen");
        } else {
            assert_eq!((arrived, reference.surface_hits as usize), (0, rays), "{name}");
        }
        same(&trace(&sc, opts(None, 2)), &reference, name);
    }
}

#[test]
fn the_element_a_ray_skips_is_the_one_it_just_left() {
    // After a flat mirror or a screen, a ray is told to skip that element
    // on its next leg (it cannot meet it again before something turns
    // it), and only that one: the next element on its path must stay in
    // reach, whether the other rays of its batch met the same element or
    // crossed a screen in the same round. Two periscopes (two flat
    // mirrors at 45°, law of reflection: Hecht, Optics, ch. 4) with the
    // elements numbered so that a mixed-up number (2 | 1, 3 | 1) is the
    // next element on the path; element 0 is a screen off to the side
    // that nothing meets. Every ray that enters the periscope reaches its
    // last screen, and bit for bit with the scalar reference (common
    // practice).
    let flat = |id: &str, at: [f64; 2], axis: f64| mirror(id, at, axis, None, 0.0, 30.0, 0.0, 0.0, None);
    let aside = screen("aside", [500.0, 500.0], 0.0, 1.0, "circle", false);
    let last = |id: &str| screen(id, [60.0, 100.0], 180.0, 60.0, "circle", false);
    // (a) elements: aside, in (1), out (2), top (3): in → out → top.
    let a = layout(
        &[aside.clone(), flat("in", [0.0, 0.0], 45.0), flat("out", [60.0, 0.0], -45.0), last("top")],
        &[beam("star", [0.0, 100.0], 180.0, 10.0, 500, "hex")],
    );
    // (b) a wider beam: its rim misses "in" and crosses the see-through
    // "floor" (2) in the same round as the rest reflect off "in" (1);
    // then out (3), top (4).
    let b = layout(
        &[
            aside,
            flat("in", [0.0, 0.0], 45.0),
            screen("floor", [0.0, -20.0], 0.0, 80.0, "circle", false),
            flat("out", [60.0, 0.0], -45.0),
            last("top"),
        ],
        &[beam("star", [0.0, 100.0], 180.0, 40.0, 2000, "hex")],
    );
    for (name, text, top) in [("one beam", a, 3), ("beam and rim", b, 4)] {
        let sc = scene(&text);
        let reference = trace_reference(&sc, opts(None, 1));
        let on = |k: usize| sc.screen_ids.iter().position(|s| *s == sc.elements[k].id).map_or(0, |i| reference.screens[i].len());
        let (rays, reached) = (reference.rays_launched as usize, on(top));
        if name == "one beam" {
            assert_eq!(reached, rays, "{name}: every ray reaches the top screen");
        } else {
            let floor = on(2);
            assert!(floor > rays / 4 && reached > rays / 8 && floor + reached == rays, "{name}: {floor} on the floor, {reached} at the top of {rays}");
        }
        same(&trace(&sc, opts(None, 2)), &reference, name);
    }
}
