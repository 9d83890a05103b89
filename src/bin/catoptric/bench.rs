//! `catoptric bench`: tracing throughput on the standard scenes
//! (`catoptric::bench_scenes`), native and, when Node and a built
//! `www/pkg` are present, the wasm build side by side.
//!
//! Each scene is compiled once, then traced [`TRACE_RUNS`] times on one
//! thread and as many on every core (or `--threads N`); the best time
//! counts. Timing is wall-clock around `trace` alone; the end-to-end
//! figure adds compiling, every analysis and the JSON report. When
//! `python3` with NumPy is present, `pkg-config/bench-numpy.py` traces
//! scene 1 the vectorised-array way in the same run (best of as many runs
//! as end to end), for comparison.

use crate::Failure;
use catoptric::analysis::{analyse_all, trace_report};
use catoptric::bench_scenes::{page_frame, scenes, BenchScene};
use catoptric::layout::MAX_RAYS_PER_SOURCE;
use catoptric::trace::{thread_count, trace_into, Kernel, TraceOptions, TraceResult};
use catoptric::Scene;
use serde::Serialize;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// Timed runs per scene of each slower step (page frame, wasm); the best
/// counts.
const RUNS: usize = 3;
/// Timed runs of the trace alone, the analyses alone, end to end and the
/// NumPy script end to end is compared with (tens of milliseconds each):
/// more of them, so that the best is the machine's speed rather than a
/// neighbour's load on a shared host. Both sides of the comparison get
/// the same number.
const TRACE_RUNS: usize = 10;
/// Longest the wasm side may take before it is given up.
const WASM_TIMEOUT: Duration = Duration::from_secs(600);

#[derive(Serialize)]
struct Machine {
    cpu: String,
    /// Logical cores the OS offers (the bench itself uses one).
    cores: usize,
    os: &'static str,
    arch: &'static str,
}

/// One scene's figures; the keys are the `bench --json` contract.
#[derive(Serialize)]
struct Row {
    #[serde(skip)]
    key: &'static str,
    name: String,
    rays: u64,
    surface_hits: u64,
    /// Trace time on `threads` threads, best of the runs.
    seconds: f64,
    rays_per_s: f64,
    hits_per_s: f64,
    hits_per_s_per_thread: f64,
    /// The same trace on one thread (the per-core figure).
    hits_per_s_one_thread: f64,
    /// wasm (one thread, in Node) throughput over native one-thread.
    wasm_ratio: Option<f64>,
    /// Every analysis of the trace (spot, best focus, f-number, wavefront,
    /// encircled energy, flux map) with the page's plotted curves, per
    /// million rays launched, seconds.
    analysis_s_per_mray: f64,
    /// What `catoptric trace --json` does once the file is read: compile,
    /// trace, the report (every figure) as JSON, seconds.
    end_to_end_s: f64,
    /// One dragging frame of the page (see `bench_scenes::page_frame`), ms.
    frame_ms_native: f64,
    frame_ms_wasm: Option<f64>,
}

/// The vectorised NumPy script on scene 1, timed in the same run.
#[derive(Serialize)]
struct NumpyRow {
    engine: String,
    rays: u64,
    seconds: f64,
    /// `end_to_end_s` of the native paraboloid scene.
    catoptric_seconds: f64,
    /// NumPy time over ours.
    speedup: f64,
}

#[derive(Serialize)]
struct Report {
    machine: Machine,
    threads: usize,
    /// Compiled kernel copy in use (avx512, avx2, portable).
    kernel: &'static str,
    /// Best of how many runs: the trace alone, the analyses alone, end to
    /// end and the NumPy script; and the page frame and wasm.
    trace_runs: usize,
    runs: usize,
    scenes: Vec<Row>,
    /// Where the wasm numbers came from, or why they are missing.
    wasm_engine: Option<String>,
    wasm_note: Option<String>,
    numpy: Option<NumpyRow>,
    numpy_note: Option<String>,
}

fn machine() -> Machine {
    let cpu = std::fs::read_to_string("/proc/cpuinfo")
        .ok()
        .and_then(|t| {
            t.lines()
                .find(|l| l.starts_with("model name"))
                .and_then(|l| l.split_once(':'))
                .map(|(_, v)| v.trim().to_string())
        })
        .unwrap_or_else(|| "unknown".into());
    let cores = std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1);
    Machine { cpu, cores, os: std::env::consts::OS, arch: std::env::consts::ARCH }
}

/// Best trace time of the runs on `threads` threads; the result stays in `res`.
fn best_trace(scene: &Scene, rays: u64, threads: usize, res: &mut TraceResult) -> f64 {
    let opts = TraceOptions { rays: Some(rays as usize), threads: Some(threads), ..Default::default() };
    (0..TRACE_RUNS)
        .map(|_| {
            let t0 = Instant::now();
            trace_into(scene, opts, res, &mut |_, _| {});
            t0.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

fn time_scene(s: &BenchScene, rays: u64, threads: usize) -> Row {
    let scene = Scene::compile(&s.layout);
    // One result reused across runs, as the page does on every re-trace:
    // the figures are the tracer's, not the allocator's.
    let mut res = TraceResult::default();
    let one = best_trace(&scene, rays, 1, &mut res);
    let best = if threads == 1 { one } else { best_trace(&scene, rays, threads, &mut res) };
    let (launched, hits) = (res.rays_launched, res.surface_hits);
    let mut best_analysis = f64::INFINITY;
    for _ in 0..TRACE_RUNS {
        let t1 = Instant::now();
        std::hint::black_box(analyse_all(&scene, &res));
        best_analysis = best_analysis.min(t1.elapsed().as_secs_f64());
    }
    let mut end_to_end = f64::INFINITY;
    for _ in 0..TRACE_RUNS {
        let t = Instant::now();
        let sc = Scene::compile(&s.layout);
        let opts = TraceOptions { rays: Some(rays as usize), threads: Some(threads), ..Default::default() };
        let r = catoptric::trace(&sc, opts);
        // What `catoptric trace --json` does after reading the file: the
        // report holds every figure (the page's plotted curves and maps,
        // which `analyse_all` adds, are the analyses column's).
        let report = crate::commands::to_json(&trace_report(&sc, &r));
        std::hint::black_box(report);
        end_to_end = end_to_end.min(t.elapsed().as_secs_f64());
    }
    let mut frame = f64::INFINITY;
    for _ in 0..RUNS {
        let t = Instant::now();
        std::hint::black_box(page_frame(&s.layout));
        frame = frame.min(t.elapsed().as_secs_f64() * 1e3);
    }
    let secs = best.max(1e-9);
    Row {
        key: s.key,
        name: s.layout.name.trim_start_matches("Benchmark: ").to_string(),
        rays: launched,
        surface_hits: hits,
        seconds: best,
        rays_per_s: launched as f64 / secs,
        hits_per_s: hits as f64 / secs,
        hits_per_s_per_thread: hits as f64 / secs / threads as f64,
        hits_per_s_one_thread: hits as f64 / one.max(1e-9),
        wasm_ratio: None,
        analysis_s_per_mray: best_analysis / (launched.max(1) as f64 / 1e6),
        end_to_end_s: end_to_end,
        frame_ms_native: frame,
        frame_ms_wasm: None,
    }
}

/// A file of the source tree, looked up from the current folder first,
/// then from the crate this binary was built from.
fn find(rel: &str) -> Option<PathBuf> {
    [PathBuf::from(rel), Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)].into_iter().find(|p| p.exists())
}

#[derive(serde::Deserialize)]
struct WasmOut {
    engine: String,
    scenes: Vec<WasmScene>,
}
#[derive(serde::Deserialize)]
struct WasmScene {
    key: String,
    seconds: f64,
    frame_ms: f64,
}

/// Runs `node pkg-config/bench-wasm.mjs`; Err carries why it was skipped.
fn run_wasm(rays: u64) -> Result<WasmOut, String> {
    let script = find("pkg-config/bench-wasm.mjs").ok_or("pkg-config/bench-wasm.mjs not found")?;
    let pkg = find("www/pkg/catoptric_bg.wasm")
        .and_then(|p| p.parent().map(Path::to_path_buf))
        .ok_or("www/pkg not built (run pkg-config/build-web.sh)")?;
    let mut child = Command::new("node")
        .arg(&script)
        .args(["--rays", &rays.to_string(), "--runs", &RUNS.to_string(), "--pkg"])
        .arg(&pkg)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .map_err(|e| format!("node not available: {e}"))?;
    let t0 = Instant::now();
    loop {
        match child.try_wait() {
            Ok(Some(_)) => break,
            Ok(None) if t0.elapsed() < WASM_TIMEOUT => std::thread::sleep(Duration::from_millis(50)),
            _ => {
                let _ = child.kill();
                let _ = child.wait();
                return Err(format!("wasm bench did not finish within {} s", WASM_TIMEOUT.as_secs()));
            }
        }
    }
    let out = child.wait_with_output().map_err(|e| format!("wasm bench: {e}"))?;
    if !out.status.success() {
        let err = String::from_utf8_lossy(&out.stderr);
        return Err(format!("wasm bench failed: {}", err.lines().last().unwrap_or("").trim()));
    }
    serde_json::from_slice(&out.stdout).map_err(|e| format!("wasm bench printed unreadable output: {e}"))
}

#[derive(serde::Deserialize)]
struct NumpyOut {
    engine: String,
    seconds: f64,
}

/// Runs `python3 pkg-config/bench-numpy.py`; Err carries why it was skipped.
fn run_numpy(rays: u64) -> Result<NumpyOut, String> {
    let script = find("pkg-config/bench-numpy.py").ok_or("pkg-config/bench-numpy.py not found")?;
    let out = Command::new("python3")
        .arg(&script)
        .args(["--rays", &rays.to_string(), "--runs", &TRACE_RUNS.to_string()])
        .stdin(Stdio::null())
        .output()
        .map_err(|e| format!("python3 not available: {e}"))?;
    if !out.status.success() {
        let err = String::from_utf8_lossy(&out.stderr);
        return Err(format!("numpy script failed (is numpy installed?): {}", err.lines().last().unwrap_or("").trim()));
    }
    serde_json::from_slice(&out.stdout).map_err(|e| format!("numpy script printed unreadable output: {e}"))
}

fn si(v: f64) -> String {
    match v {
        v if v >= 1e9 => format!("{:.2} G", v / 1e9),
        v if v >= 1e6 => format!("{:.2} M", v / 1e6),
        v if v >= 1e3 => format!("{:.2} k", v / 1e3),
        v => format!("{v:.0} "),
    }
}

fn table(r: &Report) -> String {
    let mut s = String::new();
    let m = &r.machine;
    let _ = writeln!(s, "machine: {} ({} logical cores, {} {}), kernel {}", m.cpu, m.cores, m.os, m.arch, r.kernel);
    let _ = writeln!(s, "{} thread(s), trace, analyses, end to end and NumPy best of {} runs (trace and analyses: scene compiled beforehand), frames and wasm best of {}",
        r.threads, r.trace_runs, r.runs
    );
    let _ = writeln!(
        s,
        "frame ms = native/wasm time of one dragging frame of the page: compile, 20k rays per source, \
         every analysis, 64-ray fan, 2000-ray caustic at 700x450 (budget 16.7 ms at 60 Hz)\n"
    );
    let _ = writeln!(
        s,
        "{:<36} {:>9} {:>10} {:>9} {:>12} {:>12} {:>13} {:>8} {:>10} {:>10} {:>11}",
        "scene", "rays", "hits", "trace s", "hits/s", "hits/s/thr", "1-thr hits/s", "wasm/1", "anal s/M", "end-to-end", "frame ms"
    );
    for row in &r.scenes {
        let _ = writeln!(
            s,
            "{:<36} {:>9} {:>10} {:>9.4} {:>12} {:>12} {:>13} {:>8} {:>10.4} {:>10.4} {:>11}",
            row.name,
            row.rays,
            row.surface_hits,
            row.seconds,
            format!("{}/s", si(row.hits_per_s)),
            format!("{}/s", si(row.hits_per_s_per_thread)),
            format!("{}/s", si(row.hits_per_s_one_thread)),
            row.wasm_ratio.map_or("-".into(), |x| format!("{x:.2}")),
            row.analysis_s_per_mray,
            row.end_to_end_s,
            match row.frame_ms_wasm {
                Some(w) => format!("{:.1}/{:.1}", row.frame_ms_native, w),
                None => format!("{:.1}/-", row.frame_ms_native),
            }
        );
    }
    match (&r.wasm_engine, &r.wasm_note) {
        (Some(e), _) => {
            let _ = writeln!(s, "\nwasm: www/pkg under {e}");
        }
        (None, Some(n)) => {
            let _ = writeln!(s, "\nwasm: skipped ({n})");
        }
        _ => {}
    }
    match (&r.numpy, &r.numpy_note) {
        (Some(n), _) => {
            let _ = writeln!(
                s,
                "numpy ({}): {} rays of scene 1 in {:.4} s; catoptric end to end {:.4} s: {:.1}x faster",
                n.engine, n.rays, n.seconds, n.catoptric_seconds, n.speedup
            );
        }
        (None, Some(n)) => {
            let _ = writeln!(s, "numpy: skipped ({n})");
        }
        _ => {}
    }
    s
}

/// Most threads `--threads` accepts.
pub const MAX_THREADS: usize = 256;

pub fn run(rays: u64, threads: Option<usize>, json: bool) -> Result<String, Failure> {
    if rays == 0 || rays > MAX_RAYS_PER_SOURCE {
        return Err(Failure::input(format!("--rays: must be between 1 and {MAX_RAYS_PER_SOURCE} (got {rays})")));
    }
    let threads = check_threads(threads)?.unwrap_or_else(|| thread_count(&TraceOptions::default()));
    let mut rows: Vec<Row> = scenes().iter().map(|s| time_scene(s, rays, threads)).collect();
    let (mut wasm_engine, mut wasm_note) = (None, None);
    match run_wasm(rays) {
        Ok(w) => {
            for row in &mut rows {
                if let Some(ws) = w.scenes.iter().find(|x| x.key == row.key) {
                    // Same scene and ray count: the native launch count holds.
                    let wasm_hits_per_s = row.surface_hits as f64 / ws.seconds.max(1e-9);
                    row.wasm_ratio = Some(wasm_hits_per_s / row.hits_per_s_one_thread);
                    row.frame_ms_wasm = Some(ws.frame_ms);
                }
            }
            wasm_engine = Some(w.engine);
        }
        Err(why) => wasm_note = Some(why),
    }
    let (mut numpy, mut numpy_note) = (None, None);
    match run_numpy(rays) {
        Ok(n) => {
            let ours = rows[0].end_to_end_s;
            numpy = Some(NumpyRow { engine: n.engine, rays, seconds: n.seconds, catoptric_seconds: ours, speedup: n.seconds / ours.max(1e-9) });
        }
        Err(why) => numpy_note = Some(why),
    }
    let report = Report {
        machine: machine(),
        threads,
        kernel: Kernel::detect().name(),
        trace_runs: TRACE_RUNS,
        runs: RUNS,
        scenes: rows,
        wasm_engine,
        wasm_note,
        numpy,
        numpy_note,
    };
    Ok(if json {
        serde_json::to_string_pretty(&report).expect("reports always serialize")
    } else {
        table(&report)
    })
}

/// `--threads`: 1 … [`MAX_THREADS`].
pub fn check_threads(threads: Option<usize>) -> Result<Option<usize>, Failure> {
    match threads {
        Some(n) if n == 0 || n > MAX_THREADS => {
            Err(Failure::input(format!("--threads: must be between 1 and {MAX_THREADS} (got {n})")))
        }
        t => Ok(t),
    }
}
