//! The hits of one source on one screen, with the weights the analyses use.

use crate::trace::ScreenHits;

/// A view of the hits that `source` put on a screen (all sources when
/// `None`). Weights are the rays' powers; when they sum to zero (a 0 W
/// source) every ray counts equally, as in [`super::spot_stats`].
#[derive(Debug, Clone, Copy)]
pub(crate) struct Subset<'a> {
    pub h: &'a ScreenHits,
    source: Option<u32>,
    /// Number of hits picked.
    pub n: usize,
    /// Sum of the weights used (equal weights count 1 each).
    pub w: f64,
    equal: bool,
}

impl<'a> Subset<'a> {
    pub fn new(h: &'a ScreenHits, source: Option<u32>) -> Self {
        let mut s = Subset { h, source, n: 0, w: 0.0, equal: false };
        let mut w = 0.0;
        for (i, wi) in h.weight.iter().enumerate() {
            if s.picks(i) {
                s.n += 1;
                w += wi;
            }
        }
        s.equal = w <= 0.0 || w.is_nan();
        s.w = if s.equal { s.n as f64 } else { w };
        s
    }

    #[inline]
    fn picks(&self, i: usize) -> bool {
        self.source.is_none_or(|src| self.h.source[i] == src)
    }

    /// (index, weight) of every picked hit.
    #[inline]
    pub fn iter(&self) -> impl Iterator<Item = (usize, f64)> + '_ {
        let equal = self.equal;
        (0..self.h.len()).filter(|&i| self.picks(i)).map(move |i| (i, if equal { 1.0 } else { self.h.weight[i] }))
    }

    /// Weighted centroid (u, v) on the screen, mm.
    pub fn centroid(&self) -> [f64; 2] {
        let (mut su, mut sv) = (0.0, 0.0);
        for (i, w) in self.iter() {
            su += w * self.h.u[i];
            sv += w * self.h.v[i];
        }
        [su / self.w, sv / self.w]
    }
}
