//! The file-based commands: read, call the library, format.

use crate::Failure;
use catoptric::analysis::{trace_report, TraceReport};
use catoptric::error::{printable, Num};
use catoptric::format::{position_mm, scene_scale, sig, spot_um};
use catoptric::layout::{
    checked_link, decode_layout_bytes, decode_link, parse_layout, Layout, MAX_LAYOUT_BYTES, MAX_RAYS_PER_SOURCE, MAX_RAYS_TOTAL,
};
use catoptric::trace::{work_estimate, WORK_BUDGET};
use catoptric::{trace::TraceOptions, Scene};
use std::fmt::Write as _;
use std::io::Read as _;

/// Reads a layout file of at most [`MAX_LAYOUT_BYTES`], whatever it is (a
/// pipe or a device has no size to check first: reading stops one byte
/// past the cap), in UTF-8 or UTF-16 as the page reads it.
pub fn read_layout(path: &str) -> Result<Layout, Failure> {
    let cannot = |e: std::io::Error| Failure::input(format!("{path}: cannot read: {e}"));
    let file = std::fs::File::open(path).map_err(cannot)?;
    let mut bytes = Vec::new();
    file.take(MAX_LAYOUT_BYTES + 1).read_to_end(&mut bytes).map_err(cannot)?;
    if bytes.len() as u64 > MAX_LAYOUT_BYTES {
        return Err(Failure::input(format!("{path}: larger than {} MiB, the most a layout may be", MAX_LAYOUT_BYTES >> 20)));
    }
    let text = decode_layout_bytes(&bytes).map_err(|e| Failure::input(format!("{path}: {e}")))?;
    parse_layout(&text).map_err(|e| Failure::input(format!("{path}: {e}")))
}

pub fn to_json<T: serde::Serialize>(v: &T) -> String {
    serde_json::to_string_pretty(v).expect("reports always serialize")
}

/// The `trace` command's options.
pub struct TraceArgs {
    pub rays: Option<u64>,
    pub threads: Option<usize>,
    pub allow_long: bool,
    pub max_hits: Option<u64>,
}

pub fn trace(path: &str, args: TraceArgs, json: bool) -> Result<String, Failure> {
    let TraceArgs { rays, threads, allow_long, max_hits } = args;
    let threads = crate::bench::check_threads(threads)?;
    let layout = read_layout(path)?;
    if let Some(n) = rays {
        if n == 0 || n > MAX_RAYS_PER_SOURCE {
            return Err(Failure::input(format!("--rays: must be between 1 and {MAX_RAYS_PER_SOURCE} (got {n})")));
        }
        let total = n.saturating_mul(layout.sources.len() as u64);
        if total > MAX_RAYS_TOTAL {
            return Err(Failure::input(format!(
                "--rays: {n} rays for each of {} sources is {total} in all; at most {MAX_RAYS_TOTAL} are allowed",
                layout.sources.len()
            )));
        }
    }
    let scene = Scene::compile(&layout);
    let total_rays = match rays {
        Some(n) => n * layout.sources.len() as u64,
        None => layout.sources.iter().map(|s| s.rays()).sum(),
    };
    let long = !within_budget(path, &layout, &scene, total_rays, allow_long)?;
    let opts = TraceOptions { rays: rays.map(|n| n as usize), threads, max_hits, ..Default::default() };
    let mut last = std::time::Instant::now();
    let res = catoptric::trace::trace_with(&scene, opts, &mut |done, total| {
        // A long trace says how far it is, on stderr, now and then.
        if long && (last.elapsed().as_secs_f64() > 1.0 || done == total) {
            last = std::time::Instant::now();
            eprintln!("catoptric: traced {done} of {total} rays");
        }
    });
    if let Some(limit) = res.limit {
        return Err(Failure::input(format!("{path}: {limit}")));
    }
    let report = trace_report(&scene, &res);
    Ok(if json { to_json(&report) } else { table(&layout, &report) })
}

/// Whether a trace of `total_rays` stays within the work budget; above it
/// an error unless `allow_long` (then `Ok(false)`: a long trace).
pub fn within_budget(path: &str, layout: &Layout, scene: &Scene, total_rays: u64, allow_long: bool) -> Result<bool, Failure> {
    let work = work_estimate(scene, total_rays);
    if work <= WORK_BUDGET {
        return Ok(true);
    }
    if allow_long {
        return Ok(false);
    }
    Err(Failure::input(format!(
        "{path}: this trace could take up to {work:.1e} ray–element tests ({total_rays} rays, max_bounces {}, {} elements), \
         above the budget of {WORK_BUDGET:.0e}; lower the rays or max_bounces, or pass --allow-long",
        layout.max_bounces,
        layout.elements.len()
    )))
}

fn table(layout: &Layout, r: &TraceReport) -> String {
    let mut s = String::new();
    // Positions and shifts below this scene's noise print 0 (src/format.rs).
    let scale = scene_scale(layout);
    let _ = writeln!(s, "{}", printable(&layout.name));
    let _ = writeln!(
        s,
        "rays launched {}   escaped {}   absorbed {}",
        r.rays_launched, r.rays_escaped, r.rays_absorbed
    );
    for sc in &r.screens {
        let _ = writeln!(s, "\nscreen {}: {} hits, {:.4} W", printable(&sc.id), sc.hits, Num(sc.power_w));
        if sc.crossings > sc.hits {
            let _ = writeln!(s, "  rays come back: {} crossings in all (each ray counted once above)", sc.crossings);
        }
        if sc.by_source.is_empty() {
            let _ = writeln!(s, "  (no light)");
            continue;
        }
        let _ = writeln!(
            s,
            "  {:<14} {:>9} {:>12} {:>22} {:>14} {:>14}",
            "source", "hits", "power W", "centroid u, v (mm)", "RMS radius", "max radius"
        );
        for b in &sc.by_source {
            let _ = writeln!(
                s,
                "  {:<14} {:>9} {:>12.5} {:>22} {:>14} {:>14}",
                printable(&b.source),
                b.hits,
                Num(b.power_w),
                format!("{}, {}", position_mm(b.centroid_mm[0], scale, 5), position_mm(b.centroid_mm[1], scale, 5)),
                spot_um(b.rms_radius_um, 4),
                spot_um(b.max_radius_um, 4)
            );
            source_lines(&mut s, b, scale);
        }
        let f = &sc.flux;
        let _ = writeln!(
            s,
            "  flux: peak {} W/m² ({}), mean {} W/m² (power / screen area), intercept {}",
            sig(f.peak_w_m2, 4),
            opt(f.peak_suns.map(|v| format!("{} suns", sig(v, 4))), "no beam"),
            sig(f.mean_w_m2, 4),
            opt(f.intercept.map(|v| format!("{:.4}", Num(v))), "—")
        );
    }
    let sun = layout.sources.iter().any(|x| matches!(x, catoptric::layout::Source::Beam(b) if b.sun_half_angle_mrad > 0.0));
    if sun {
        let _ = writeln!(
            s,
            "\nCaution: concentrated sunlight burns skin, starts fires and injures eyes in an instant. \
             Never look toward a focus; follow local codes and qualified practice."
        );
    }
    s
}

fn opt(v: Option<String>, none: &str) -> String {
    v.unwrap_or_else(|| none.to_string())
}

/// The focus, wavefront and energy figures of one source, indented.
fn source_lines(s: &mut String, b: &catoptric::analysis::SourceReport, scale: f64) {
    let f3 = |v: Option<f64>, unit: &str| opt(v.map(|x| format!("{:.3} {unit}", Num(x))), "—");
    let spot = |v: Option<f64>| opt(v.map(|x| spot_um(x, 4)), "—");
    let _ = writeln!(
        s,
        "    best focus {} (+ along the screen axis), RMS at best {}; working f/{}, Airy radius {} (1.22 λN)",
        opt(b.best_focus_shift_mm.map(|x| format!("{}\u{202f}mm", position_mm(x, scale, 5))), "—"),
        spot(b.rms_radius_at_best_um),
        opt(b.f_number.map(|x| sig(x, 4)), "—"),
        spot(b.airy_radius_um),
    );
    let _ = writeln!(
        s,
        "    wavefront P-V {}, RMS {}, Strehl {} (exp(−(2π·RMS)²)), diffraction limited {} (RMS ≤ λ/14)",
        f3(b.wavefront_pv_waves, "waves"),
        f3(b.wavefront_rms_waves, "waves"),
        opt(b.strehl_estimate.map(|x| format!("{:.3}", Num(x))), "—"),
        opt(b.diffraction_limited.map(|x| if x { "yes".into() } else { "no".into() }), "—"),
    );
    let _ = writeln!(
        s,
        "    encircled energy about the centroid: 50 % within {}, 80 % within {}",
        spot(b.ee50_radius_um),
        spot(b.ee80_radius_um),
    );
}

pub fn link(path: &str, json: bool) -> Result<String, Failure> {
    let layout = read_layout(path)?;
    let frag = checked_link(&layout).map_err(|e| Failure::input(format!("{path}: {e}")))?;
    Ok(if json { to_json(&serde_json::json!({ "fragment": frag })) } else { frag })
}

pub fn unlink(fragment: &str, json: bool) -> Result<String, Failure> {
    let layout = decode_link(fragment).map_err(Failure::input)?;
    let _ = json; // the output is JSON either way
    Ok(layout.to_json_pretty())
}

/// Flags of the commands that trace a layout many times (`tolerance`,
/// `optimise`).
#[derive(clap::Args)]
pub struct RepeatedTraces {
    /// Rays per source in each trace (default: each source's own count;
    /// `tolerance` takes at most 20000).
    #[arg(long)]
    pub rays: Option<usize>,
    /// Threads (default: every core); the result is the same whatever the count.
    #[arg(long)]
    pub threads: Option<usize>,
    /// Machine-readable output.
    #[arg(long)]
    pub json: bool,
}
