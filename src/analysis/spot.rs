//! Spot statistics: centroid, RMS and largest radius of the hits that one
//! source puts on one screen, weighted by the power each ray carries.

use crate::trace::ScreenHits;

/// Basic spot figures for one (screen, source) pair. Radii are in mm here;
/// front ends convert to µm.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct SpotStats {
    pub hits: u64,
    pub power_w: f64,
    /// Power-weighted centroid (u, v), mm.
    pub centroid: [f64; 2],
    /// Power-weighted RMS distance from the centroid, mm.
    pub rms_radius: f64,
    /// Largest distance of a hit from the centroid, mm.
    pub max_radius: f64,
}

/// Statistics of the hits of `source` (all sources when `None`).
pub fn spot_stats(h: &ScreenHits, source: Option<u32>) -> SpotStats {
    let pick = |i: usize| source.is_none_or(|s| h.source[i] == s);
    let mut n = 0u64;
    let (mut w, mut su, mut sv) = (0.0, 0.0, 0.0);
    for i in 0..h.len() {
        if pick(i) {
            n += 1;
            let wi = h.weight[i];
            w += wi;
            su += wi * h.u[i];
            sv += wi * h.v[i];
        }
    }
    if n == 0 {
        return SpotStats::default();
    }
    // Rays of zero power (a source of 0 W) still mark where light would go:
    // fall back to equal weights.
    let equal = w <= 0.0;
    let (cu, cv) = if equal {
        let (mut a, mut b) = (0.0, 0.0);
        for i in (0..h.len()).filter(|&i| pick(i)) {
            a += h.u[i];
            b += h.v[i];
        }
        (a / n as f64, b / n as f64)
    } else {
        (su / w, sv / w)
    };
    let (mut s2, mut ws, mut rmax) = (0.0, 0.0, 0.0f64);
    for i in (0..h.len()).filter(|&i| pick(i)) {
        let wi = if equal { 1.0 } else { h.weight[i] };
        let r2 = (h.u[i] - cu).powi(2) + (h.v[i] - cv).powi(2);
        s2 += wi * r2;
        ws += wi;
        rmax = rmax.max(r2);
    }
    SpotStats {
        hits: n,
        power_w: w,
        centroid: [cu, cv],
        rms_radius: (s2 / ws).sqrt(),
        max_radius: rmax.sqrt(),
    }
}
