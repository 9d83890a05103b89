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
//! the weighted centroid of the lit pupil — which is m itself, since m is
//! the rays' power-weighted mean direction: Σ w·(d·ex) = |Σ w·d|·(m·ex) = 0
//! — and its radius is the outermost ray's (the lit pupil's outer rim).
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
    let (mut rmax, mut rmin) = (0.0f64, f64::INFINITY);
    for k in 0..n {
        // Centred by construction (module doc): no centroid to subtract.
        let (a, b) = (du[k] * ex.x + dv[k] * ex.y + dw[k] * ex.z, du[k] * ey.x + dv[k] * ey.y + dw[k] * ey.z);
        out.x.push(a);
        out.y.push(b);
        let r = a.hypot(b);
        rmax = rmax.max(r);
        rmin = rmin.min(r);
        out.opd_waves.push(-f.sample_of(u[k], v[k], du[k], dv[k], dw[k], opl[k])[3] / wavelength_mm);
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::trace::ScreenHits;

    const LAMBDA: f64 = 550e-6;

    /// Points spread evenly over the unit disk: Vogel's sunflower spiral
    /// (H. Vogel, Math. Biosci. 44 (1979) 179–189), radius √((k+½)/n),
    /// angle k times the golden angle.
    fn sunflower(n: usize) -> Vec<(f64, f64)> {
        let golden = std::f64::consts::PI * (3.0 - 5f64.sqrt());
        (0..n).map(|k| (((k as f64 + 0.5) / n as f64).sqrt(), k as f64 * golden)).collect()
    }

    /// Hits of rays d = cos θ·m + sin θ·(cos φ·e1 + sin φ·e2) converging on
    /// `p` (screen frame, p.z ahead of the screen), with a designed
    /// wavefront: each ray's path to p is shortened by λ·W(ρ, φ).
    fn converging(m: Vec3, rays: &[(f64, f64)], sin_max: f64, p: Vec3, wave: impl Fn(f64, f64) -> f64, weight: impl Fn(f64) -> f64) -> ScreenHits {
        // The test's own basis across m: e1 from m × z (not the code's).
        let e1 = m.cross(&Vec3::z()).normalize();
        let e2 = m.cross(&e1);
        let mut h = ScreenHits::default();
        for &(rho, phi) in rays {
            let s = rho * sin_max;
            let d = m * (1.0 - s * s).sqrt() + (e1 * phi.cos() + e2 * phi.sin()) * s;
            let t = p.z / d.z; // from the screen (z = 0) on to p
            let hit = p - d * t;
            h.u.push(hit.x);
            h.v.push(hit.y);
            h.du.push(d.x);
            h.dv.push(d.y);
            h.dw.push(d.z);
            h.opl.push(1000.0 - t - LAMBDA * wave(rho, phi));
            h.weight.push(weight(rho));
            h.source.push(0);
            h.first.push(true);
        }
        h
    }

    /// The sunflower's points and their opposites (φ + π): a set whose
    /// mean direction is exactly m, as for any symmetric pupil.
    fn paired(n: usize) -> Vec<(f64, f64)> {
        sunflower(n).into_iter().flat_map(|(r, a)| [(r, a), (r, a + std::f64::consts::PI)]).collect()
    }

    fn tilted() -> Vec3 {
        Vec3::new(0.3, -0.2, 1.0).normalize()
    }

    #[test]
    fn pupil_points_are_direction_cosines_across_the_mean_direction() {
        // Common practice: the exit pupil in direction cosines, the ray's
        // transverse direction component sin θ about the chief direction;
        // a cone of half-angle θmax fills the unit pupil, ρ = sin θ/sin θmax.
        // Light tilted out of both screen axes, so each axis's Gram–Schmidt
        // step matters; a spherical-plus-fourth-order wavefront of known
        // sign (positive = shorter path, arriving early).
        let m = tilted();
        let rays = paired(200);
        let (sin_max, p) = (0.12, Vec3::new(1.0, -2.0, 3.0));
        let wave = |rho: f64, _: f64| 0.8 * rho * rho - 0.3 * rho.powi(4);
        let h = converging(m, &rays, sin_max, p, wave, |_| 1.0);
        let sel = Subset::new(&h, Some(0));
        let r = pupil_rays(&sel, [p.x, p.y, p.z], LAMBDA).expect("a full cone");
        let rho_max = rays.iter().map(|r| r.0).fold(0.0, f64::max);
        assert!((r.rim - rho_max * sin_max).abs() < 1e-12, "rim {}", r.rim);
        assert_eq!(r.obscuration, 0.0, "a full disk");
        let w0 = wave(rays[0].0, 0.0);
        for (k, &(rho, phi)) in rays.iter().enumerate() {
            let got = r.x[k].hypot(r.y[k]);
            assert!((got - rho / rho_max).abs() < 1e-9, "ray {k}: ρ {got} against {}", rho / rho_max);
            assert!((r.opd_waves[k] - (wave(rho, phi) - w0)).abs() < 1e-6, "ray {k}: W {} against {}", r.opd_waves[k], wave(rho, phi) - w0);
        }
        assert_eq!(r.weight, vec![1.0; rays.len()]);
    }

    #[test]
    fn pupil_x_runs_along_screen_u_and_y_along_screen_v() {
        // The documented axes (module doc): a ray leaning from m toward
        // the screen's +u lies on the pupil's +x axis (y = 0); one leaning
        // toward +v has y > 0. Common practice for a right-handed pupil.
        let m = tilted();
        let mut rays = paired(25);
        let mut h = converging(m, &rays, 0.1, Vec3::new(0.0, 0.0, 2.0), |_, _| 0.0, |_| 1.0);
        for (k, lean) in [(0, Vec3::x()), (1, Vec3::y())] {
            let d = (m + lean * 0.05).normalize();
            (h.du[k], h.dv[k], h.dw[k]) = (d.x, d.y, d.z);
            rays[k] = (f64::NAN, f64::NAN);
        }
        let sel = Subset::new(&h, Some(0));
        let r = pupil_rays(&sel, [0.0, 0.0, 2.0], LAMBDA).unwrap();
        // The two leaning rays pull the mean direction a little; their
        // positions about it still lie where the axes say, to that pull.
        assert!(r.x[0] > 0.1 && r.y[0].abs() < 0.05 * r.x[0], "toward +u: ({}, {})", r.x[0], r.y[0]);
        assert!(r.y[1] > 0.1, "toward +v: ({}, {})", r.x[1], r.y[1]);
    }

    #[test]
    fn an_annular_cone_reports_its_obscuration_and_parallel_light_has_no_pupil() {
        // Obscuration ratio ε = inner/outer radius of the lit annulus
        // (common practice; e.g. a central hole). Rays inside sin θ ≥ 0.4
        // sin θmax only.
        let m = tilted();
        let rays: Vec<(f64, f64)> = paired(300).into_iter().map(|(r, a)| (0.4 + 0.6 * r, a)).collect();
        let h = converging(m, &rays, 0.1, Vec3::new(0.0, 0.0, 2.0), |_, _| 0.0, |_| 1.0);
        let r = pupil_rays(&Subset::new(&h, Some(0)), [0.0, 0.0, 2.0], LAMBDA).unwrap();
        let (lo, hi) = rays.iter().fold((f64::INFINITY, 0.0f64), |(l, h), r| (l.min(r.0), h.max(r.0)));
        assert!((r.obscuration - lo / hi).abs() < 1e-9, "ε {}", r.obscuration);

        // Every ray along the screen normal: no cone (every pupil point
        // exactly 0), no pupil to normalise.
        let mut parallel = ScreenHits::default();
        for k in 0..20 {
            parallel.extend_range(&h, 0..1);
            (parallel.u[k], parallel.v[k]) = (0.1 * k as f64, -0.05 * k as f64);
            (parallel.du[k], parallel.dv[k], parallel.dw[k]) = (0.0, 0.0, 1.0);
        }
        let sel = Subset::new(&parallel, Some(0));
        assert!(sel.mean_dir().is_some() && Fit::start(&sel, [0.0, 0.0, 2.0]).is_some(), "well-formed hits");
        assert!(pupil_rays(&sel, [0.0, 0.0, 2.0], LAMBDA).is_none());
    }

    /// Rays on a sunflower over the unit disk (or an annulus from `inner`)
    /// with values `f(x, y)` and weights `w(ρ)`.
    fn disk(n: usize, inner: f64, w: impl Fn(f64) -> f64) -> PupilRays {
        let mut p = PupilRays { rim: 0.1, obscuration: inner, ..Default::default() };
        for (rho, a) in sunflower(n) {
            // Evenly over the annulus: equal areas for equal steps of ρ².
            let rho = (inner * inner + (1.0 - inner * inner) * rho * rho).sqrt();
            p.x.push(rho * a.cos());
            p.y.push(rho * a.sin());
            p.weight.push(w(rho));
        }
        // Outermost ray exactly on the rim, as pupil_rays normalises.
        let s = p.x.iter().zip(&p.y).map(|(x, y)| x.hypot(*y)).fold(0.0, f64::max);
        p.x.iter_mut().chain(p.y.iter_mut()).for_each(|c| *c /= s);
        p.opd_waves = vec![0.0; n];
        p
    }

    fn centre(n: usize, k: usize) -> f64 {
        -1.0 + (k as f64 + 0.5) * 2.0 / n as f64
    }

    #[test]
    fn resampling_reproduces_a_tilted_plane_at_every_lit_cell() {
        // Linear interpolation in a triangle is exact for a linear function
        // (barycentric coordinates; e.g. de Berg et al., Computational
        // Geometry, 3rd ed., §9.1). The lit cells are the disk's: every cell
        // centre well inside lit, every one outside the unit disk dark.
        let p = disk(3000, 0.0, |_| 1.0);
        let values: Vec<f64> = p.x.iter().zip(&p.y).map(|(x, y)| 0.7 * x - 0.3 * y + 0.25).collect();
        let n = 32;
        let g = resample(&p, &values, n).unwrap();
        assert_eq!(g.n, n);
        let mut lit = 0;
        for i in 0..n {
            for j in 0..n {
                let (x, y) = (centre(n, j), centre(n, i));
                let k = i * n + j;
                let r = x.hypot(y);
                if r < 0.95 {
                    assert!(g.amplitude[k] > 0.0, "cell ({i}, {j}) at r = {r} dark");
                }
                if r > 1.0 + 1e-9 {
                    assert_eq!(g.amplitude[k], 0.0, "cell ({i}, {j}) at r = {r} lit");
                }
                if g.amplitude[k] > 0.0 {
                    lit += 1;
                    let want = 0.7 * x - 0.3 * y + 0.25;
                    assert!((g.opd_waves[k] - want).abs() < 1e-9, "cell ({i}, {j}): {} against {want}", g.opd_waves[k]);
                    // Evenly spread rays of equal power: a flat amplitude,
                    // the rim not darkened (the box's power is divided by
                    // its lit area).
                    let tol = if r < 0.8 { 0.1 } else { 0.3 };
                    assert!((g.amplitude[k] - 1.0).abs() < tol, "cell ({i}, {j}) at r = {r}: amplitude {}", g.amplitude[k]);
                }
            }
        }
        assert_eq!(g.lit, lit);
        assert!((g.fill - 1.0).abs() < 0.03, "fill {}", g.fill);
    }

    #[test]
    fn the_fill_counts_cell_centres_in_the_unit_disk() {
        // A 4×4 grid, cell centres at ±¼, ±¾: 12 lie in the unit disk
        // (r = 0.354 and 0.791; the corners' 1.061 do not), 8 once the
        // centre out to ε = 0.4 is obscured (these rays still light it: a
        // fill of 12/8). Counted by hand.
        let g = resample(&disk(3000, 0.0, |_| 1.0), &[0.0; 3000], 4).unwrap();
        assert_eq!((g.lit, g.fill), (12, 1.0));
        let mut p = disk(3000, 0.0, |_| 1.0);
        p.obscuration = 0.4;
        let g = resample(&p, &[0.0; 3000], 4).unwrap();
        assert_eq!((g.lit, g.fill), (12, 1.5));
        // No centre left to count (2×2 centres at r = 0.707, ε = 0.9): a
        // fill of 0, not 0/0.
        p.obscuration = 0.9;
        let g = resample(&p, &[0.0; 3000], 2).unwrap();
        assert_eq!((g.lit, g.fill), (4, 0.0));
    }

    #[test]
    fn weightless_rays_give_a_uniform_pupil() {
        // Rays that carry no power (a 0 W source) still define the pupil's
        // shape; every lit cell gets amplitude 1 (documented fallback).
        let g = resample(&disk(2000, 0.0, |_| 0.0), &[0.0; 2000], 16).unwrap();
        assert!(g.lit > 0);
        for (k, &a) in g.amplitude.iter().enumerate() {
            assert!(a == 0.0 || a == 1.0, "cell {k}: {a}");
        }
        assert_eq!(g.amplitude.iter().filter(|&&a| a == 1.0).count(), g.lit);
    }

    #[test]
    fn resampling_fills_a_randomly_sampled_pupil() {
        // Rays at random pupil points (a random sampling pattern) leave
        // edges of every length; the gap test scales with the median edge,
        // so the disk is still filled (common practice: a robust scale).
        // Points by a fixed integer hash (splitmix64's finaliser, S. Vigna).
        let hash = |k: u64| {
            let mut z = k.wrapping_add(1).wrapping_mul(0x9e37_79b9_7f4a_7c15);
            z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
            (z ^ (z >> 31)) as f64 / u64::MAX as f64
        };
        let mut p = disk(3000, 0.0, |_| 1.0);
        for k in 0..p.x.len() {
            let (r, a) = (hash(2 * k as u64).sqrt(), std::f64::consts::TAU * hash(2 * k as u64 + 1));
            (p.x[k], p.y[k]) = (r * a.cos(), r * a.sin());
        }
        let g = resample(&p, &vec![0.0; p.x.len()], 32).unwrap();
        assert!(g.fill > 0.95 && g.fill < 1.01, "fill {}", g.fill);
    }

    #[test]
    fn rays_beyond_the_unit_square_are_clipped_to_the_grid() {
        // A caller's points past ±1 (here a disk of radius 1.3): the grid
        // covers the unit square only, and every cell in it that the rays
        // surround is lit with the interpolated plane (as above).
        let mut p = disk(3000, 0.0, |_| 1.0);
        p.x.iter_mut().chain(p.y.iter_mut()).for_each(|c| *c *= 1.3);
        let values: Vec<f64> = p.x.iter().zip(&p.y).map(|(x, y)| 0.5 * x + 0.2 * y).collect();
        let n = 16;
        let g = resample(&p, &values, n).unwrap();
        for i in 0..n {
            for j in 0..n {
                let (x, y) = (centre(n, j), centre(n, i));
                if x.hypot(y) < 1.25 {
                    assert!((g.opd_waves[i * n + j] - (0.5 * x + 0.2 * y)).abs() < 1e-9 && g.amplitude[i * n + j] > 0.0, "cell ({i}, {j})");
                }
            }
        }
    }

    #[test]
    fn resampling_leaves_the_central_hole_dark() {
        // Triangles spanning the hole have edges of the hole's size, far
        // beyond the ray spacing: dropped, so the hole stays dark and the
        // annulus (cells between ε and 1) is filled. Common practice.
        let p = disk(3000, 0.4, |_| 1.0);
        let values = vec![0.0; p.x.len()];
        let n = 32;
        let g = resample(&p, &values, n).unwrap();
        for i in 0..n {
            for j in 0..n {
                let r = centre(n, j).hypot(centre(n, i));
                let a = g.amplitude[i * n + j];
                if r < 0.35 {
                    assert_eq!(a, 0.0, "hole cell ({i}, {j}) at r = {r} lit");
                } else if r > 0.45 && r < 0.95 {
                    assert!(a > 0.0, "annulus cell ({i}, {j}) at r = {r} dark");
                }
            }
        }
        assert!((g.fill - 1.0).abs() < 0.05, "fill of the annulus {}", g.fill);
    }

    #[test]
    fn resampled_amplitude_follows_the_square_root_of_the_power_density() {
        // Amplitude = √(intensity) (common practice, e.g. Goodman,
        // Introduction to Fourier Optics, 3rd ed., §6.1); with evenly
        // spread rays the power density is the weight profile, here a
        // Gaussian apodisation e^(−2ρ²), so amplitude ∝ e^(−ρ²). Up to the
        // averaging box of a few ray spacings.
        let p = disk(20000, 0.0, |r| (-2.0 * r * r).exp());
        let n = 32;
        let g = resample(&p, &vec![0.0; p.x.len()], n).unwrap();
        let mid = n / 2;
        let a0 = 0.25 * (g.amplitude[(mid - 1) * n + mid - 1] + g.amplitude[(mid - 1) * n + mid] + g.amplitude[mid * n + mid - 1] + g.amplitude[mid * n + mid]);
        let r0 = centre(n, mid).hypot(centre(n, mid));
        for i in 0..n {
            for j in 0..n {
                let r = centre(n, j).hypot(centre(n, i));
                if r < 0.75 {
                    let want = (r0 * r0 - r * r).exp();
                    let got = g.amplitude[i * n + j] / a0;
                    assert!((got - want).abs() < 0.03, "cell ({i}, {j}) at r = {r}: {got} against {want}");
                }
            }
        }
        // The amplitudes are scaled to a mean of 1 over the lit cells.
        let mean = g.amplitude.iter().sum::<f64>() / g.lit as f64;
        assert!((mean - 1.0).abs() < 1e-12, "mean {mean}");
    }

    #[test]
    fn one_rays_power_spreads_over_the_documented_box() {
        // The amplitude box (module doc): half-width DENSITY_SPACINGS ray
        // spacings, a spacing being √(lit cells / rays) cells, rounded. All
        // power in one ray: exactly the lit cells within that half-width of
        // its cell (in rows and columns) get light, evenly. A definition
        // check (common practice for a box filter).
        let mut p = disk(1250, 0.0, |_| 0.0);
        let k0 = (0..p.x.len()).min_by(|&a, &b| (p.x[a] - 0.3).hypot(p.y[a] + 0.2).total_cmp(&(p.x[b] - 0.3).hypot(p.y[b] + 0.2))).unwrap();
        p.weight[k0] = 1.0;
        let n = 32;
        let g = resample(&p, &vec![0.0; p.x.len()], n).unwrap();
        let half = (DENSITY_SPACINGS * (g.lit as f64 / p.x.len() as f64).sqrt()).round() as i64;
        assert_eq!(half, 2, "the case is meant to give a box of ±2 cells");
        let cell = |c: f64| ((c + 1.0) * 0.5 * n as f64 - 0.5).round() as i64;
        let (i0, j0) = (cell(p.y[k0]), cell(p.x[k0]));
        let mut seen = 0;
        for i in 0..n {
            for j in 0..n {
                let a = g.amplitude[i * n + j];
                let near = (i as i64 - i0).abs() <= half && (j as i64 - j0).abs() <= half;
                assert_eq!(a > 0.0, near, "cell ({i}, {j}), ray at ({i0}, {j0})");
                if near {
                    assert!((a - g.amplitude[i0 as usize * n + j0 as usize]).abs() < 1e-12, "uneven in the box");
                    seen += 1;
                }
            }
        }
        assert_eq!(seen, 25);
    }

    #[test]
    fn the_largest_step_is_taken_between_lit_neighbours_only() {
        // Definition (module doc): the largest |ΔW| between lit cells side
        // by side along a row or a column, the Nyquist test of the phase
        // (common practice). A 3×3 grid worked by hand:
        //   W: 0.0 0.1 0.9      lit: 1 1 0
        //      0.2 0.5 0.6           1 1 1
        //      5.0 0.3 0.2           0 1 1
        // Row steps between lit cells 0.1, 0.3 (0.2→0.5), 0.1, 0.1; column
        // steps 0.2, 0.4 (0.1→0.5), 0.2 (0.5→0.3), 0.4 (0.6→0.2). The dark
        // cells' 0.9 and 5.0 must not count: the largest is 0.4.
        let amplitude = vec![1.0, 1.0, 0.0, 1.0, 1.0, 1.0, 0.0, 1.0, 1.0];
        let opd = vec![0.0, 0.1, 0.9, 0.2, 0.5, 0.6, 5.0, 0.3, 0.2];
        let g = PupilGrid { n: 3, amplitude, opd_waves: opd, lit: 7, fill: 1.0 };
        assert!((g.max_step_waves() - 0.4).abs() < 1e-12, "{}", g.max_step_waves());
        // Only the last row lit (W 0, 0.2, 0.9 under dark cells of 5.0):
        // the one step that counts is 0.7, along that row. Only the last
        // column lit (W 0, 0.1, 0.8 downward): 0.7, down that column.
        let dark = |lit: [usize; 3], w: [f64; 3]| {
            let (mut amplitude, mut opd) = (vec![0.0; 9], vec![5.0; 9]);
            for (c, w) in lit.into_iter().zip(w) {
                (amplitude[c], opd[c]) = (1.0, w);
            }
            PupilGrid { n: 3, amplitude, opd_waves: opd, lit: 3, fill: 1.0 }
        };
        let row = dark([6, 7, 8], [0.0, 0.2, 0.9]);
        assert!((row.max_step_waves() - 0.7).abs() < 1e-12, "{}", row.max_step_waves());
        let col = dark([2, 5, 8], [0.0, 0.1, 0.8]);
        assert!((col.max_step_waves() - 0.7).abs() < 1e-12, "{}", col.max_step_waves());
    }
}
