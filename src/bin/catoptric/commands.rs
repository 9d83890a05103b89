//! The file-based commands: read, call the library, format.

use crate::Failure;
use catoptric::analysis::{trace_report, TraceReport};
use catoptric::layout::{decode_link, encode_link, parse_layout, Layout, MAX_RAYS_PER_SOURCE};
use catoptric::{trace::TraceOptions, Scene};
use std::fmt::Write as _;

/// Largest layout file read, bytes.
const MAX_FILE_BYTES: u64 = 16 << 20;

pub fn read_layout(path: &str) -> Result<Layout, Failure> {
    let meta = std::fs::metadata(path).map_err(|e| Failure::input(format!("{path}: cannot read: {e}")))?;
    if meta.len() > MAX_FILE_BYTES {
        return Err(Failure::input(format!("{path}: file is larger than 16 MiB")));
    }
    let bytes = std::fs::read(path).map_err(|e| Failure::input(format!("{path}: cannot read: {e}")))?;
    let text = String::from_utf8(bytes).map_err(|_| Failure::input(format!("{path}: not UTF-8 text")))?;
    parse_layout(&text).map_err(|e| Failure::input(format!("{path}: {e}")))
}

fn to_json<T: serde::Serialize>(v: &T) -> String {
    serde_json::to_string_pretty(v).expect("reports always serialize")
}

pub fn trace(path: &str, rays: Option<u64>, json: bool) -> Result<String, Failure> {
    let layout = read_layout(path)?;
    if let Some(n) = rays {
        if n == 0 || n > MAX_RAYS_PER_SOURCE {
            return Err(Failure::input(format!("--rays: must be between 1 and {MAX_RAYS_PER_SOURCE} (got {n})")));
        }
    }
    let scene = Scene::compile(&layout);
    let res = catoptric::trace(&scene, TraceOptions { rays: rays.map(|n| n as usize) });
    let report = trace_report(&scene, &res);
    Ok(if json { to_json(&report) } else { table(&layout, &report) })
}

fn table(layout: &Layout, r: &TraceReport) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "{}", layout.name);
    let _ = writeln!(
        s,
        "rays launched {}   escaped {}   absorbed {}",
        r.rays_launched, r.rays_escaped, r.rays_absorbed
    );
    for sc in &r.screens {
        let _ = writeln!(s, "\nscreen {}: {} hits, {:.4} W", sc.id, sc.hits, sc.power_w);
        if sc.by_source.is_empty() {
            let _ = writeln!(s, "  (no light)");
            continue;
        }
        let _ = writeln!(
            s,
            "  {:<14} {:>9} {:>12} {:>22} {:>14} {:>14}",
            "source", "hits", "power W", "centroid u, v (mm)", "RMS radius µm", "max radius µm"
        );
        for b in &sc.by_source {
            let _ = writeln!(
                s,
                "  {:<14} {:>9} {:>12.5} {:>22} {:>14.3} {:>14.3}",
                b.source,
                b.hits,
                b.power_w,
                format!("{:.5}, {:.5}", b.centroid_mm[0], b.centroid_mm[1]),
                b.rms_radius_um,
                b.max_radius_um
            );
        }
    }
    s
}

pub fn link(path: &str, json: bool) -> Result<String, Failure> {
    let layout = read_layout(path)?;
    let frag = encode_link(&layout);
    Ok(if json { to_json(&serde_json::json!({ "fragment": frag })) } else { frag })
}

pub fn unlink(fragment: &str, json: bool) -> Result<String, Failure> {
    let layout = decode_link(fragment).map_err(Failure::input)?;
    let _ = json; // the output is JSON either way
    Ok(layout.to_json_pretty())
}
