//! `tolerance`: argument parsing and printing around
//! `catoptric::design::tolerance`.

use crate::design_cmd::{input, to_json};
use crate::Failure;
use catoptric::design::tolerance::{tolerance, ToleranceReport, ToleranceSpec};
use catoptric::error::{printable, Num};
use clap::Args;
use std::fmt::Write as _;

#[derive(Args)]
pub struct ToleranceArgs {
    /// Layout file (.json).
    layout: String,
    /// Screen to measure on.
    #[arg(long)]
    screen: String,
    /// Source to measure (default: every source, pooled).
    #[arg(long)]
    source: Option<String>,
    /// Monte Carlo trials.
    #[arg(long, default_value_t = 200)]
    trials: usize,
    /// Seed of the draws (the same seed repeats exactly).
    #[arg(long, default_value_t = 1)]
    seed: u64,
    /// Decentre of each mirror along its local y, ± mm.
    #[arg(long, allow_hyphen_values = true, default_value_t = 0.0)]
    decenter_mm: f64,
    /// Tilt of each mirror in the layout plane, ± arcminutes.
    #[arg(long, allow_hyphen_values = true, default_value_t = 0.0)]
    tilt_arcmin: f64,
    /// Despace of each mirror along its own axis, ± mm.
    #[arg(long, allow_hyphen_values = true, default_value_t = 0.0)]
    despace_mm: f64,
    /// Vertex radius error, ± percent of |R|.
    #[arg(long, allow_hyphen_values = true, default_value_t = 0.0)]
    radius_pct: f64,
    /// Conic constant error, ± absolute.
    #[arg(long, allow_hyphen_values = true, default_value_t = 0.0)]
    conic: f64,
    /// Move the screen to best focus in every trial (as a maker refocuses).
    #[arg(long)]
    refocus: bool,
    #[command(flatten)]
    run: crate::commands::RepeatedTraces,
}

pub fn run(a: ToleranceArgs) -> Result<String, Failure> {
    let threads = crate::bench::check_threads(a.run.threads)?;
    let layout = crate::commands::read_layout(&a.layout)?;
    let spec = ToleranceSpec {
        screen: Some(a.screen),
        source: a.source,
        trials: a.trials,
        seed: a.seed,
        decenter_mm: a.decenter_mm,
        tilt_arcmin: a.tilt_arcmin,
        despace_mm: a.despace_mm,
        radius_pct: a.radius_pct,
        conic: a.conic,
        refocus: a.refocus,
        rays: a.run.rays,
    };
    let r = tolerance(&layout, &spec, threads).map_err(input)?;
    Ok(if a.run.json { to_json(&r) } else { table(&r, spec.refocus) })
}

fn opt(v: Option<f64>, prec: usize) -> String {
    v.map_or_else(|| "—".to_string(), |x| format!("{:.prec$}", Num(x)))
}

fn table(r: &ToleranceReport, refocus: bool) -> String {
    let mut s = String::new();
    let at = if refocus { "refocused each trial" } else { "screen where it is" };
    let _ = writeln!(s, "{} trials, {at}", r.trials);
    let n = &r.nominal;
    let _ = writeln!(
        s,
        "nominal: RMS radius {} µm, Strehl {} (PSF at best focus), intercept {:.4}",
        opt(n.rms_radius_um, 3),
        opt(n.strehl, 3),
        Num(n.intercept)
    );
    let q = &r.rms_radius_um;
    let _ = writeln!(s, "RMS radius µm:  p50 {}  p90 {}  p99 {}  max {}", opt(q.p50, 3), opt(q.p90, 3), opt(q.p99, 3), opt(q.max, 3));
    let t = &r.strehl;
    let _ = writeln!(s, "Strehl:         p10 {}  p50 {}  p90 {}", opt(t.p10, 4), opt(t.p50, 4), opt(t.p90, 4));
    let i = &r.intercept;
    let _ = writeln!(s, "intercept:      p10 {}  p50 {}  p90 {}", opt(i.p10, 4), opt(i.p50, 4), opt(i.p90, 4));
    if r.sensitivity.is_empty() {
        return s;
    }
    let _ = writeln!(s, "\nsensitivity (one step alone, both signs averaged), largest RMS change first:");
    let _ = writeln!(s, "  {:<14} {:<10} {:>10} {:>16} {:>12}", "mirror", "parameter", "step", "Δ RMS radius µm", "Δ Strehl");
    let mut rows: Vec<_> = r.sensitivity.iter().collect();
    rows.sort_by(|a, b| b.d_rms_radius_um.unwrap_or(0.0).abs().total_cmp(&a.d_rms_radius_um.unwrap_or(0.0).abs()));
    for x in rows {
        let _ = writeln!(
            s,
            "  {:<14} {:<10} {:>10} {:>16} {:>12}",
            printable(&x.element),
            x.parameter,
            Num(x.step).to_string(),
            opt(x.d_rms_radius_um, 3),
            opt(x.d_strehl, 4)
        );
    }
    s
}
