//! The hits of one source on one screen, with the weights the analyses use.
//!
//! A trace records hits source by source (each source's rays in order), so
//! one source's hits are one contiguous run of a screen's columns: picking
//! them is two binary searches, and every analysis loops over plain
//! slices. Hits gathered some other way (out of source order), and the
//! later crossings of rays that come back to a screen, are left out by
//! copying the picked hits first.

use super::over_chunks;
use crate::trace::ScreenHits;
use std::borrow::Cow;
use std::ops::Range;

/// A view of the hits that `source` put on a screen (all sources when
/// `None`). Weights are the rays' powers; when they sum to zero (a 0 W
/// source) every ray counts equally, as in [`super::spot_stats`].
#[derive(Debug, Clone)]
pub(crate) struct Subset<'a> {
    /// The hits; the picked ones are `range`.
    pub h: Cow<'a, ScreenHits>,
    pub range: Range<usize>,
    /// Number of hits picked.
    pub n: usize,
    /// Sum of the weights used (equal weights count 1 each).
    pub w: f64,
    /// Sum of the rays' powers, W.
    pub power: f64,
    equal: bool,
    /// The one weight of every picked hit (as [`Subset::weights`] gives
    /// them), when they are all equal.
    uniform: Option<f64>,
    centroid: std::sync::OnceLock<[f64; 2]>,
    mean_dir: std::sync::OnceLock<Option<crate::geometry::Vec3>>,
}

impl<'a> Subset<'a> {
    pub fn new(h: &'a ScreenHits, source: Option<u32>) -> Self {
        // A ray that comes back to the screen (a cavity) counts once: its
        // first arrival. Hits recorded without the flag count as first.
        let first = |i: usize| h.first.get(i).copied().unwrap_or(true);
        // Chunk by chunk on the thread pool (each chunk also checks the pair
        // across its start).
        // (Counting, not stopping at the first miss: a loop the compiler
        // vectorises.)
        let sorted = over_chunks(h.source.len(), |r| {
            let s = &h.source[r.start.saturating_sub(1)..r.end];
            s.iter().zip(&s[1..]).filter(|(a, b)| a > b).count() == 0
        })
        .into_iter()
        .all(|x| x);
        let (lo, hi) = match source {
            None => (0, h.len()),
            Some(s) if sorted => {
                let lo = h.source.partition_point(|&x| x < s);
                (lo, lo + h.source[lo..].partition_point(|&x| x == s))
            }
            Some(_) => (0, 0),
        };
        let all_first = |f: &[bool]| over_chunks(f.len(), |r| f[r].iter().filter(|&&x| !x).count() == 0).into_iter().all(|x| x);
        let contiguous = (source.is_none() || sorted) && h.first.get(lo..hi.min(h.first.len())).is_none_or(all_first);
        let (h, range) = if contiguous {
            (Cow::Borrowed(h), lo..hi)
        } else {
            let mut own = ScreenHits::default();
            for i in (0..h.len()).filter(|&i| source.is_none_or(|s| h.source[i] == s) && first(i)) {
                own.extend_range(h, i..i + 1);
            }
            let n = own.len();
            (Cow::Owned(own), 0..n)
        };
        let weight = &h.weight[range.clone()];
        // The sum, and whether every weight equals the first, chunk by chunk
        // while the chunk is in cache.
        let w0 = weight.first().copied();
        let parts = over_chunks(weight.len(), |r| {
            let x = &weight[r];
            (lane_sum(x), x.iter().filter(|&&w| Some(w) != w0).count())
        });
        let power: f64 = parts.iter().map(|p| p.0).sum();
        let equal = power <= 0.0 || power.is_nan();
        let uniform = if equal { Some(1.0) } else { w0.filter(|_| parts.iter().all(|p| p.1 == 0)) };
        let n = range.len();
        Subset {
            h,
            range,
            n,
            w: if equal { n as f64 } else { power },
            power,
            equal,
            uniform,
            centroid: Default::default(),
            mean_dir: Default::default(),
        }
    }

    /// The picked part of a column.
    #[inline]
    pub fn col<'s>(&'s self, c: &'s [f64]) -> &'s [f64] {
        &c[self.range.clone()]
    }

    /// The weights used, one per picked hit.
    pub fn weights(&self) -> Cow<'_, [f64]> {
        if self.equal { Cow::Owned(vec![1.0; self.n]) } else { Cow::Borrowed(self.col(&self.h.weight)) }
    }

    /// The one weight every picked hit has in [`Subset::weights`], when
    /// they are all equal.
    pub fn uniform_weight(&self) -> Option<f64> {
        self.uniform
    }

    /// Weighted centroid (u, v) on the screen, mm (computed once).
    pub fn centroid(&self) -> [f64; 2] {
        *self.centroid.get_or_init(|| self.compute_centroid())
    }

    /// Power-weighted mean arriving direction, unit length (computed once).
    pub fn mean_dir(&self) -> Option<crate::geometry::Vec3> {
        *self.mean_dir.get_or_init(|| super::cone::compute_mean_dir(self))
    }

    /// Records the first-pass figures computed elsewhere (the fused pass).
    pub fn set_first_pass(&self, centroid: [f64; 2], mean_dir: Option<crate::geometry::Vec3>) {
        let _ = self.centroid.set(centroid);
        let _ = self.mean_dir.set(mean_dir);
    }

    fn compute_centroid(&self) -> [f64; 2] {
        let w = self.weights();
        let (u, v) = (self.col(&self.h.u), self.col(&self.h.v));
        let (mut su, mut sv) = (0.0, 0.0);
        for k in 0..self.n {
            su += w[k] * u[k];
            sv += w[k] * v[k];
        }
        [su / self.w, sv / self.w]
    }
}

/// Sum of `x` in four interleaved partial sums (element k adds to sum
/// k mod 4), added in order: independent chains run in parallel, and the
/// order of the additions is fixed.
fn lane_sum(x: &[f64]) -> f64 {
    let mut l = [0.0; 4];
    let mut groups = x.chunks_exact(4);
    for g in &mut groups {
        for k in 0..4 {
            l[k] += g[k];
        }
    }
    groups.remainder().iter().fold(l.iter().sum(), |a, b| a + b)
}
