//! Bounded work (common practice for a tool that takes layouts from
//! anyone): a trace whose rays would record more screen hits than allowed
//! stops with a clear limit, the same way whatever the thread count; the
//! worst-case estimate is rays × (max_bounces + 1)(screens + 1) × elements;
//! the command line refuses a layout above the work budget unless asked,
//! and `--rays` cannot lift the total-ray cap.

mod layout_support;
use catoptric::layout::MAX_RAYS_TOTAL;
use catoptric::trace::{merge_parts, trace_part, work_estimate, Limit, TraceOptions, TraceResult, WORK_BUDGET};
use catoptric::trace;
use layout_support::*;
use std::process::Command;

/// Two facing concave spheres with a lamp between them and a transparent
/// screen across the cavity: rays bounce to `max_bounces`, crossing the
/// screen on every leg.
fn cavity(rays: u64, max_bounces: u32, screens: usize, lamp_deg: f64) -> String {
    let mut els = vec![
        mirror("left", [0.0, -100.0], 0.0, Some(150.0), 0.0, 80.0, 0.0, 0.0, None),
        mirror("right", [0.0, 100.0], 180.0, Some(150.0), 0.0, 80.0, 0.0, 0.0, None),
    ];
    for i in 0..screens {
        let z = -50.0 + 100.0 * i as f64 / screens.max(1) as f64;
        els.push(screen(&format!("s{i}"), [0.0, z], 180.0, 60.0, "circle", false));
    }
    let mut v: serde_json::Value = serde_json::from_str(&layout(&els, &[lamp("lamp", [5.0, 0.5], lamp_deg, 20.0, rays, 100.0)])).unwrap();
    v["max_bounces"] = serde_json::json!(max_bounces);
    v.to_string()
}

fn opts(threads: usize, max_hits: u64) -> TraceOptions {
    TraceOptions { threads: Some(threads), max_hits: Some(max_hits), ..Default::default() }
}

#[test]
fn a_cavity_over_the_hit_cap_stops_with_a_limit_on_any_thread_count() {
    let sc = scene(&cavity(40_000, 200, 1, 0.0));
    let one = trace(&sc, opts(1, 100_000));
    assert_eq!(one.limit, Some(Limit::TooManyHits { cap: 100_000 }));
    assert!(one.screens.iter().all(|h| h.is_empty()), "a limited trace keeps no hits");
    for threads in [2, 3, 8] {
        let many = trace(&sc, opts(threads, 100_000));
        assert_eq!(many.limit, one.limit, "{threads} threads");
        assert!(many.screens.iter().all(|h| h.is_empty()));
    }
    // Slices (the page's worker pool) reach the same verdict.
    let parts: Vec<TraceResult> = (0..3)
        .map(|k| {
            let mut r = TraceResult::default();
            trace_part(&sc, opts(1, 100_000), k, 3, &mut r, &mut |_, _| {});
            r
        })
        .collect();
    assert_eq!(merge_parts(&parts).limit, one.limit);
    // With room for every hit the same layout traces in full.
    let full = trace(&sc, opts(2, 100_000_000));
    assert_eq!(full.limit, None);
    let hits: usize = full.screens.iter().map(|h| h.len()).sum();
    assert!(hits > 100_000 && hits as u64 > 20 * full.rays_launched, "{hits} hits: rays should cross the screen on many legs");
}

#[test]
fn ordinary_layouts_stay_well_inside_the_limits() {
    for s in catoptric::bench_scenes::scenes() {
        let sc = catoptric::Scene::compile(&s.layout);
        let res = trace(&sc, TraceOptions { rays: Some(10_000), ..Default::default() });
        assert_eq!(res.limit, None, "{}", s.key);
        // The largest ordinary trace the validator allows is far below
        // the budget.
        assert!(work_estimate(&sc, MAX_RAYS_TOTAL) < WORK_BUDGET, "{}", s.key);
    }
}

#[test]
fn the_estimate_is_rays_times_events_times_elements() {
    // 2 mirrors + 3 screens, max_bounces 10: (10 + 1)(3 + 1) events per
    // ray, each tested against 5 elements.
    let sc = scene(&cavity(1000, 10, 3, 0.0));
    assert_eq!(work_estimate(&sc, 1000), 1000 * 11 * 4 * 5);
    assert_eq!(work_estimate(&sc, u64::MAX), u64::MAX, "saturates instead of wrapping");
}

fn cli(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_catoptric")).args(args).output().unwrap();
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into(), String::from_utf8_lossy(&out.stderr).into())
}

fn temp_layout(name: &str, text: &str) -> std::path::PathBuf {
    let dir = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("work_budget");
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

#[test]
fn the_command_line_refuses_work_above_the_budget_unless_asked() {
    // 254 screens in the cavity, max_bounces 1000: a worst case of
    // 1000 × 1001 × 255 × 256 ≈ 6.5e10 tests. The lamp points away from
    // both mirrors (out of the cavity's side), so the real trace is cheap.
    let p = temp_layout("many-screens.json", &cavity(1000, 1000, 254, 90.0));
    let path = p.to_str().unwrap();
    let (code, out, err) = cli(&["trace", path, "--json"]);
    assert_eq!(code, 2, "{err}");
    assert!(out.is_empty());
    assert!(err.contains("--allow-long") && err.contains("budget") && err.lines().count() == 1, "{err}");
    let (code, out, err) = cli(&["trace", path, "--json", "--allow-long"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("\"rays_launched\""));
    assert!(err.contains("traced"), "a long trace reports progress on stderr: {err}");
}

#[test]
fn rays_flag_cannot_lift_the_total_ray_cap() {
    // Three lamps; 4,000,000 rays each would be 12,000,000 in all.
    let three = layout(
        &[screen("s", [0.0, 10.0], 180.0, 10.0, "square", false)],
        &[lamp("a", [0.0, 0.0], 0.0, 10.0, 10, 1.0), lamp("b", [1.0, 0.0], 0.0, 10.0, 10, 1.0), lamp("c", [2.0, 0.0], 0.0, 10.0, 10, 1.0)],
    );
    let p = temp_layout("three.json", &three);
    let (code, out, err) = cli(&["trace", p.to_str().unwrap(), "--rays", "4000000"]);
    assert_eq!(code, 2);
    assert!(out.is_empty());
    assert!(err.contains("--rays") && err.contains(&MAX_RAYS_TOTAL.to_string()), "{err}");
}

#[test]
fn the_command_line_names_the_hit_limit() {
    // 4,000 rays bouncing 200 times across one screen record about
    // 800,000 hits: above a cap of 50,000 (the hidden --max-hits stands in
    // for the documented cap, which a test should not fill).
    let p = temp_layout("cavity.json", &cavity(4_000, 200, 1, 0.0));
    let (code, out, err) = cli(&["trace", p.to_str().unwrap(), "--json", "--max-hits", "50000"]);
    assert_eq!(code, 2, "{err}");
    assert!(out.is_empty());
    assert!(err.contains("screen hits") && err.lines().count() == 1, "{err}");
}

#[test]
fn the_cap_is_shared_between_chunks_in_proportion_to_their_rays() {
    // The arithmetic of a shared budget (common practice): if every chunk
    // kept within its share, the whole trace would keep within the cap; so
    // a trace whose hits exceed the cap must stop even though no single
    // chunk records the whole cap. Here ~87 hits per ray, 40,000 rays in
    // chunks of 16,384: a cap of 40 hits per ray in all is more than any
    // one chunk records, and less than the trace does.
    let sc = scene(&cavity(40_000, 200, 1, 0.0));
    let full = trace(&sc, opts(2, 100_000_000));
    let hits: u64 = full.screens.iter().map(|h| h.len() as u64).sum();
    let cap = 40 * full.rays_launched;
    let biggest_chunk = catoptric::trace::CHUNK as u64;
    assert!(hits > cap && hits * biggest_chunk / full.rays_launched < cap, "{hits} hits against a cap of {cap}");
    for threads in [1, 2] {
        assert_eq!(trace(&sc, opts(threads, cap)).limit, Some(Limit::TooManyHits { cap }), "{threads} threads");
    }
}

#[test]
fn a_trace_recording_exactly_its_cap_is_kept_and_one_hit_more_is_not() {
    // The cap is a most, not a least (our rule): a trace of one chunk whose
    // rays each cross one screen once records exactly as many hits as
    // rays; a cap of that many keeps them all, one fewer stops the trace.
    // (The per-ray floor of the shares, MIN_HITS_PER_RAY, is then above
    // the cap and does not apply: a chunk's share is at most the cap.)
    let sc = catoptric::Scene::compile(&catoptric::bench_scenes::paraboloid_f4());
    let base = TraceOptions { rays: Some(3000), ..Default::default() };
    let free = trace(&sc, base);
    let n = free.screens[0].len() as u64;
    assert_eq!(n, free.rays_launched, "every ray arrives once");
    assert!(n < catoptric::trace::CHUNK as u64, "one chunk ({n} rays)");
    for threads in [1, 2] {
        let at = |cap: u64| trace(&sc, TraceOptions { threads: Some(threads), max_hits: Some(cap), ..base });
        let exact = at(n);
        assert_eq!(exact.limit, None, "{threads} threads: a cap of exactly the hits");
        assert_eq!(exact.screens[0].len() as u64, n);
        assert_eq!(at(n - 1).limit, Some(Limit::TooManyHits { cap: n - 1 }), "{threads} threads: one fewer");
    }
}
