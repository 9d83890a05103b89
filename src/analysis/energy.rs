//! Encircled energy about the centroid, at the screen.
//!
//! The curve is the fraction of the source's power on this screen that
//! falls within radius r of its weighted centroid (not of the power the
//! source launched). Radii for a given fraction are interpolated linearly
//! between the sorted hit radii, with the curve starting at (0, 0).

use super::select::Subset;
use crate::trace::ScreenHits;

/// Sorted hit radii and the cumulative power fraction at each.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct EncircledEnergy {
    /// Centre of the circles (u, v), mm.
    pub centre_mm: [f64; 2],
    /// Radius of each hit from the centre, ascending, mm.
    pub radius_mm: Vec<f64>,
    /// Fraction of the power within `radius_mm[k]` (inclusive), 0..1.
    pub fraction: Vec<f64>,
}

impl EncircledEnergy {
    /// Radius (mm) holding `frac` of the power, interpolated; `None`
    /// without hits or for `frac` outside (0, 1].
    pub fn radius_for(&self, frac: f64) -> Option<f64> {
        if self.radius_mm.is_empty() || !(frac > 0.0 && frac <= 1.0) {
            return None;
        }
        let k = self.fraction.partition_point(|&f| f < frac);
        let k = k.min(self.fraction.len() - 1);
        let (r0, f0) = if k == 0 { (0.0, 0.0) } else { (self.radius_mm[k - 1], self.fraction[k - 1]) };
        let (r1, f1) = (self.radius_mm[k], self.fraction[k]);
        Some(if f1 > f0 { r0 + (r1 - r0) * (frac - f0) / (f1 - f0) } else { r1 })
    }

    /// Fraction of the power within radius `r` mm, interpolated.
    pub fn fraction_at(&self, r: f64) -> f64 {
        if self.radius_mm.is_empty() || r <= 0.0 {
            return 0.0;
        }
        let k = self.radius_mm.partition_point(|&x| x < r);
        if k >= self.radius_mm.len() {
            return 1.0;
        }
        let (r0, f0) = if k == 0 { (0.0, 0.0) } else { (self.radius_mm[k - 1], self.fraction[k - 1]) };
        let (r1, f1) = (self.radius_mm[k], self.fraction[k]);
        if r1 > r0 { f0 + (f1 - f0) * (r - r0) / (r1 - r0) } else { f1 }
    }

    /// The curve resampled at `n` evenly spaced radii from 0 to the largest
    /// (µm, fraction) for plotting.
    pub fn curve(&self, n: usize) -> (Vec<f64>, Vec<f64>) {
        let rmax = self.radius_mm.last().copied().unwrap_or(0.0);
        let step = if n > 1 { rmax / (n - 1) as f64 } else { 0.0 };
        (0..n).map(|k| (step * k as f64 * 1e3, self.fraction_at(step * k as f64))).unzip()
    }
}

/// Encircled energy of the hits of `source` about their weighted centroid;
/// `None` without hits.
pub fn encircled_energy(h: &ScreenHits, source: Option<u32>) -> Option<EncircledEnergy> {
    let sel = Subset::new(h, source);
    if sel.n == 0 {
        return None;
    }
    let c = sel.centroid();
    let mut rw: Vec<(f64, f64)> = sel.iter().map(|(i, w)| ((h.u[i] - c[0]).hypot(h.v[i] - c[1]), w)).collect();
    rw.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
    let mut acc = 0.0;
    let (radius_mm, mut fraction): (Vec<f64>, Vec<f64>) = rw
        .iter()
        .map(|&(r, w)| {
            acc += w;
            (r, acc)
        })
        .unzip();
    fraction.iter_mut().for_each(|f| *f /= acc);
    Some(EncircledEnergy { centre_mm: c, radius_mm, fraction })
}
