//! `psf`: the diffraction image of one source on one screen — argument
//! checks and printing around `catoptric::analysis::psf`.

use crate::commands::{read_layout, to_json, within_budget};
use crate::Failure;
use catoptric::analysis::{psf, PsfFocus, PsfOptions, PsfReport, DEFAULT_PSF_GRID};
use catoptric::error::{printable, Num};
use catoptric::Scene;
use clap::Args;
use std::fmt::Write as _;

#[derive(Args)]
pub struct PsfArgs {
    /// Layout file (.json).
    layout: String,
    /// Screen id (default: the first screen).
    #[arg(long)]
    screen: Option<String>,
    /// Source id (default: the first source).
    #[arg(long)]
    source: Option<String>,
    /// Where the image is taken: `best` (best diffraction focus) or `screen`.
    #[arg(long, default_value = "best")]
    at: String,
    /// Pupil grid side, a power of two (the PSF grid is 4 times wider).
    #[arg(long, allow_negative_numbers = true, default_value_t = DEFAULT_PSF_GRID as u64)]
    grid: u64,
    /// Machine-readable output.
    #[arg(long)]
    json: bool,
}

/// Position of `id` in `ids`, or a `--flag` error listing the choices.
fn find(ids: &[&str], id: Option<&str>, flag: &str, what: &str) -> Result<usize, Failure> {
    match id {
        None if ids.is_empty() => Err(Failure::input(format!("{flag}: the layout has no {what}"))),
        None => Ok(0),
        Some(id) => ids.iter().position(|s| *s == id).ok_or_else(|| {
            Failure::input(format!("{flag}: no {what} '{id}' in the layout (there: {})", ids.join(", ")))
        }),
    }
}

pub fn run(a: PsfArgs) -> Result<String, Failure> {
    let at = PsfFocus::parse(&a.at).ok_or_else(|| Failure::input(format!("--at: must be best or screen (got '{}')", a.at)))?;
    let grid = usize::try_from(a.grid).unwrap_or(usize::MAX);
    catoptric::analysis::check_grid(grid).map_err(|e| Failure::input(format!("--{e}")))?;
    let layout = read_layout(&a.layout)?;
    let scene = Scene::compile(&layout);
    let screens: Vec<&str> = scene.screen_ids.iter().map(String::as_str).collect();
    let sources: Vec<&str> = scene.sources.iter().map(|s| s.id()).collect();
    let screen = find(&screens, a.screen.as_deref(), "--screen", "screen")?;
    let source = find(&sources, a.source.as_deref(), "--source", "source")?;
    let total: u64 = layout.sources.iter().map(|s| s.rays()).sum();
    within_budget(&a.layout, &layout, &scene, total, false)?;
    let res = catoptric::trace::trace_with(&scene, Default::default(), &mut |_, _| {});
    if let Some(limit) = res.limit {
        return Err(Failure::input(format!("{}: {limit}", a.layout)));
    }
    let out = psf(&scene, &res, &PsfOptions { screen, source, at, grid }).map_err(|e| Failure::input(format!("--{e}")))?;
    Ok(if a.json { to_json(&out.report) } else { table(&out.report) })
}

fn table(r: &PsfReport) -> String {
    let mut s = String::new();
    let at = match r.at {
        PsfFocus::Best => format!("best focus ({:+.4} mm from the screen)", Num(r.focus_shift_mm)),
        PsfFocus::Screen => "the screen".to_string(),
    };
    let _ = writeln!(s, "PSF of {} on {} at {at}", printable(&r.source), printable(&r.screen));
    let _ = writeln!(s, "  {} hits, λ {:.1} nm, f/{:.3}, obscuration {:.3}", r.hits, Num(r.wavelength_nm), Num(r.f_number), Num(r.obscuration));
    let _ = writeln!(
        s,
        "  Strehl {:.4} (from the PSF; Maréchal exp(−(2πσ)²) {:.4})   wavefront RMS {:.4} waves, P-V {:.4} waves",
        Num(r.strehl),
        Num(r.strehl_marechal),
        Num(r.wavefront_rms_waves),
        Num(r.wavefront_pv_waves)
    );
    let opt = |v: Option<f64>| v.map_or("—".to_string(), |x| format!("{:.3} µm", Num(x)));
    let _ = writeln!(
        s,
        "  PSF {} px of {:.4} µm   encircled energy 50 % {}, 80 % {}",
        r.psf.size,
        Num(r.psf.pixel_um),
        opt(r.ee_diffraction.ee50_um),
        opt(r.ee_diffraction.ee80_um)
    );
    let _ = writeln!(s, "  MTF cutoff {:.2} cycles/mm", Num(r.mtf.cutoff_cyc_mm));
    let _ = writeln!(s, "  {:>8} {:>9} {:>9} {:>9}", "cyc/mm", "tang.", "sag.", "perfect");
    for k in (0..r.mtf.frequency_cyc_mm.len()).step_by(10) {
        let _ = writeln!(
            s,
            "  {:>8.2} {:>9.4} {:>9.4} {:>9.4}",
            Num(r.mtf.frequency_cyc_mm[k]),
            Num(r.mtf.tangential[k]),
            Num(r.mtf.sagittal[k]),
            Num(r.mtf.diffraction_limited[k])
        );
    }
    let _ = writeln!(s, "  Zernike terms (ANSI, RMS-normalised, waves; fitted over the {}):", r.zernike_pupil);
    for z in &r.zernike {
        let _ = writeln!(s, "  {:>3} ({}, {:>2}) {:<28} {:>10.5}", z.j, z.n, z.m, z.name, Num(z.coefficient_waves));
    }
    for n in &r.notes {
        let _ = writeln!(s, "  note: {n}");
    }
    s
}
