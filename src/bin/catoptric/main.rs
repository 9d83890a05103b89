//! `catoptric`: the command-line front end. Glue only: argument parsing,
//! file reading and printing around library calls.

mod bench;
mod commands;
mod design_cmd;
mod huge_pages;
mod mirror_test_cmd;
mod psf_cmd;
mod optimise_cmd;
mod serve;
mod sun_cmd;
mod tolerance_cmd;
mod usage;

use clap::{CommandFactory as _, Parser, Subcommand};
use std::process::ExitCode;

#[global_allocator]
static ALLOCATOR: huge_pages::HugePages = huge_pages::HugePages;

#[derive(Parser)]
#[command(name = "catoptric", version, about = "Ray-optics workbench for curved mirrors")]
struct Cli {
    #[command(subcommand)]
    cmd: Cmd,
}

#[derive(Subcommand)]
enum Cmd {
    /// Trace a layout file and report where the light lands.
    Trace {
        /// Layout file (.json).
        layout: String,
        /// Rays per source, instead of each source's own count.
        #[arg(long, allow_negative_numbers = true)]
        rays: Option<u64>,
        /// Threads to trace on (default: every core); the result is the
        /// same whatever the count.
        #[arg(long)]
        threads: Option<usize>,
        /// Trace even when the layout's worst case is above the work
        /// budget (progress goes to stderr).
        #[arg(long)]
        allow_long: bool,
        /// Most screen hits to record (tests only; default the documented cap).
        #[arg(long, hide = true)]
        max_hits: Option<u64>,
        /// Machine-readable output.
        #[arg(long)]
        json: bool,
    },
    /// Print the share-link fragment (#L=…) of a layout file.
    Link {
        layout: String,
        #[arg(long)]
        json: bool,
    },
    /// Print the layout JSON carried by a share-link fragment.
    Unlink {
        fragment: String,
        #[arg(long)]
        json: bool,
    },
    /// Closed-form designers (two-mirror telescopes, off-axis paraboloids).
    Design {
        #[command(subcommand)]
        what: design_cmd::DesignCmd,
    },
    /// Compare conic constants for one vertex radius and aperture.
    Compare(design_cmd::CompareArgs),
    /// Knife-edge readings for a centre-of-curvature test.
    Zones(design_cmd::ZonesArgs),
    /// Ronchi test simulated: band edges and the picture the eye sees.
    Ronchi(mirror_test_cmd::RonchiArgs),
    /// Knife-edge test simulated: null zone, lit fraction and the picture.
    Knife(mirror_test_cmd::KnifeArgs),
    /// Diffraction image of one source on one screen: PSF, Strehl, MTF, Zernike terms.
    Psf(psf_cmd::PsfArgs),
    /// Monte Carlo of making and alignment errors, and a sensitivity table.
    Tolerance(tolerance_cmd::ToleranceArgs),
    /// Damped least squares over layout fields (conics, spacings, screen position).
    Optimise(optimise_cmd::OptimiseArgs),
    /// Serve the browser workbench from 127.0.0.1.
    Serve(serve::ServeArgs),
    /// The sun's azimuth and elevation at a place and time (NREL SPA).
    Sun(sun_cmd::SunArgs),
    /// Sweep a layout with a site through a day: the sun turned to each
    /// step, peak flux per screen, the worst moment.
    Day(sun_cmd::DayArgs),
    /// Measure tracing speed on the standard scenes.
    Bench {
        /// Rays for the paraboloid scene.
        #[arg(long, default_value_t = 1_000_000)]
        rays: u64,
        /// Threads (default: every core); `--threads 1` gives the per-core figure.
        #[arg(long)]
        threads: Option<usize>,
        #[arg(long)]
        json: bool,
    },
}

/// A failed command: message for stderr and the exit code.
pub struct Failure {
    pub code: u8,
    pub message: String,
}

impl Failure {
    /// Bad input (exit code 2).
    pub fn input(message: impl std::fmt::Display) -> Self {
        Failure { code: 2, message: message.to_string() }
    }
}

fn main() -> ExitCode {
    huge_pages::keep_c_heap();
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) if matches!(e.kind(), clap::error::ErrorKind::DisplayHelp | clap::error::ErrorKind::DisplayVersion) => e.exit(),
        Err(e) => return fail(Failure::input(usage::line(&e, &Cli::command()))),
    };
    let out = match cli.cmd {
        Cmd::Trace { layout, rays, threads, allow_long, max_hits, json } => {
            commands::trace(&layout, commands::TraceArgs { rays, threads, allow_long, max_hits }, json)
        }
        Cmd::Link { layout, json } => commands::link(&layout, json),
        Cmd::Unlink { fragment, json } => commands::unlink(&fragment, json),
        Cmd::Design { what } => design_cmd::design(what),
        Cmd::Compare(a) => design_cmd::compare(a),
        Cmd::Zones(a) => design_cmd::zones(a),
        Cmd::Ronchi(a) => mirror_test_cmd::ronchi(a),
        Cmd::Knife(a) => mirror_test_cmd::knife(a),
        Cmd::Psf(a) => psf_cmd::run(a),
        Cmd::Tolerance(a) => tolerance_cmd::run(a),
        Cmd::Optimise(a) => optimise_cmd::run(a),
        Cmd::Serve(a) => serve::run(a),
        Cmd::Bench { rays, threads, json } => bench::run(rays, threads, json),
        Cmd::Sun(a) => sun_cmd::sun(a),
        Cmd::Day(a) => sun_cmd::day(a),
    };
    match out {
        Ok(text) => {
            // A closed pipe (`catoptric bench | head`) is not an error worth a panic.
            use std::io::Write as _;
            let mut out = std::io::stdout().lock();
            let nl = if text.ends_with('\n') { "" } else { "\n" };
            let _ = write!(out, "{text}{nl}").and_then(|_| out.flush());
            ExitCode::SUCCESS
        }
        Err(f) => fail(f),
    }
}

/// Prints a failure as one terminal-safe line on stderr.
fn fail(f: Failure) -> ExitCode {
    use catoptric::error::{printable, shorten_numbers};
    eprintln!("catoptric: {}", printable(&shorten_numbers(&f.message)));
    ExitCode::from(f.code)
}
