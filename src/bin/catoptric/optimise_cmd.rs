//! `optimise`: argument parsing and printing around
//! `catoptric::design::optimise`.

use crate::design_cmd::{input, to_json};
use crate::Failure;
use catoptric::design::optimise::{optimise, Goal, OptimiseSpec};
use catoptric::error::{printable, Num};
use clap::Args;
use std::fmt::Write as _;

#[derive(Args)]
pub struct OptimiseArgs {
    /// Layout file (.json).
    layout: String,
    /// Fields to vary, comma-separated paths: elements[1].profile.conic,
    /// secondary.profile.conic, focus.center[1], …
    #[arg(long, required = true)]
    vary: String,
    /// rms (spot radius), wavefront (RMS at best focus) or intercept.
    #[arg(long)]
    goal: String,
    /// Screen to judge on (default: the first).
    #[arg(long)]
    screen: Option<String>,
    /// Source id, or all (default).
    #[arg(long)]
    source: Option<String>,
    /// Write the optimised layout to this file.
    #[arg(long)]
    out: Option<String>,
    #[command(flatten)]
    run: crate::commands::RepeatedTraces,
}

pub fn run(a: OptimiseArgs) -> Result<String, Failure> {
    let threads = crate::bench::check_threads(a.run.threads)?;
    let layout = crate::commands::read_layout(&a.layout)?;
    let goal = Goal::parse(&a.goal).map_err(input)?;
    let vary: Vec<String> = a.vary.split(',').map(|p| p.trim().to_string()).collect();
    if vary.iter().any(String::is_empty) {
        return Err(Failure::input("--vary: an empty path; give comma-separated field paths such as secondary.profile.conic"));
    }
    let spec = OptimiseSpec { vary, goal, screen: a.screen, source: a.source, rays: a.run.rays, threads };
    let r = optimise(&layout, &spec, &mut |_, _| {}).map_err(input)?;
    if let Some(p) = &a.out {
        std::fs::write(p, r.layout.to_json_pretty() + "\n").map_err(|e| Failure::input(format!("--out: cannot write {p}: {e}")))?;
    }
    if a.run.json {
        return Ok(to_json(&r));
    }
    let unit = match goal {
        Goal::Rms => "µm RMS radius",
        Goal::Wavefront => "waves RMS at best focus",
        Goal::Intercept => "intercept",
    };
    let v = |x: Option<f64>| x.map_or_else(|| "—".to_string(), |x| format!("{:.6}", Num(x)));
    let mut s = String::new();
    let _ = writeln!(s, "goal {}: {} → {} {unit} in {} iterations", goal.name(), v(r.start), v(r.end), r.iterations);
    for x in &r.variables {
        let _ = writeln!(s, "  {:<32} {:>16} → {:>16}", printable(&x.path), format!("{:.8}", Num(x.start)), format!("{:.8}", Num(x.end)));
    }
    if let Some(p) = &a.out {
        let _ = writeln!(s, "optimised layout written to {}", printable(p));
    }
    Ok(s)
}
