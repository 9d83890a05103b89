//! Caustic: a density raster of a dense meridional ray fan.
//!
//! Every fan segment adds, to each pixel it crosses, the length of its path
//! inside that pixel divided by the pixel's area (mm of ray path per mm²),
//! found by walking the pixels along the segment (a grid DDA). Where
//! neighbouring rays bunch up along their envelope the density rises: the
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
        let len = (yb - ya).hypot(zb - za);
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

/// Traces `rays_per_source` meridional rays from each source and returns
/// their density raster (see [`caustic_raster`]).
pub fn caustic(scene: &Scene, rays_per_source: usize, view: [f64; 4], width: usize, height: usize) -> Vec<f32> {
    let fan = trace_fan(scene, rays_per_source, None);
    caustic_raster(&fan, view, width, height)
}
