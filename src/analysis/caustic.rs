//! Caustic: a density raster of a dense meridional ray fan.
//!
//! Every fan segment adds, to each pixel it crosses, the length of its path
//! inside that pixel divided by the pixel's area (mm of ray path per mm²),
//! found row by row along the axis the segment advances most on (the whole
//! pixels of each row's stretch get one value, its two ends their share).
//! Where neighbouring rays bunch up along their envelope the density rises: the
//! bright curves are the caustics. Pixels are row-major with row 0 at the
//! top of the view (y = y1) and column 0 at its left (z = z0), the layout
//! drawn with z to the right and y up.

use crate::scene::Scene;
use crate::trace::{trace_fan, Fan};

/// Largest raster side accepted, pixels (keeps allocation bounded).
pub const MAX_RASTER_SIDE: usize = 4096;

/// Density raster of the fan's segments over the view `[y0, z0, y1, z1]`
/// (mm) at `width` × `height` pixels. An empty or inverted view, a zero
/// size or a side above [`MAX_RASTER_SIDE`] gives an empty vector.
pub fn caustic_raster(fan: &Fan, view: [f64; 4], width: usize, height: usize) -> Vec<f32> {
    let [y0, z0, y1, z1] = view;
    let ok = view.iter().all(|v| v.is_finite()) && z1 > z0 && y1 > y0;
    if !ok || width == 0 || height == 0 || width > MAX_RASTER_SIDE || height > MAX_RASTER_SIDE {
        return Vec::new();
    }
    let mut out = vec![0.0f32; width * height];
    let (pz, py) = ((z1 - z0) / width as f64, (y1 - y0) / height as f64);
    let inv_area = 1.0 / (pz * py);
    for s in fan.segments.chunks_exact(4) {
        let (ya, za, yb, zb) = (s[0] as f64, s[1] as f64, s[2] as f64, s[3] as f64);
        // (f32 coordinates: the squares cannot overflow; `hypot` is a slow
        // library call in a wasm build.)
        let len = ((yb - ya) * (yb - ya) + (zb - za) * (zb - za)).sqrt();
        if !(len > 0.0 && len.is_finite()) {
            continue;
        }
        // Pixel coordinates: X across z, Y down from y1.
        let (xa, ya_p) = ((za - z0) / pz, (y1 - ya) / py);
        let (dx, dy) = ((zb - za) / pz, (ya - yb) / py);
        walk(&mut out, width, height, [xa, ya_p], [dx, dy], len * inv_area);
    }
    out
}

/// Adds `k`·(parameter length) to each pixel along p + t·d, t in [0, 1].
fn walk(out: &mut [f32], w: usize, h: usize, p: [f64; 2], d: [f64; 2], k: f64) {
    // Clip to the raster (Liang–Barsky).
    let (mut t0, mut t1) = (0.0f64, 1.0f64);
    for (pk, dk, hi) in [(p[0], d[0], w as f64), (p[1], d[1], h as f64)] {
        if dk == 0.0 {
            if pk < 0.0 || pk > hi {
                return;
            }
            continue;
        }
        let (a, b) = ((0.0 - pk) / dk, (hi - pk) / dk);
        let (lo, up) = if a < b { (a, b) } else { (b, a) };
        t0 = t0.max(lo);
        t1 = t1.min(up);
    }
    if t0 >= t1 {
        return;
    }
    let a = [p[0] + d[0] * t0, p[1] + d[1] * t0];
    let b = [p[0] + d[0] * t1, p[1] + d[1] * t1];
    // Nearly level or plumb: along the major axis, one run per row or
    // column crossed, path length k·Δt = k·Δx/|dx| on that axis.
    let (ax, ay) = (d[0].abs(), d[1].abs());
    if ay < STEEP * ax {
        Grid { out, n: [w, h], stride: [1, w] }.runs(a, b, k / ax);
    } else if ax < STEEP * ay {
        Grid { out, n: [h, w], stride: [w, 1] }.runs([a[1], a[0]], [b[1], b[0]], k / ay);
    } else {
        dda(out, [w, h], p, d, k, [t0, t1]);
    }
}

/// Below this ratio of a segment's lesser to its greater step it is drawn
/// in runs along rows (or columns), each this many pixels long or more;
/// above it, pixel edge by pixel edge, where runs would be too short to
/// pay for their set-up.
const STEEP: f64 = 0.125;

/// Adds `k`·(parameter length) to each pixel along p + t·d for t in [t0,
/// t1] (inside the raster), crossing pixel edges one at a time (a grid DDA).
fn dda(out: &mut [f32], [w, h]: [usize; 2], p: [f64; 2], d: [f64; 2], k: f64, [t0, t1]: [f64; 2]) {
    let cell = |t: f64, k: usize| {
        let c = (p[k] + d[k] * t).floor();
        let m = if k == 0 { w } else { h } as f64 - 1.0;
        c.clamp(0.0, m) as i64
    };
    let mut ix = cell(t0, 0);
    let mut iy = cell(t0, 1);
    let step = |dk: f64| if dk > 0.0 { 1i64 } else { -1 };
    let (sx, sy) = (step(d[0]), step(d[1]));
    let next = |i: i64, s: i64, k: usize| {
        if d[k] == 0.0 {
            return f64::INFINITY;
        }
        let edge = if s > 0 { (i + 1) as f64 } else { i as f64 };
        (edge - p[k]) / d[k]
    };
    let (mut tx, mut ty) = (next(ix, sx, 0), next(iy, sy, 1));
    let inv = |dk: f64| if dk != 0.0 { 1.0 / dk.abs() } else { f64::INFINITY };
    let (dtx, dty) = (inv(d[0]), inv(d[1]));
    let mut t = t0;
    for _ in 0..(w + h + 2) {
        // (Plain comparisons: nothing here is NaN once the segment is
        // finite and clipped, and `f64::min`'s NaN handling would sit on
        // the step's critical path.)
        let tn = if tx < ty { tx } else { ty };
        let tn = if tn < t1 { tn } else { t1 };
        if (0..w as i64).contains(&ix) && (0..h as i64).contains(&iy) {
            let dt = if tn > t { tn - t } else { 0.0 };
            out[iy as usize * w + ix as usize] += (k * dt) as f32;
        }
        if tn >= t1 {
            break;
        }
        t = tn;
        if tx <= ty {
            ix += sx;
            tx += dtx;
        } else {
            iy += sy;
            ty += dty;
        }
    }
}

/// The raster seen along a chosen major axis 0 (the segment advances at
/// least as far on it as on axis 1): sides and index strides per axis.
struct Grid<'o> {
    out: &'o mut [f32],
    n: [usize; 2],
    stride: [usize; 2],
}

impl Grid<'_> {
    /// Pixel index along `axis` holding coordinate `v` (the far edge
    /// belongs to the last pixel).
    fn cell(&self, v: f64, axis: usize) -> usize {
        // Truncation is the floor here: clipped coordinates are ≥ 0 (a
        // rounding-small negative one saturates to pixel 0, as it should).
        (v as usize).min(self.n[axis] - 1)
    }

    /// Deposits the clipped segment a→b, `per` per unit of axis 0: row by
    /// row of axis 1, each row's stretch along axis 0 in one run.
    fn runs(&mut self, a: [f64; 2], b: [f64; 2], per: f64) {
        let (a, b) = if a[0] <= b[0] { (a, b) } else { (b, a) };
        // Not `!(b > a)`: both are finite once clipped.
        if b[0] <= a[0] {
            return; // no length left after clipping
        }
        let slope = (b[1] - a[1]) / (b[0] - a[0]); // |slope| ≤ 1
        let run_per_row = 1.0 / slope; // axis-0 advance per row (±∞ when level)
        let mut row = self.cell(a[1], 1);
        let mut x = a[0];
        let mut col = self.cell(x, 0);
        // A segment crosses at most n[1] rows; the bound keeps rounding
        // from looping.
        for _ in 0..=self.n[1] {
            // Where the line leaves this row (its lower or upper edge).
            let x_end = if slope > 0.0 {
                (a[0] + ((row + 1) as f64 - a[1]) * run_per_row).clamp(x, b[0])
            } else if slope < 0.0 {
                (a[0] + (row as f64 - a[1]) * run_per_row).clamp(x, b[0])
            } else {
                b[0]
            };
            col = self.run(row, [x, x_end], col, per);
            let next = if slope > 0.0 { row + 1 } else { row.wrapping_sub(1) };
            if x_end >= b[0] || next >= self.n[1] {
                break;
            }
            (row, x) = (next, x_end);
        }
    }

    /// Deposits the stretch [x0, x1] of axis 0 in row `row`: partial first
    /// and last pixels, whole ones between (a plain slice add when the
    /// stretch runs along memory). `c0` is x0's pixel; returns x1's.
    fn run(&mut self, row: usize, [x0, x1]: [f64; 2], c0: usize, per: f64) -> usize {
        let c1 = self.cell(x1, 0);
        let [s0, s1] = self.stride;
        let base = row * s1;
        if c0 == c1 {
            self.out[base + c0 * s0] += (per * (x1 - x0)) as f32;
            return c1;
        }
        self.out[base + c0 * s0] += (per * ((c0 + 1) as f64 - x0)) as f32;
        let whole = per as f32;
        if s0 == 1 {
            for v in &mut self.out[base + c0 + 1..base + c1] {
                *v += whole;
            }
        } else {
            for c in c0 + 1..c1 {
                self.out[base + c * s0] += whole;
            }
        }
        self.out[base + c1 * s0] += (per * (x1 - c1 as f64)) as f32;
        c1
    }
}

/// Traces `rays_per_source` meridional rays from each source and returns
/// their density raster (see [`caustic_raster`]).
pub fn caustic(scene: &Scene, rays_per_source: usize, view: [f64; 4], width: usize, height: usize) -> Vec<f32> {
    let fan = trace_fan(scene, rays_per_source, None);
    caustic_raster(&fan, view, width, height)
}
