//! The exit pupil of one source on one screen: each ray's wavefront error
//! at its pupil point, and the same wavefront resampled onto an N×N grid
//! with the real pupil's shape and amplitude.
//!
//! # Pupil coordinates
//!
//! A ray's pupil point is its direction cosines across the mean arriving
//! direction m: x = d·ex, y = d·ey, with ex the screen's u axis and ey its
//! v axis, each made perpendicular to m (Gram–Schmidt, in that order). So
//! pupil x runs along screen u, pupil y along screen v (the tangential
//! direction), and θ turns from +x toward +y. The unit pupil is centred on
//! the weighted centroid of the lit pupil and its radius is the outermost
//! ray's (the lit pupil's outer rim).
//!
//! # Wavefront
//!
//! W = reference path − ray path, in waves, positive where the ray arrives
//! early: the negative of the path to the reference sphere that
//! `wavefront.rs` measures (OPL + d·(P − H), P the sphere's centre). With
//! this sign a positive x-tilt term means the light focuses toward +u of
//! the reference point, and a positive defocus term means the reference
//! plane lies beyond the focus (downstream of it).
//!
//! # Resampling
//!
//! The rays' pupil points are triangulated (Delaunay); triangles with an
//! edge longer than [`LONG_EDGE`] times the median edge span a hole, a
//! shadow or a gap and are dropped, so the grid's lit cells take the real
//! pupil's shape (central hole, secondary shadow, clipped edge). A lit
//! cell's wavefront is interpolated linearly in its triangle. Its amplitude
//! is the square root of the local power per unit pupil area: the rays'
//! weights deposited on the grid and divided by the lit area, both summed
//! over a box of about [`DENSITY_SPACINGS`] ray spacings (a normalised
//! convolution, so the rim is not darkened).

use super::select::Subset;
use super::wavefront::Fit;
use crate::geometry::Vec3;

/// Triangles with an edge longer than this many median edges are gaps in
/// the pupil, not part of it.
pub const LONG_EDGE: f64 = 3.0;

/// Half-width of the box over which the rays' power is averaged into an
/// amplitude, in ray spacings.
pub const DENSITY_SPACINGS: f64 = 2.5;

/// A central hole counts as an obscuration when no ray comes nearer the
/// pupil centre than this many ray spacings.
pub const HOLE_SPACINGS: f64 = 3.0;

/// The wavefront at each ray's pupil point.
#[derive(Debug, Clone, Default)]
pub struct PupilRays {
    /// Unit-pupil coordinates (see the module doc).
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    /// The rays' weights (power; equal when the source carries none).
    pub weight: Vec<f64>,
    /// W = reference path − ray path, waves, relative to the first ray.
    pub opd_waves: Vec<f64>,
    /// Radius of the unit pupil in direction cosines (the image-space
    /// numerical aperture of the rim about the pupil centre).
    pub rim: f64,
    /// Inner over outer radius of an annular pupil, 0 for a full disk.
    pub obscuration: f64,
}

/// The rays' wavefront about the reference sphere centred on `reference`
/// (screen frame, mm); `None` with fewer than 5 hits or when the rays
/// cancel or are parallel to the screen.
pub(crate) fn pupil_rays(sel: &Subset, reference: [f64; 3], wavelength_mm: f64) -> Option<PupilRays> {
    let f = Fit::start(sel, reference)?;
    let m = sel.mean_dir()?;
    let ex = Vec3::x() - m * m.x;
    let ex = ex.try_normalize(1e-9)?;
    let ey = Vec3::y() - m * m.y - ex * ex.y;
    let ey = ey.try_normalize(1e-9)?;
    let h = &*sel.h;
    let (u, v) = (sel.col(&h.u), sel.col(&h.v));
    let (du, dv, dw, opl) = (sel.col(&h.du), sel.col(&h.dv), sel.col(&h.dw), sel.col(&h.opl));
    let weight = sel.weights().into_owned();
    let n = sel.n;
    let mut out = PupilRays { x: Vec::with_capacity(n), y: Vec::with_capacity(n), opd_waves: Vec::with_capacity(n), ..Default::default() };
    let (mut cx, mut cy) = (0.0, 0.0);
    for k in 0..n {
        let (a, b) = (du[k] * ex.x + dv[k] * ex.y + dw[k] * ex.z, du[k] * ey.x + dv[k] * ey.y + dw[k] * ey.z);
        out.x.push(a);
        out.y.push(b);
        cx += weight[k] * a;
        cy += weight[k] * b;
        out.opd_waves.push(-f.sample_of(u[k], v[k], du[k], dv[k], dw[k], opl[k])[3] / wavelength_mm);
    }
    let (cx, cy) = (cx / sel.w, cy / sel.w);
    let (mut rmax, mut rmin) = (0.0f64, f64::INFINITY);
    for k in 0..n {
        out.x[k] -= cx;
        out.y[k] -= cy;
        let r = out.x[k].hypot(out.y[k]);
        rmax = rmax.max(r);
        rmin = rmin.min(r);
    }
    if !(rmax > 0.0 && rmax.is_finite()) || out.opd_waves.iter().any(|w| !w.is_finite()) {
        return None;
    }
    out.x.iter_mut().chain(out.y.iter_mut()).for_each(|c| *c /= rmax);
    let spacing = (std::f64::consts::PI / n as f64).sqrt();
    let eps = rmin / rmax;
    out.obscuration = if eps > HOLE_SPACINGS * spacing && eps < 1.0 { eps } else { 0.0 };
    out.rim = rmax;
    out.weight = weight;
    Some(out)
}

/// The pupil function on an N×N grid over the unit pupil's bounding
/// square: row i runs along pupil y, column j along x, cell centres at
/// −1 + (k + ½)·2/N. Dark cells have amplitude 0.
#[derive(Debug, Clone, Default)]
pub struct PupilGrid {
    pub n: usize,
    pub amplitude: Vec<f64>,
    pub opd_waves: Vec<f64>,
    /// Lit cells.
    pub lit: usize,
    /// Lit cells over the cells inside the unit disk (less the obscured
    /// centre): below 1 for a clipped or shadowed pupil.
    pub fill: f64,
}

impl PupilGrid {
    /// Largest change of the wavefront between neighbouring lit cells,
    /// waves: past ½ the grid cannot hold the phase and the PSF aliases.
    pub fn max_step_waves(&self) -> f64 {
        let n = self.n;
        let mut worst = 0.0f64;
        for i in 0..n {
            for j in 0..n {
                let c = i * n + j;
                if self.amplitude[c] <= 0.0 {
                    continue;
                }
                if j + 1 < n && self.amplitude[c + 1] > 0.0 {
                    worst = worst.max((self.opd_waves[c + 1] - self.opd_waves[c]).abs());
                }
                if i + 1 < n && self.amplitude[c + n] > 0.0 {
                    worst = worst.max((self.opd_waves[c + n] - self.opd_waves[c]).abs());
                }
            }
        }
        worst
    }
}

/// Resamples `values` (one per ray of `p`, waves) onto an `n`×`n` grid
/// (see the module doc). `None` when the rays do not span an area.
pub fn resample(p: &PupilRays, values: &[f64], n: usize) -> Option<PupilGrid> {
    let pts: Vec<delaunator::Point> = p.x.iter().zip(&p.y).map(|(&x, &y)| delaunator::Point { x, y }).collect();
    let tri = delaunator::triangulate(&pts);
    if tri.is_empty() {
        return None;
    }
    let edge = |a: usize, b: usize| (p.x[a] - p.x[b]).hypot(p.y[a] - p.y[b]);
    let mut edges: Vec<f64> = tri.triangles.chunks_exact(3).flat_map(|t| [edge(t[0], t[1]), edge(t[1], t[2]), edge(t[2], t[0])]).collect();
    let mid = edges.len() / 2;
    let median = *edges.select_nth_unstable_by(mid, f64::total_cmp).1;
    let long = LONG_EDGE * median;
    let cells = n * n;
    let mut opd = vec![0.0; cells];
    let mut lit = vec![false; cells];
    // Grid coordinate of a pupil coordinate: cell centres at integers.
    let g = |c: f64| (c + 1.0) * 0.5 * n as f64 - 0.5;
    for t in tri.triangles.chunks_exact(3) {
        let (a, b, c) = (t[0], t[1], t[2]);
        if edge(a, b) > long || edge(b, c) > long || edge(c, a) > long {
            continue;
        }
        let (ax, ay, bx, by, cx, cy) = (g(p.x[a]), g(p.y[a]), g(p.x[b]), g(p.y[b]), g(p.x[c]), g(p.y[c]));
        let det = (by - cy) * (ax - cx) + (cx - bx) * (ay - cy);
        if det.abs() < 1e-300 {
            continue;
        }
        let lo = |a: f64, b: f64, c: f64| a.min(b).min(c).ceil().max(0.0) as usize;
        let hi = |a: f64, b: f64, c: f64| (a.max(b).max(c).floor().min(n as f64 - 1.0)).max(-1.0);
        let (i0, i1) = (lo(ay, by, cy), hi(ay, by, cy));
        let (j0, j1) = (lo(ax, bx, cx), hi(ax, bx, cx));
        if i1 < 0.0 || j1 < 0.0 {
            continue;
        }
        for i in i0..=i1 as usize {
            for j in j0..=j1 as usize {
                let (px, py) = (j as f64, i as f64);
                let l1 = ((by - cy) * (px - cx) + (cx - bx) * (py - cy)) / det;
                let l2 = ((cy - ay) * (px - cx) + (ax - cx) * (py - cy)) / det;
                let l3 = 1.0 - l1 - l2;
                const IN: f64 = -1e-12;
                if l1 >= IN && l2 >= IN && l3 >= IN {
                    let k = i * n + j;
                    lit[k] = true;
                    opd[k] = l1 * values[a] + l2 * values[b] + l3 * values[c];
                }
            }
        }
    }
    let lit_count = lit.iter().filter(|&&l| l).count();
    if lit_count == 0 {
        return None;
    }
    // Power per unit area: a normalised box convolution of the deposited
    // weights and of the lit mask.
    let mut deposit = vec![0.0; cells];
    let cell = |c: f64| (g(c).round().max(0.0) as usize).min(n - 1);
    for k in 0..p.x.len() {
        deposit[cell(p.y[k]) * n + cell(p.x[k])] += p.weight[k];
    }
    let spacing_cells = (lit_count as f64 / p.x.len() as f64).sqrt();
    let half = (DENSITY_SPACINGS * spacing_cells).round().max(1.0) as usize;
    let mask: Vec<f64> = lit.iter().map(|&l| if l { 1.0 } else { 0.0 }).collect();
    let sd = summed_area(&deposit, n);
    let sm = summed_area(&mask, n);
    let mut amplitude = vec![0.0; cells];
    let mut total = 0.0;
    for i in 0..n {
        let (r0, r1) = (i.saturating_sub(half), (i + half + 1).min(n));
        for j in 0..n {
            let k = i * n + j;
            if !lit[k] {
                continue;
            }
            let (c0, c1) = (j.saturating_sub(half), (j + half + 1).min(n));
            let area = box_sum(&sm, n, r0, r1, c0, c1);
            let power = box_sum(&sd, n, r0, r1, c0, c1);
            let a = if area > 0.0 { (power / area).max(0.0).sqrt() } else { 0.0 };
            amplitude[k] = a;
            total += a;
        }
    }
    if !(total > 0.0 && total.is_finite()) {
        // Weightless rays: a uniform pupil.
        amplitude.iter_mut().zip(&lit).for_each(|(a, &l)| *a = if l { 1.0 } else { 0.0 });
    } else {
        let mean = total / lit_count as f64;
        amplitude.iter_mut().for_each(|a| *a /= mean);
    }
    // Cells whose centre lies in the unit disk outside the obscured centre.
    let mut inside = 0usize;
    for i in 0..n {
        for j in 0..n {
            let (x, y) = (-1.0 + (j as f64 + 0.5) * 2.0 / n as f64, -1.0 + (i as f64 + 0.5) * 2.0 / n as f64);
            let r = x.hypot(y);
            if r <= 1.0 && r >= p.obscuration {
                inside += 1;
            }
        }
    }
    let fill = if inside > 0 { lit_count as f64 / inside as f64 } else { 0.0 };
    Some(PupilGrid { n, amplitude, opd_waves: opd, lit: lit_count, fill })
}

/// Summed-area table with a zero first row and column ((n+1)² entries).
fn summed_area(a: &[f64], n: usize) -> Vec<f64> {
    let m = n + 1;
    let mut s = vec![0.0; m * m];
    for i in 0..n {
        let mut row = 0.0;
        for j in 0..n {
            row += a[i * n + j];
            s[(i + 1) * m + j + 1] = s[i * m + j + 1] + row;
        }
    }
    s
}

/// Sum over rows r0..r1 and columns c0..c1 (half-open) from a summed-area table.
fn box_sum(s: &[f64], n: usize, r0: usize, r1: usize, c0: usize, c1: usize) -> f64 {
    let m = n + 1;
    s[r1 * m + c1] - s[r0 * m + c1] - s[r1 * m + c0] + s[r0 * m + c0]
}
