//! `sun` and `day`: the sun's position, and a layout swept through a day.

use crate::commands::read_layout;
use crate::Failure;
use catoptric::error::{printable, Num};
use catoptric::sun::{check_place, day_sweep, parse_time, sun_position, Atmosphere, DayReport, DayRequest};
use catoptric::layout::MAX_RAYS_PER_SOURCE;
use catoptric::trace::TraceOptions;
use catoptric::InputError;
use std::fmt::Write as _;

#[derive(clap::Args)]
pub struct SunArgs {
    /// Latitude, degrees north (−90 … 90).
    #[arg(long, allow_negative_numbers = true)]
    latitude: f64,
    /// Longitude, degrees east (−180 … 180).
    #[arg(long, allow_negative_numbers = true)]
    longitude: f64,
    /// ISO 8601 time; without an offset it is local standard time at the
    /// longitude (round(λ/15) hours from UTC).
    #[arg(long)]
    time: String,
    /// Height above sea level, m.
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    elevation_m: f64,
    #[arg(long)]
    json: bool,
}

#[derive(clap::Args)]
pub struct DayArgs {
    /// Layout file (.json) with a `site` and a sun beam.
    layout: String,
    /// Date, YYYY-MM-DD.
    #[arg(long)]
    date: String,
    /// First step, HH:MM local standard time (default: sunrise).
    #[arg(long)]
    from: Option<String>,
    /// Last step, HH:MM, inclusive (default: sunset).
    #[arg(long)]
    to: Option<String>,
    /// Minutes between steps.
    #[arg(long, default_value_t = 10)]
    step_min: u32,
    /// Threads to trace on (default: every core).
    #[arg(long)]
    threads: Option<usize>,
    /// Rays per source at each step, instead of each source's own count.
    #[arg(long, allow_negative_numbers = true)]
    rays: Option<u64>,
    #[arg(long)]
    json: bool,
}

/// An error of the library named by the flag it came from.
fn flag(e: InputError, flag: &str) -> Failure {
    Failure::input(InputError::new(flag, e.message))
}

pub fn sun(a: SunArgs) -> Result<String, Failure> {
    check_place(a.latitude, a.longitude, ("--latitude", "--longitude")).map_err(Failure::input)?;
    if !a.elevation_m.is_finite() || !(-500.0..=10_000.0).contains(&a.elevation_m) {
        return Err(Failure::input("--elevation-m: must be between -500 and 10000 m"));
    }
    let t = parse_time(&a.time, a.longitude, "--time").map_err(Failure::input)?;
    let p = sun_position(a.latitude, a.longitude, a.elevation_m, &t, Atmosphere::default(), None).map_err(|e| flag(e, "--time"))?;
    if a.json {
        return Ok(serde_json::to_string_pretty(&p).expect("positions serialize"));
    }
    Ok(format!(
        "sun at {}: azimuth {:.4}° (clockwise from north), elevation {:.4}° (refraction included), zenith {:.4}°",
        t.format("%Y-%m-%dT%H:%M:%S%:z"),
        Num(p.azimuth_deg),
        Num(p.elevation_deg),
        Num(p.zenith_deg)
    ))
}

pub fn day(a: DayArgs) -> Result<String, Failure> {
    let threads = crate::bench::check_threads(a.threads)?;
    let layout = read_layout(&a.layout)?;
    if let Some(n) = a.rays
        && (n == 0 || n > MAX_RAYS_PER_SOURCE) {
            return Err(Failure::input(format!("--rays: must be between 1 and {MAX_RAYS_PER_SOURCE} (got {n})")));
        }
    let req = DayRequest { date: a.date, from: a.from, to: a.to, step_min: a.step_min };
    let opts = TraceOptions { threads, rays: a.rays.map(|n| n as usize), ..Default::default() };
    let report = day_sweep(&layout, &req, opts).map_err(|e| {
        if e.field.starts_with("--") { Failure::input(e) } else { Failure::input(format!("{}: {e}", a.layout)) }
    })?;
    if a.json {
        return Ok(serde_json::to_string_pretty(&report).expect("reports serialize"));
    }
    Ok(table(&layout.name, &report))
}

fn table(name: &str, r: &DayReport) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "{}", printable(name));
    let _ = writeln!(s, "{:<26} {:>9} {:>9}  screens (peak suns at [u, v] mm, power W)", "time", "azimuth°", "elev.°");
    for st in &r.steps {
        let _ = write!(s, "{:<26} {:>9.2} {:>9.2} ", st.time, Num(st.azimuth_deg), Num(st.elevation_deg));
        if st.screens.is_empty() {
            let _ = write!(s, " (sun down)");
        }
        for sc in &st.screens {
            let _ = write!(
                s,
                " {}: {} at [{:.0}, {:.0}], {:.1} W;",
                printable(&sc.id),
                sc.peak_suns.map_or("—".to_string(), |v| format!("{:.1}", Num(v))),
                Num(sc.peak_at_mm[0]),
                Num(sc.peak_at_mm[1]),
                Num(sc.power_w)
            );
        }
        let _ = writeln!(s);
    }
    match &r.worst {
        Some(w) => {
            let _ = writeln!(s, "\nworst: {:.1} suns on {} at {}", Num(w.peak_suns), printable(&w.screen), w.time);
        }
        None => {
            let _ = writeln!(s, "\nthe sun does not rise on this day");
        }
    }
    let _ = writeln!(
        s,
        "\nCaution: concentrated sunlight burns skin, starts fires and injures eyes in an instant. \
         Never look toward a focus; follow local codes and qualified practice."
    );
    s
}
