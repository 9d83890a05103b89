//! The diffraction image of one source on one screen: the point spread
//! function by FFT of the pupil function, its Strehl ratio, the MTF, the
//! diffraction encircled energy and the wavefront's Zernike terms
//! (docs/FORMATS.md §3, `catoptric psf`).
//!
//! # Method
//!
//! The pupil (`pupil.rs`) is sampled on an N×N grid over the unit pupil's
//! bounding square, Δα = 2·rim/N apart in direction cosines, and zero
//! padded to M = [`PSF_PADDING`]·N. With the pupil function
//! P = A·exp(2πi W) (W in waves, positive where a ray arrives early), the
//! field in the reference plane is the forward DFT of P and the PSF its
//! squared modulus, with pixels λ/(M Δα) apart. Before the transform the
//! wavefront's least-squares piston and tilt are taken out: tilt only moves
//! the image, and centring it puts the peak on a pixel.
//!
//! - Strehl = max pixel / (Σ A)²: (Σ A)² is the peak of the unaberrated
//!   PSF of the same pupil (at the origin, where every term adds in phase).
//! - MTF: the OTF along an axis is the 1-D transform of the line spread
//!   function (the PSF summed across that axis; projection–slice theorem),
//!   normalised to 1 at zero frequency; frequency step Δα/λ. The padding
//!   (M ≥ 2N) keeps the pupil's autocorrelation from wrapping. The
//!   diffraction-limited curve is the same pupil with W = 0.
//! - Encircled energy about the PSF's centroid: pixels near the centre are
//!   split 8 × 8, the PSF interpolated bicubically at each subsample, so
//!   the circle's edge is followed within a pixel.
//!
//! # Focus
//!
//! `best`: the reference sphere is centred on the spot's centroid in the
//! plane of the best diffraction focus — the reference point that
//! `wavefront.rs` finds by removing tilt and defocus by least squares (the
//! smallest RMS wavefront). `screen`: centred on the centroid in the
//! screen plane, so the screen's defocus is in the figures.

use super::cone::f_number_of;
use super::focus::focus_fit_of;
use super::pupil::{pupil_rays, resample, PupilRays};
use super::select::Subset;
use super::wavefront::{strehl_from_rms, wavefront_of};
use super::zernike;
use super::CURVE_POINTS;
use crate::error::InputError;
use crate::layout::Source;
use crate::scene::Scene;
use crate::trace::TraceResult;
use nalgebra::{Matrix3, Vector3};
use rustfft::num_complex::Complex;
use rustfft::{Fft, FftPlanner};
use serde::Serialize;
use std::sync::Arc;

/// Pupil grid side when none is given.
pub const DEFAULT_PSF_GRID: usize = 256;
/// Smallest and largest pupil grid side (a power of two).
pub const MIN_PSF_GRID: usize = 32;
pub const MAX_PSF_GRID: usize = 512;
/// Zero padding of the pupil grid: the PSF grid is this many times wider.
/// 4× makes the pixel λN/4, enough for EE50/EE80 within 2 % of the Airy
/// values for a perfect pupil.
pub const PSF_PADDING: usize = 4;
/// Fewest hits a PSF is computed from.
pub const MIN_PSF_HITS: usize = 50;
/// Below this many hits the figures are rough and the report says so.
pub const FEW_PSF_HITS: usize = 500;
/// A pupil whose lit part covers less than this fraction of its disk (or
/// annulus) is partial: clipped, shadowed or vignetted.
pub const PARTIAL_PUPIL_FILL: f64 = 0.9;
/// Largest wavefront step between neighbouring grid cells (waves) the grid
/// holds without aliasing the PSF.
pub const ALIAS_STEP_WAVES: f64 = 0.5;
/// Pixels nearer the centroid than this (in pixels) are split for the
/// encircled energy.
const EE_SPLIT_RADIUS_PX: f64 = 16.0;
const EE_SPLIT: usize = 8;
/// Radial bins per pixel of the encircled-energy curve.
const EE_BINS_PER_PX: usize = 8;

/// Where the image is taken.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum PsfFocus {
    /// The best diffraction focus.
    Best,
    /// The screen plane.
    Screen,
}

impl PsfFocus {
    pub fn parse(s: &str) -> Option<PsfFocus> {
        match s {
            "best" => Some(PsfFocus::Best),
            "screen" => Some(PsfFocus::Screen),
            _ => None,
        }
    }
}

/// What to compute: screen and source indices (into `scene.screen_ids` and
/// `scene.sources`), the focus and the pupil grid side.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PsfOptions {
    pub screen: usize,
    pub source: usize,
    pub at: PsfFocus,
    pub grid: usize,
}

impl Default for PsfOptions {
    fn default() -> Self {
        PsfOptions { screen: 0, source: 0, at: PsfFocus::Best, grid: DEFAULT_PSF_GRID }
    }
}

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct PsfImageInfo {
    /// Pixel pitch in the reference plane, µm.
    pub pixel_um: f64,
    /// Pixels per side.
    pub size: usize,
    /// Peak over the unaberrated peak of the same pupil (= `strehl`).
    pub peak_relative: f64,
}

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct EeDiffraction {
    pub radius_um: Vec<f64>,
    pub fraction: Vec<f64>,
    pub ee50_um: Option<f64>,
    pub ee80_um: Option<f64>,
}

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct MtfCurves {
    /// 1/(λN), cycles per mm.
    pub cutoff_cyc_mm: f64,
    pub frequency_cyc_mm: Vec<f64>,
    /// Along screen v.
    pub tangential: Vec<f64>,
    /// Along screen u.
    pub sagittal: Vec<f64>,
    /// The same pupil without aberration, along v.
    pub diffraction_limited: Vec<f64>,
    /// The same pupil without aberration, along u (equal to the above for
    /// a round pupil).
    pub diffraction_limited_sagittal: Vec<f64>,
}

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ZernikeTerm {
    pub j: usize,
    pub n: u32,
    pub m: i32,
    pub name: &'static str,
    pub coefficient_waves: f64,
}

/// The `psf --json` document.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct PsfReport {
    pub screen: String,
    pub source: String,
    pub at: PsfFocus,
    pub wavelength_nm: f64,
    pub hits: usize,
    pub f_number: f64,
    /// Shift of the reference plane from the screen along its axis, mm
    /// (positive toward the light; 0 at the screen).
    pub focus_shift_mm: f64,
    pub strehl: f64,
    pub strehl_marechal: f64,
    /// RMS and P-V of the wavefront less piston and tilt, waves.
    pub wavefront_rms_waves: f64,
    pub wavefront_pv_waves: f64,
    /// Inner over outer radius of an annular pupil, 0 for a full disk.
    pub obscuration: f64,
    /// Lit fraction of the pupil's disk or annulus.
    pub pupil_fill: f64,
    /// `disk` or `annulus`: the region the Zernike terms were fitted over.
    pub zernike_pupil: &'static str,
    pub psf: PsfImageInfo,
    pub ee_diffraction: EeDiffraction,
    pub mtf: MtfCurves,
    pub zernike: Vec<ZernikeTerm>,
    /// What limits the figures (few hits, a partial pupil, aliasing).
    pub notes: Vec<String>,
}

/// The report and the image.
#[derive(Debug, Clone)]
pub struct Psf {
    pub report: PsfReport,
    /// M×M intensities relative to the unaberrated peak, row-major, rows
    /// along +v and columns along +u, the reference point at (M/2, M/2).
    pub image: Vec<f64>,
    pub side: usize,
    /// The PSF's centroid (column, row) in `image`, pixels.
    pub centroid_px: [f64; 2],
}

impl Psf {
    /// A `side`×`side` window of the image centred on the reference point
    /// (side at most the image's), as f32 for drawing.
    pub fn window(&self, side: usize) -> Vec<f32> {
        let m = self.side;
        let s = side.min(m);
        let off = m / 2 - s / 2;
        let mut out = Vec::with_capacity(s * s);
        for i in 0..s {
            let row = &self.image[(off + i) * m + off..(off + i) * m + off + s];
            out.extend(row.iter().map(|&v| v as f32));
        }
        out
    }
}

fn bad(field: &str, message: impl Into<String>) -> InputError {
    InputError::new(field, message)
}

/// Checks a pupil grid side: a power of two in [`MIN_PSF_GRID`]..=[`MAX_PSF_GRID`].
pub fn check_grid(grid: usize) -> Result<(), InputError> {
    if grid.is_power_of_two() && (MIN_PSF_GRID..=MAX_PSF_GRID).contains(&grid) {
        Ok(())
    } else {
        Err(bad("grid", format!("must be a power of two from {MIN_PSF_GRID} to {MAX_PSF_GRID} (got {grid})")))
    }
}

/// The PSF of `opts.source` on `opts.screen` (see the module doc). Bad
/// input — an index out of range, a bad grid, an extended source, too few
/// hits, parallel rays — is an [`InputError`] naming `screen`, `source` or
/// `grid`.
pub fn psf(scene: &Scene, res: &TraceResult, opts: &PsfOptions) -> Result<Psf, InputError> {
    check_grid(opts.grid)?;
    let screen_id = scene.screen_ids.get(opts.screen).ok_or_else(|| bad("screen", "no such screen in the layout"))?;
    let hits = res.screens.get(opts.screen).ok_or_else(|| bad("screen", "no such screen in the trace"))?;
    let source = scene.sources.get(opts.source).ok_or_else(|| bad("source", "no such source in the layout"))?;
    let sid = source.id();
    if matches!(source, Source::Beam(b) if b.sun_half_angle_mrad > 0.0) {
        return Err(bad(
            "source",
            format!("'{sid}' is an extended solar source (sun_half_angle_mrad > 0); a PSF needs a point source: a star beam (sun_half_angle_mrad 0) or a lamp"),
        ));
    }
    let sel = Subset::new(hits, Some(opts.source as u32));
    if sel.n == 0 {
        return Err(bad("screen", format!("no rays of source '{sid}' reach screen '{screen_id}'")));
    }
    if sel.n < MIN_PSF_HITS {
        return Err(bad("source", format!("only {} rays of '{sid}' reach screen '{screen_id}'; a PSF needs at least {MIN_PSF_HITS}", sel.n)));
    }
    let parallel = || bad("screen", format!("the rays of '{sid}' arrive parallel on screen '{screen_id}': they form no image there"));
    let lambda = scene.wavelength_mm;
    let fit = focus_fit_of(&sel).ok_or_else(parallel)?;
    let f_number = f_number_of(&sel).ok_or_else(parallel)?;
    let (reference, shift) = match opts.at {
        PsfFocus::Screen => {
            let c = sel.centroid();
            ([c[0], c[1], 0.0], 0.0)
        }
        PsfFocus::Best => {
            let start = fit.best_point().ok_or_else(parallel)?;
            let s = wavefront_of(&sel, start, lambda).map_or(start[2], |w| w.best_point[2]);
            let [u, v] = fit.centroid_at(s);
            ([u, v, s], s)
        }
    };
    let no_pupil = || bad("screen", format!("the rays of '{sid}' on screen '{screen_id}' do not fill an exit pupil"));
    let rays = pupil_rays(&sel, reference, lambda).ok_or_else(no_pupil)?;
    let residual = remove_tilt(&rays);
    let (mean, rms, pv) = weighted_stats(&residual, &rays.weight);
    let centred: Vec<f64> = residual.iter().map(|r| r - mean).collect();
    let grid = resample(&rays, &centred, opts.grid).ok_or_else(no_pupil)?;
    // Zernike terms of the whole wavefront (piston and tilt included),
    // relative to its weighted mean.
    let (wmean, _, _) = weighted_stats(&rays.opd_waves, &rays.weight);
    let w_rel: Vec<f64> = rays.opd_waves.iter().map(|w| w - wmean).collect();
    let coefs = zernike::fit(&rays.x, &rays.y, &rays.weight, &w_rel).unwrap_or([f64::NAN; zernike::TERMS]);
    let zernike = coefs
        .iter()
        .enumerate()
        .map(|(j, &c)| {
            let (n, m) = zernike::nm(j);
            ZernikeTerm { j, n, m, name: zernike::name(j), coefficient_waves: c }
        })
        .collect();

    let n = opts.grid;
    let m = PSF_PADDING * n;
    let fft = FftPlanner::<f64>::new().plan_fft_forward(m);
    // The unaberrated pupil first: its line spread functions only.
    let mut buf = vec![Complex::new(0.0, 0.0); m * m];
    let mut sum_a = 0.0;
    for i in 0..n {
        for j in 0..n {
            let a = grid.amplitude[i * n + j];
            buf[i * m + j] = Complex::new(a, 0.0);
            sum_a += a;
        }
    }
    let peak0 = sum_a * sum_a;
    fft2(&fft, &mut buf, m, n);
    let (lsf0_u, lsf0_v) = line_spreads(&buf, m);
    // The aberrated pupil.
    buf.iter_mut().for_each(|c| *c = Complex::new(0.0, 0.0));
    for i in 0..n {
        for j in 0..n {
            let k = i * n + j;
            let a = grid.amplitude[k];
            if a > 0.0 {
                buf[i * m + j] = Complex::from_polar(a, std::f64::consts::TAU * grid.opd_waves[k]);
            }
        }
    }
    fft2(&fft, &mut buf, m, n);
    let (lsf_u, lsf_v) = line_spreads(&buf, m);
    // Image centred at (M/2, M/2), relative to the unaberrated peak.
    let mut image = vec![0.0; m * m];
    let h = m / 2;
    for i in 0..m {
        let ri = (i + h) % m;
        for j in 0..m {
            image[ri * m + (j + h) % m] = buf[i * m + j].norm_sqr() / peak0;
        }
    }
    drop(buf);
    let strehl = image.iter().copied().fold(0.0, f64::max);

    let d_alpha = 2.0 * rays.rim / n as f64;
    let pixel_mm = lambda / (m as f64 * d_alpha);
    let cutoff = 1.0 / (lambda * f_number);
    let df = d_alpha / lambda;
    let freqs: Vec<f64> = (0..CURVE_POINTS).map(|k| cutoff * k as f64 / (CURVE_POINTS - 1) as f64).collect();
    let mtf_of = |lsf: &[f64]| {
        let otf = mtf_1d(lsf);
        freqs.iter().map(|&f| sample_linear(&otf, f / df)).collect::<Vec<f64>>()
    };
    let mtf = MtfCurves {
        cutoff_cyc_mm: cutoff,
        frequency_cyc_mm: freqs.clone(),
        tangential: mtf_of(&lsf_v),
        sagittal: mtf_of(&lsf_u),
        diffraction_limited: mtf_of(&lsf0_v),
        diffraction_limited_sagittal: mtf_of(&lsf0_u),
    };
    let airy_px = super::cone::airy_radius(lambda, f_number) / pixel_mm;
    let (ee, centroid_px) = encircled(&image, m, pixel_mm, airy_px);

    let mut notes = Vec::new();
    if sel.n < FEW_PSF_HITS {
        notes.push(format!("only {} hits: the pupil is coarsely sampled and the figures are rough", sel.n));
    }
    if grid.fill < PARTIAL_PUPIL_FILL {
        notes.push(format!("partial pupil: light fills {:.0} % of its disk", 100.0 * grid.fill));
    }
    if rays.obscuration > 0.0 {
        notes.push(format!("annular pupil (obscuration {:.3}): Zernike terms fitted over the annulus", rays.obscuration));
    }
    let step = grid.max_step_waves();
    if step > ALIAS_STEP_WAVES {
        notes.push(format!("the wavefront changes by {step:.2} waves between grid cells: the PSF is aliased; use a larger grid"));
    }
    let report = PsfReport {
        screen: screen_id.clone(),
        source: sid.to_string(),
        at: opts.at,
        wavelength_nm: lambda * 1e6,
        hits: sel.n,
        f_number,
        focus_shift_mm: shift,
        strehl,
        strehl_marechal: strehl_from_rms(rms),
        wavefront_rms_waves: rms,
        wavefront_pv_waves: pv,
        obscuration: rays.obscuration,
        pupil_fill: grid.fill.min(1.0),
        zernike_pupil: if rays.obscuration > 0.0 { "annulus" } else { "disk" },
        psf: PsfImageInfo { pixel_um: pixel_mm * 1e3, size: m, peak_relative: strehl },
        ee_diffraction: ee,
        mtf,
        zernike,
        notes,
    };
    Ok(Psf { report, image, side: m, centroid_px })
}

/// The rays' wavefront less its weighted least-squares piston and tilt.
fn remove_tilt(p: &PupilRays) -> Vec<f64> {
    let mut a = Matrix3::<f64>::zeros();
    let mut b = Vector3::<f64>::zeros();
    for k in 0..p.x.len() {
        let z = Vector3::new(1.0, p.x[k], p.y[k]);
        a += z * z.transpose() * p.weight[k];
        b += z * (p.weight[k] * p.opd_waves[k]);
    }
    let c = a.try_inverse().map_or(Vector3::zeros(), |inv| inv * b);
    (0..p.x.len()).map(|k| p.opd_waves[k] - c[0] - c[1] * p.x[k] - c[2] * p.y[k]).collect()
}

/// Weighted mean, RMS about it and P-V of `v`.
fn weighted_stats(v: &[f64], w: &[f64]) -> (f64, f64, f64) {
    let wt: f64 = w.iter().sum();
    let mean = v.iter().zip(w).map(|(a, b)| a * b).sum::<f64>() / wt;
    let var = v.iter().zip(w).map(|(a, b)| b * (a - mean) * (a - mean)).sum::<f64>() / wt;
    let (lo, hi) = v.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), &x| (l.min(x), h.max(x)));
    (mean, var.max(0.0).sqrt(), hi - lo)
}

/// In-place 2-D forward DFT of an M×M row-major array whose rows past
/// `rows` are zero.
fn fft2(fft: &Arc<dyn Fft<f64>>, buf: &mut [Complex<f64>], m: usize, rows: usize) {
    let mut scratch = vec![Complex::new(0.0, 0.0); fft.get_inplace_scratch_len()];
    fft.process_with_scratch(&mut buf[..rows * m], &mut scratch);
    let mut col = vec![Complex::new(0.0, 0.0); m];
    for j in 0..m {
        for i in 0..m {
            col[i] = buf[i * m + j];
        }
        fft.process_with_scratch(&mut col, &mut scratch);
        for i in 0..m {
            buf[i * m + j] = col[i];
        }
    }
}

/// The line spread functions of the PSF |buf|²: summed over rows (a
/// function of u) and over columns (a function of v).
fn line_spreads(buf: &[Complex<f64>], m: usize) -> (Vec<f64>, Vec<f64>) {
    let mut lu = vec![0.0; m];
    let mut lv = vec![0.0; m];
    for i in 0..m {
        for j in 0..m {
            let p = buf[i * m + j].norm_sqr();
            lu[j] += p;
            lv[i] += p;
        }
    }
    (lu, lv)
}

/// |OTF| along one axis from a line spread function, normalised at zero
/// frequency; non-negative frequencies only (M/2 + 1 samples).
fn mtf_1d(lsf: &[f64]) -> Vec<f64> {
    let m = lsf.len();
    let fft = FftPlanner::<f64>::new().plan_fft_forward(m);
    let mut b: Vec<Complex<f64>> = lsf.iter().map(|&v| Complex::new(v, 0.0)).collect();
    fft.process(&mut b);
    let zero = b[0].norm();
    b[..=m / 2].iter().map(|c| if zero > 0.0 { c.norm() / zero } else { 0.0 }).collect()
}

/// Linear interpolation of samples at fractional index `x` (0 past the end).
fn sample_linear(s: &[f64], x: f64) -> f64 {
    if x.is_nan() || x < 0.0 {
        return s.first().copied().unwrap_or(0.0);
    }
    let i = x.floor() as usize;
    if i + 1 >= s.len() {
        return if i + 1 == s.len() && x == i as f64 { s[i] } else { 0.0 };
    }
    let t = x - i as f64;
    s[i] * (1.0 - t) + s[i + 1] * t
}

/// Diffraction encircled energy about the image's centroid.
fn encircled(image: &[f64], m: usize, pixel_mm: f64, airy_px: f64) -> (EeDiffraction, [f64; 2]) {
    let (mut total, mut sx, mut sy) = (0.0, 0.0, 0.0);
    for i in 0..m {
        for j in 0..m {
            let p = image[i * m + j];
            total += p;
            sx += p * j as f64;
            sy += p * i as f64;
        }
    }
    let (cx, cy) = if total > 0.0 { (sx / total, sy / total) } else { ((m / 2) as f64, (m / 2) as f64) };
    let rmax = (m / 2) as f64;
    let nb = m / 2 * EE_BINS_PER_PX;
    let bins_per_px = EE_BINS_PER_PX as f64;
    let mut bins = vec![0.0; nb];
    // Each sample's energy is shared between the two nearest bin centres
    // (cloud in cell), so the curve has no steps from the sample lattice.
    let add = |r: f64, e: f64, bins: &mut Vec<f64>| {
        let t = (r * bins_per_px - 0.5).max(0.0);
        let b = t as usize;
        let f = t - b as f64;
        if b + 1 < nb {
            bins[b] += e * (1.0 - f);
            bins[b + 1] += e * f;
        }
    };
    for i in 0..m {
        let dy = i as f64 - cy;
        for j in 0..m {
            let p = image[i * m + j];
            if p == 0.0 {
                continue;
            }
            let dx = j as f64 - cx;
            let r = dx.hypot(dy);
            if r > rmax + 1.0 {
                continue;
            }
            if r < EE_SPLIT_RADIUS_PX && i >= 2 && j >= 2 && i + 3 < m && j + 3 < m {
                // Subsamples interpolated bicubically (Catmull–Rom): the
                // PSF is sampled finer than its Nyquist rate, and a pixel
                // taken as flat misplaces ~3 % of the core's energy.
                let k = 1.0 / (EE_SPLIT * EE_SPLIT) as f64;
                for a in 0..EE_SPLIT {
                    let oy = (a as f64 + 0.5) / EE_SPLIT as f64 - 0.5;
                    for b in 0..EE_SPLIT {
                        let ox = (b as f64 + 0.5) / EE_SPLIT as f64 - 0.5;
                        let e = k * bicubic(image, m, i as f64 + oy, j as f64 + ox);
                        add((dx + ox).hypot(dy + oy), e, &mut bins);
                    }
                }
            } else {
                add(r, p, &mut bins);
            }
        }
    }
    // cum[b] = energy within radius (b + 1)/bins_per_px pixels.
    let mut cum = Vec::with_capacity(nb + 1);
    cum.push(0.0);
    let mut acc = 0.0;
    for b in &bins {
        acc += b;
        cum.push(if total > 0.0 { acc / total } else { 0.0 });
    }
    // EE at radius r px: cum sampled at r·bins_per_px.
    let at = |r: f64| sample_linear(&cum, r * bins_per_px).min(1.0);
    let radius_for = |f: f64| {
        let b = cum.iter().position(|&c| c >= f)?;
        if b == 0 {
            return Some(0.0);
        }
        let (c0, c1) = (cum[b - 1], cum[b]);
        let t = if c1 > c0 { (f - c0) / (c1 - c0) } else { 0.0 };
        Some(((b - 1) as f64 + t) / bins_per_px)
    };
    let r95 = radius_for(0.95).unwrap_or(rmax);
    let r_out = (1.2 * r95).max(3.0 * airy_px).min(rmax);
    let um = pixel_mm * 1e3;
    let radius_px: Vec<f64> = (0..CURVE_POINTS).map(|k| r_out * k as f64 / (CURVE_POINTS - 1) as f64).collect();
    let ee = EeDiffraction {
        fraction: radius_px.iter().map(|&r| at(r)).collect(),
        radius_um: radius_px.iter().map(|r| r * um).collect(),
        ee50_um: radius_for(0.5).map(|r| r * um),
        ee80_um: radius_for(0.8).map(|r| r * um),
    };
    (ee, [cx, cy])
}

/// Catmull–Rom weights of the samples at −1, 0, 1, 2 for a point `t` past 0.
fn catmull_rom(t: f64) -> [f64; 4] {
    let (t2, t3) = (t * t, t * t * t);
    [(-t3 + 2.0 * t2 - t) / 2.0, (3.0 * t3 - 5.0 * t2 + 2.0) / 2.0, (-3.0 * t3 + 4.0 * t2 + t) / 2.0, (t3 - t2) / 2.0]
}

/// The image at fractional (row, column) `(y, x)`, bicubic; the caller
/// keeps the point a pixel inside the image's edges.
fn bicubic(image: &[f64], m: usize, y: f64, x: f64) -> f64 {
    let (i0, j0) = (y.floor(), x.floor());
    let (wy, wx) = (catmull_rom(y - i0), catmull_rom(x - j0));
    let (i0, j0) = (i0 as usize - 1, j0 as usize - 1);
    let mut s = 0.0;
    for (a, wa) in wy.iter().enumerate() {
        let row = &image[(i0 + a) * m + j0..(i0 + a) * m + j0 + 4];
        s += wa * (wx[0] * row[0] + wx[1] * row[1] + wx[2] * row[2] + wx[3] * row[3]);
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn catmull_rom_weights_are_keys_cubic_convolution() {
        // Keys, "Cubic convolution interpolation for digital image
        // processing", IEEE Trans. ASSP 29, 1153 (1981), with a = −1/2
        // (the Catmull–Rom spline): at the half-way point the weights are
        // (−1, 9, 9, −1)/16; at a sample, that sample alone; and the
        // interpolant reproduces any quadratic exactly.
        assert_eq!(catmull_rom(0.5), [-1.0 / 16.0, 9.0 / 16.0, 9.0 / 16.0, -1.0 / 16.0]);
        assert_eq!(catmull_rom(0.0), [0.0, 1.0, 0.0, 0.0]);
        for t in [0.1, 0.25, 0.7, 0.9] {
            let w = catmull_rom(t);
            let f = |x: f64| 3.0 - 2.0 * x + 5.0 * x * x;
            let got = w[0] * f(-1.0) + w[1] * f(0.0) + w[2] * f(1.0) + w[3] * f(2.0);
            assert!((got - f(t)).abs() < 1e-12, "t = {t}: {got} vs {}", f(t));
        }
        // Bicubic: separable, so a quadratic in both directions is
        // reproduced too, read at a point a pixel inside the edges.
        let m = 6;
        let g = |y: f64, x: f64| 1.0 + 0.5 * x - 0.25 * y + 0.125 * x * y + 0.0625 * x * x - 0.03125 * y * y;
        let image: Vec<f64> = (0..m * m).map(|k| g((k / m) as f64, (k % m) as f64)).collect();
        for (y, x) in [(1.0, 1.0), (2.3, 1.6), (3.75, 3.2)] {
            assert!((bicubic(&image, m, y, x) - g(y, x)).abs() < 1e-12, "at ({y}, {x})");
        }
    }

    #[test]
    fn linear_sampling_interpolates_and_ends_as_documented() {
        // Linear interpolation between neighbouring samples (common
        // practice); the first sample below the start, the last sample
        // exactly at its index, 0 past the end.
        let s = [1.0, 3.0, 7.0];
        for (x, want) in [(0.0, 1.0), (0.5, 2.0), (1.0, 3.0), (1.25, 4.0), (1.5, 5.0), (2.0, 7.0), (2.5, 0.0), (3.0, 0.0), (10.0, 0.0), (-1.0, 1.0), (f64::NAN, 1.0)] {
            assert_eq!(sample_linear(&s, x), want, "at {x}");
        }
        assert_eq!(sample_linear(&[], 0.5), 0.0);
        assert_eq!(sample_linear(&[], -1.0), 0.0);
    }
}
