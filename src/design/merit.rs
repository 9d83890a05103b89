//! Figures of merit of a layout on one screen — RMS spot radius, Strehl
//! ratio, intercept — shared by the tolerance analysis and the optimiser
//! (docs/FORMATS.md §3, `tolerance` and `optimise`).
//!
//! A [`Target`] is a screen and the sources that count (one, or all).
//! Over several sources the figures are pooled: the RMS radius is taken
//! about each source's own centroid and the mean squares are averaged
//! weighted by hits (so field points count alike and a screen position can
//! be judged); the Strehl ratio is the hit-weighted mean of the sources'
//! Strehl ratios; the intercept is the first-arrival power of the chosen
//! sources on the screen over the power they launched.
//!
//! The Strehl ratio is the diffraction image's (`analysis::psf`: the PSF
//! peak over the unaberrated peak of the same pupil, at best focus, on a
//! [`MERIT_PSF_GRID`] pupil grid, as the page's readout), valid at any
//! aberration; behind one function ([`strehl`]).

use crate::analysis::{focus_fit, psf, spot_stats, FocusFit, PsfFocus, PsfOptions};
use crate::error::InputError;
use crate::layout::{validate, Element, Layout, Source};
use crate::scene::Scene;
use crate::trace::{trace, TraceOptions, TraceResult};

/// The screen and sources a figure of merit is about.
#[derive(Debug, Clone, PartialEq)]
pub struct Target {
    /// Index among the layout's screens (the trace's screen order).
    pub screen: usize,
    /// Index among the layout's elements.
    pub element: usize,
    /// Indices into the layout's sources.
    pub sources: Vec<usize>,
}

impl Target {
    /// Resolves a screen id (the first screen when `None`) and a source id
    /// (every source when `None` or `"all"`). Errors name `screen` or
    /// `source`.
    pub fn new(layout: &Layout, screen: Option<&str>, source: Option<&str>) -> Result<Target, InputError> {
        let screens: Vec<(usize, &str)> = layout
            .elements
            .iter()
            .enumerate()
            .filter(|(_, e)| matches!(e, Element::Screen(_)))
            .map(|(i, e)| (i, e.id()))
            .collect();
        let names = |v: Vec<&str>| v.iter().map(|s| format!("`{s}`")).collect::<Vec<_>>().join(", ");
        if screens.is_empty() {
            return Err(InputError::new("screen", "the layout has no screen to measure on"));
        }
        let k = match screen {
            None => 0,
            Some(id) => screens.iter().position(|(_, s)| *s == id).ok_or_else(|| {
                InputError::new(
                    "screen",
                    format!("no screen has the id `{id}`; screens: {}", names(screens.iter().map(|s| s.1).collect())),
                )
            })?,
        };
        if layout.sources.is_empty() {
            return Err(InputError::new("source", "the layout has no source"));
        }
        let sources = match source {
            None | Some("all") => (0..layout.sources.len()).collect(),
            Some(id) => vec![layout.sources.iter().position(|s| s.id() == id).ok_or_else(|| {
                InputError::new(
                    "source",
                    format!(
                        "no source has the id `{id}`; sources: {} (or all)",
                        names(layout.sources.iter().map(|s| s.id()).collect())
                    ),
                )
            })?],
        };
        Ok(Target { screen: k, element: screens[k].0, sources })
    }

    /// True when a chosen source is an extended solar disk (no single
    /// wavefront).
    pub fn has_extended(&self, layout: &Layout) -> bool {
        self.sources
            .iter()
            .any(|&s| matches!(&layout.sources[s], Source::Beam(b) if b.sun_half_angle_mrad > 0.0))
    }
}

/// The figures of one trace on the target.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Figures {
    /// Pooled RMS spot radius on the screen, µm; `None` with no hits.
    pub rms_radius_um: Option<f64>,
    /// Hit-weighted mean Strehl ratio; `None` when no chosen source has a
    /// wavefront (too few hits, an extended solar source).
    pub strehl: Option<f64>,
    /// Fraction of the chosen sources' launched power reaching the screen.
    pub intercept: f64,
    /// First arrivals of the chosen sources.
    pub hits: u64,
}

/// Pupil grid of the Strehl ratio's diffraction image: the page readout's,
/// fine enough for the figure and quick enough for hundreds of trials.
pub const MERIT_PSF_GRID: usize = 128;

/// The Strehl ratio of one source on one screen (`None` where it means
/// nothing: too few hits, rays arriving parallel): the PSF Strehl at best
/// focus (`catoptric psf --grid 128`).
pub fn strehl(scene: &Scene, res: &TraceResult, screen: usize, source: usize) -> Option<f64> {
    let opts = PsfOptions { screen, source, at: PsfFocus::Best, grid: MERIT_PSF_GRID };
    psf(scene, res, &opts).ok().map(|p| p.report.strehl)
}

/// Traces a validated layout with `rays` per source (each source's own
/// count when `None`).
pub fn trace_layout(layout: &Layout, rays: Option<usize>, threads: Option<usize>) -> (Scene, TraceResult) {
    let scene = Scene::compile(layout);
    let res = trace(&scene, TraceOptions { rays, threads, ..Default::default() });
    (scene, res)
}

/// The figures of a finished trace.
pub fn figures(layout: &Layout, scene: &Scene, res: &TraceResult, t: &Target) -> Figures {
    let h = &res.screens[t.screen];
    let (mut n, mut ms, mut sw, mut sn, mut power, mut launched) = (0u64, 0.0, 0.0, 0u64, 0.0, 0.0);
    for &s in &t.sources {
        launched += res.power_by_source.get(s).copied().unwrap_or(0.0);
        let st = spot_stats(h, Some(s as u32));
        power += st.power_w;
        if st.hits == 0 {
            continue;
        }
        n += st.hits;
        ms += st.hits as f64 * st.rms_radius * st.rms_radius;
        let extended = matches!(&layout.sources[s], Source::Beam(b) if b.sun_half_angle_mrad > 0.0);
        if !extended
            && let Some(v) = strehl(scene, res, t.screen, s) {
                sw += st.hits as f64 * v;
                sn += st.hits;
            }
    }
    Figures {
        rms_radius_um: (n > 0).then(|| (ms / n as f64).sqrt() * 1e3),
        strehl: (sn > 0).then(|| sw / sn as f64),
        intercept: if launched > 0.0 { power / launched } else { 0.0 },
        hits: n,
    }
}

/// The screen shift (mm, along the screen's axis) that makes the pooled
/// RMS radius smallest: the pooled quadratic Σ nₛ(aₛ + 2bₛs + cₛs²) of the
/// sources' focus fits; `None` when the rays arrive parallel.
pub fn best_shift(res: &TraceResult, t: &Target) -> Option<f64> {
    let h = &res.screens[t.screen];
    let (mut n, mut b, mut c) = (0usize, 0.0, 0.0);
    for &s in &t.sources {
        if let Some(f) = focus_fit(h, Some(s as u32)) {
            n += f.hits;
            b += f.hits as f64 * f.b;
            c += f.hits as f64 * f.c;
        }
    }
    let (b, c) = (b / n.max(1) as f64, c / n.max(1) as f64);
    let pooled = FocusFit { hits: n, centroid: [0.0; 2], mean_slope: [0.0; 2], a: 0.0, b, c };
    pooled.best_shift()
}

/// Moves the target's screen by `shift` mm along its own axis.
pub fn move_screen(layout: &mut Layout, t: &Target, shift: f64) {
    if let Element::Screen(s) = &mut layout.elements[t.element] {
        let (sin, cos) = s.axis_deg.to_radians().sin_cos();
        s.center = [s.center[0] + shift * sin, s.center[1] + shift * cos];
    }
}

/// Traces `layout` and measures the target; with `refocus`, the screen is
/// first moved to the pooled best focus of a first trace and the layout
/// traced again there (as a maker refocuses). Returns the figures and the
/// layout measured. The layout must be valid.
pub fn measure(layout: &Layout, t: &Target, rays: Option<usize>, threads: Option<usize>, refocus: bool) -> (Figures, Layout) {
    let (scene, res) = trace_layout(layout, rays, threads);
    if refocus
        && let Some(s) = best_shift(&res, t) {
            let mut moved = layout.clone();
            move_screen(&mut moved, t, s);
            if validate(&moved).is_ok() {
                let (scene, res) = trace_layout(&moved, rays, threads);
                return (figures(&moved, &scene, &res, t), moved);
            }
        }
    (figures(layout, &scene, &res, t), layout.clone())
}
