//! `catoptric bench`: tracing throughput on the standard scenes
//! (`catoptric::bench_scenes`), native and, when Node and a built
//! `www/pkg` are present, the wasm build side by side.
//!
//! Each scene is compiled once, then traced three times on one thread;
//! the best time counts. Timing is wall-clock around `trace` alone.

use crate::Failure;
use catoptric::analysis::analyse_all;
use catoptric::bench_scenes::{page_frame, scenes, BenchScene};
use catoptric::layout::MAX_RAYS_PER_SOURCE;
use catoptric::trace::{trace_into, TraceOptions, TraceResult};
use catoptric::Scene;
use serde::Serialize;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// Timed runs per scene; the best counts.
const RUNS: usize = 3;
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

#[derive(Serialize)]
struct WasmRow {
    seconds: f64,
    rays_per_s: f64,
    /// wasm throughput over native throughput.
    ratio_to_native: f64,
    /// One dragging frame of the page in wasm (20k rays per source,
    /// analyses, fan, caustic), ms.
    frame_ms: f64,
}

#[derive(Serialize)]
struct Row {
    key: &'static str,
    name: String,
    rays: u64,
    surface_hits: u64,
    seconds: f64,
    rays_per_s: f64,
    hits_per_s: f64,
    wasm: Option<WasmRow>,
    /// Seconds that every analysis of the trace (spot, best focus, f-number,
    /// wavefront, encircled energy, flux map) takes per million rays
    /// launched, best of the runs.
    analysis_s_per_million_rays: f64,
    /// One dragging frame of the page natively (see
    /// `bench_scenes::page_frame`), ms, best of the runs.
    frame_ms: f64,
}

#[derive(Serialize)]
struct Report {
    machine: Machine,
    threads: u32,
    runs: usize,
    scenes: Vec<Row>,
    /// Where the wasm numbers came from, or why they are missing.
    wasm_engine: Option<String>,
    wasm_note: Option<String>,
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

fn time_scene(s: &BenchScene, rays: u64) -> Row {
    let scene = Scene::compile(&s.layout);
    let mut best = f64::INFINITY;
    let mut best_analysis = f64::INFINITY;
    let (mut launched, mut hits) = (0, 0);
    // One result reused across runs, as the page does on every re-trace:
    // the figures are the tracer's, not the allocator's.
    let mut res = TraceResult::default();
    for _ in 0..RUNS {
        let t0 = Instant::now();
        trace_into(&scene, TraceOptions { rays: Some(rays as usize), ..Default::default() }, &mut res, &mut |_, _| {});
        best = best.min(t0.elapsed().as_secs_f64());
        launched = res.rays_launched;
        hits = res.surface_hits;
        let t1 = Instant::now();
        let a = analyse_all(&scene, &res);
        best_analysis = best_analysis.min(t1.elapsed().as_secs_f64());
        std::hint::black_box(&a);
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
        wasm: None,
        analysis_s_per_million_rays: best_analysis / (launched.max(1) as f64 / 1e6),
        frame_ms: frame,
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
    let _ = writeln!(s, "machine: {} ({} logical cores, {} {})", m.cpu, m.cores, m.os, m.arch);
    let _ = writeln!(s, "single thread, best of {} runs; trace time only (scene compiled beforehand)", r.runs);
    let _ = writeln!(
        s,
        "frame ms = native/wasm time of one dragging frame of the page: compile, 20k rays per source, \
         every analysis, 64-ray fan, 2000-ray caustic at 700x450 (budget 16.7 ms at 60 Hz)"
    );
    let _ = writeln!(
        s,
        "native runs reuse one result's buffers, as the page does; wasm memory, once grown, is reused too\n"
    );
    let _ = writeln!(
        s,
        "{:<36} {:>9} {:>10} {:>9} {:>12} {:>12} {:>9} {:>12} {:>8} {:>12} {:>10}",
        "scene", "rays", "hits", "native s", "rays/s", "hits/s", "wasm s", "wasm rays/s", "wasm/nat", "analysis s/Mray", "frame ms"
    );
    for row in &r.scenes {
        let (ws, wr, ratio) = match &row.wasm {
            Some(w) => (format!("{:.3}", w.seconds), format!("{}/s", si(w.rays_per_s)), format!("{:.2}", w.ratio_to_native)),
            None => ("-".into(), "-".into(), "-".into()),
        };
        let _ = writeln!(
            s,
            "{:<36} {:>9} {:>10} {:>9.3} {:>12} {:>12} {:>9} {:>12} {:>8} {:>12.3} {:>10}",
            row.name,
            row.rays,
            row.surface_hits,
            row.seconds,
            format!("{}/s", si(row.rays_per_s)),
            format!("{}/s", si(row.hits_per_s)),
            ws,
            wr,
            ratio,
            row.analysis_s_per_million_rays,
            match &row.wasm {
                Some(w) => format!("{:.1}/{:.1}", row.frame_ms, w.frame_ms),
                None => format!("{:.1}/-", row.frame_ms),
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
    s
}

pub fn run(rays: u64, json: bool) -> Result<String, Failure> {
    if rays == 0 || rays > MAX_RAYS_PER_SOURCE {
        return Err(Failure::input(format!("--rays: must be between 1 and {MAX_RAYS_PER_SOURCE} (got {rays})")));
    }
    let mut rows: Vec<Row> = scenes().iter().map(|s| time_scene(s, rays)).collect();
    let (mut wasm_engine, mut wasm_note) = (None, None);
    match run_wasm(rays) {
        Ok(w) => {
            for row in &mut rows {
                if let Some(ws) = w.scenes.iter().find(|x| x.key == row.key) {
                    // Same scene and ray count: the native launch count holds.
                    let secs = ws.seconds.max(1e-9);
                    let rays_per_s = row.rays as f64 / secs;
                    row.wasm = Some(WasmRow {
                        seconds: ws.seconds,
                        rays_per_s,
                        ratio_to_native: rays_per_s / row.rays_per_s,
                        frame_ms: ws.frame_ms,
                    });
                }
            }
            wasm_engine = Some(w.engine);
        }
        Err(why) => wasm_note = Some(why),
    }
    let report = Report { machine: machine(), threads: 1, runs: RUNS, scenes: rows, wasm_engine, wasm_note };
    Ok(if json {
        serde_json::to_string_pretty(&report).expect("reports always serialize")
    } else {
        table(&report)
    })
}
