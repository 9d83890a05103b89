//! Spot statistics: centroid, RMS and largest radius of the hits that one
//! source puts on one screen, weighted by the power each ray carries.

use super::select::Subset;
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
    spot_stats_of(&Subset::new(h, source))
}

pub(crate) fn spot_stats_of(sel: &Subset) -> SpotStats {
    if sel.n == 0 {
        return SpotStats::default();
    }
    // Rays of zero power (a source of 0 W) still mark where light would go:
    // the subset falls back to equal weights.
    let [cu, cv] = sel.centroid();
    let w = sel.weights();
    let (u, v) = (sel.col(&sel.h.u), sel.col(&sel.h.v));
    let (mut s2, mut rmax) = (0.0, 0.0f64);
    for k in 0..sel.n {
        let r2 = (u[k] - cu) * (u[k] - cu) + (v[k] - cv) * (v[k] - cv);
        s2 += w[k] * r2;
        rmax = rmax.max(r2);
    }
    SpotStats {
        hits: sel.n as u64,
        power_w: sel.power,
        centroid: [cu, cv],
        rms_radius: (s2 / sel.w).sqrt(),
        max_radius: rmax.sqrt(),
    }
}
