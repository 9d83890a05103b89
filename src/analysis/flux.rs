//! Flux on a screen from all sources together: a W/m² map and its peak,
//! mean, concentration and intercept.
//!
//! The map bins the power of every hit into an nx × ny grid over the
//! screen's bounding square (side = the screen's `size`), row-major, row 0
//! at the top (v = +size/2), column 0 at u = −size/2, and divides by the
//! pixel's area. Pixels of a circular screen that straddle its rim are
//! divided by their full area, so they read low. A point focus is as sharp
//! as one pixel: the peak depends on the grid (a finer grid reads higher).
//!
//! Concentration (`peak_suns`) is peak flux over the incident irradiance of
//! the beam sources (the largest `irradiance_w_m2` among them when there
//! are several); the thermodynamic limits for a source of angular radius
//! θs are 1/sin²θs in 3D and 1/sin θs for a trough (Rabl, Solar Energy 18,
//! 93 (1976)).

use super::lanes::cell;
use crate::layout::Source;
use crate::scene::{Part, Scene};
use crate::trace::TraceResult;
use serde::Serialize;

/// Default flux grid, pixels per side: odd, so a pixel sits centred on the
/// screen centre and a small centred spot is not split across four.
pub const DEFAULT_FLUX_GRID: usize = 65;
/// Largest flux grid side accepted.
pub const MAX_FLUX_GRID: usize = 4096;

/// A flux map of one screen.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FluxMap {
    pub nx: usize,
    pub ny: usize,
    /// Half the side of the mapped square, mm.
    pub half_mm: f64,
    /// Irradiance per pixel, W/m², row-major, row 0 at v = +half.
    pub w_m2: Vec<f64>,
}

/// Flux figures of one screen (docs/FORMATS.md §3, `flux`).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct FluxStats {
    /// Largest pixel irradiance, W/m².
    pub peak_w_m2: f64,
    /// Power on the screen over its area, W/m².
    pub mean_w_m2: f64,
    /// Peak over the beams' incident irradiance; null without beams.
    pub peak_suns: Option<f64>,
    /// Fraction of all launched power that reaches the screen; null when
    /// nothing was launched.
    pub intercept: Option<f64>,
}

/// (half side, is circle) of screen number `screen`.
pub fn screen_geometry(scene: &Scene, screen: usize) -> Option<(f64, bool)> {
    scene.elements.iter().find_map(|e| match e.part {
        Part::Screen { half, circle, index, .. } if index == screen => Some((half, circle)),
        _ => None,
    })
}

/// Flux map of screen number `screen` on an `nx` × `ny` grid; `None` for a
/// bad index or a grid side of 0 or above [`MAX_FLUX_GRID`].
pub fn flux_map(scene: &Scene, res: &TraceResult, screen: usize, nx: usize, ny: usize) -> Option<FluxMap> {
    let (half, _) = screen_geometry(scene, screen)?;
    let h = res.screens.get(screen)?;
    if nx == 0 || ny == 0 || nx > MAX_FLUX_GRID || ny > MAX_FLUX_GRID {
        return None;
    }
    let (pu, pv) = (2.0 * half / nx as f64, 2.0 * half / ny as f64);
    let mut w_m2 = bin_hits(h, half, nx, ny);
    let k = 1.0 / (pu * pv * 1e-6);
    w_m2.iter_mut().for_each(|w| *w *= k);
    Some(FluxMap { nx, ny, half_mm: half, w_m2 })
}

/// Most parts the hits are binned in (each its own map, added in order).
const MAX_FLUX_PARTS: usize = 16;

/// Power per pixel of the hits on a grid of nx × ny pixels over ±`half`.
/// The hits are split into parts binned on the thread pool, at least
/// eight hits per pixel each (so a fine grid over few hits is one part),
/// and the parts' maps added in order: the split depends only on the hit
/// and pixel counts, so every thread count gives the same bits.
fn bin_hits(h: &crate::trace::ScreenHits, half: f64, nx: usize, ny: usize) -> Vec<f64> {
    let (n, cells) = (h.u.len(), nx * ny);
    let parts = (n / (8 * cells).max(super::CHUNK)).clamp(1, MAX_FLUX_PARTS);
    let maps = super::over_parts(n, n.div_ceil(parts), |r| {
        best_simd!(crate::trace::Kernel::detect(), bin_hits_body(h: &crate::trace::ScreenHits, r: std::ops::Range<usize>, half: f64, nx: usize, ny: usize) -> Vec<f64>)
    });
    let mut maps = maps.into_iter();
    let mut total = maps.next().unwrap_or_else(|| vec![0.0; cells]);
    for m in maps {
        total.iter_mut().zip(&m).for_each(|(t, x)| *t += x);
    }
    total
}

/// Hits per block of [`bin_hits_body`]: a multiple of 4, so hit k of a
/// part goes to map k mod 4 whatever its block.
const BIN_BLOCK: usize = 256;

#[inline(always)]
fn bin_hits_body(h: &crate::trace::ScreenHits, r: std::ops::Range<usize>, half: f64, nx: usize, ny: usize) -> Vec<f64> {
    // Four interleaved maps (hit k into map k mod 4), added in order at the
    // end: a focused spot puts every hit in one pixel, and one map would
    // make each addition wait for the last. Block by block, a vector loop
    // finds each hit's slot first, so the scattered additions that follow
    // are a few instructions each.
    let cells = nx * ny;
    let mut maps = vec![0.0; 4 * cells];
    let (ku, kv) = (nx as f64 / (2.0 * half), ny as f64 / (2.0 * half));
    let (top_x, top_y) = ((nx - 1) as f64, (ny - 1) as f64);
    let (u, v, w) = (&h.u[r.clone()], &h.v[r.clone()], &h.weight[r]);
    let mut slot = [0u32; BIN_BLOCK];
    for start in (0..u.len()).step_by(BIN_BLOCK) {
        let end = (start + BIN_BLOCK).min(u.len());
        let (ub, vb, wb) = (&u[start..end], &v[start..end], &w[start..end]);
        for (j, s) in slot[..ub.len()].iter_mut().enumerate() {
            // The floor of a pixel coordinate clamped to the grid (NaN to
            // 0): clamping before the truncation gives the same pixel as
            // clamping after, and vectorises.
            let ix = cell((ub[j] + half) * ku, top_x);
            let iy = cell((half - vb[j]) * kv, top_y);
            *s = (j as u32 & 3) * cells as u32 + iy * nx as u32 + ix;
        }
        for (&s, &wk) in slot.iter().zip(wb) {
            maps[s as usize] += wk;
        }
    }
    (0..cells).map(|i| ((maps[i] + maps[cells + i]) + maps[2 * cells + i]) + maps[3 * cells + i]).collect()
}

/// Incident irradiance used for `peak_suns`: the largest among the beams.
pub fn beam_irradiance(scene: &Scene) -> Option<f64> {
    scene
        .sources
        .iter()
        .filter_map(|s| match s {
            Source::Beam(b) => Some(b.irradiance_w_m2),
            Source::Point(_) => None,
        })
        .fold(None, |m: Option<f64>, v| Some(m.map_or(v, |m| m.max(v))))
        .filter(|&v| v > 0.0)
}

/// Flux figures of screen number `screen`, with its map on a `grid` ×
/// `grid` raster.
pub fn flux_stats(scene: &Scene, res: &TraceResult, screen: usize, grid: usize) -> Option<FluxStats> {
    let map = flux_map(scene, res, screen, grid, grid)?;
    Some(flux_stats_of(scene, res, screen, &map))
}

/// Flux figures from an existing map of screen number `screen`.
pub fn flux_stats_of(scene: &Scene, res: &TraceResult, screen: usize, map: &FluxMap) -> FluxStats {
    // Each ray counts once (its first arrival), so the intercept is the
    // fraction of launched power that reaches the screen; the map counts
    // every crossing (the light through the plane).
    let power: f64 = res.screens.get(screen).map_or(0.0, |h| super::report::first_arrivals(h).1);
    flux_stats_with(scene, res, screen, map, power)
}

/// [`flux_stats_of`] with the screen's first-arrival power `power` (W)
/// already summed by [`super::first_arrivals`].
pub(crate) fn flux_stats_with(scene: &Scene, res: &TraceResult, screen: usize, map: &FluxMap, power: f64) -> FluxStats {
    let (half, circle) = screen_geometry(scene, screen).unwrap_or((map.half_mm, false));
    let area_m2 = if circle { std::f64::consts::PI * half * half } else { 4.0 * half * half } * 1e-6;
    let peak = map.w_m2.iter().copied().fold(0.0, f64::max);
    let launched: f64 = res.power_by_source.iter().sum();
    FluxStats {
        peak_w_m2: peak,
        mean_w_m2: if area_m2 > 0.0 { power / area_m2 } else { 0.0 },
        peak_suns: beam_irradiance(scene).map(|e| peak / e),
        intercept: (launched > 0.0).then(|| power / launched),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::trace::ScreenHits;

    #[test]
    fn binning_puts_each_hit_in_the_pixel_under_it() {
        // Common practice for a raster: pixel (i, j) of an nx × ny grid over
        // ±half holds the points with floor((u + half)·nx / 2half) = i and
        // floor((half − v)·ny / 2half) = j (rows from the top); points off
        // the grid count in the nearest edge pixel. Weights are small
        // integers, so every order of addition gives the same sums, and
        // the hits span several blocks and parts, with some off the grid,
        // on its edges and not a number.
        let (half, nx, ny) = (3.0, 7, 5);
        let mut h = ScreenHits::default();
        // Spread points: the fractional parts of k·(√5 − 1)/2 and k·(√2 − 1).
        let spread = |k: usize, a: f64| 8.0 * (k as f64 * a).fract() - 4.0;
        let n = 2 * 8 * nx * ny * MAX_FLUX_PARTS + 1000;
        for k in 0..n {
            let (u, v) = match k % 97 {
                0 => (f64::NAN, 0.5),
                1 => (-half, half),
                2 => (half, -half),
                3 => (10.0 * half, -10.0 * half),
                _ => (spread(k, 0.618_033_988_749_895), spread(k, 0.414_213_562_373_095_1)),
            };
            h.u.push(u);
            h.v.push(v);
            h.weight.push((1 + k % 3) as f64);
        }
        let mut expect = vec![0.0; nx * ny];
        let (ku, kv) = (nx as f64 / (2.0 * half), ny as f64 / (2.0 * half));
        for k in 0..n {
            let pixel = |x: f64, side: usize| if x.is_nan() { 0 } else { (x.floor().max(0.0) as usize).min(side - 1) };
            let (i, j) = (pixel((h.u[k] + half) * ku, nx), pixel((half - h.v[k]) * kv, ny));
            expect[j * nx + i] += h.weight[k];
        }
        assert_eq!(bin_hits(&h, half, nx, ny), expect);
        let total: f64 = h.weight.iter().sum();
        assert_eq!(expect.iter().sum::<f64>(), total);
    }
}
