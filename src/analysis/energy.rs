//! Encircled energy about the centroid, at the screen.
//!
//! The curve is the fraction of the source's power on this screen that
//! falls within radius r of its weighted centroid (not of the power the
//! source launched): the power on the closed disk of radius r, so at a hit's
//! radius every hit at that radius counts, and the largest radius holds
//! everything. Between hit radii, and for the radius of a given fraction,
//! the curve is interpolated linearly through the sorted hit radii, starting
//! at (0, 0).
//!
//! # Method
//!
//! No full sort: the radii go into a histogram (weight, smallest and
//! largest radius per bin). Binning by ⌊r·k⌋ keeps the order between bins,
//! so the sorted sequence is the bins in turn; a figure that needs the
//! exact neighbours of one radius (a fraction's radius, a point of the
//! plotted curve) sorts only the one bin it falls in, gathered in a single
//! pass for all figures. Result: the same interpolation as a full sort, in
//! two streaming passes.

use super::select::Subset;
use super::lanes::cell;
use super::over_chunks;
use crate::trace::ScreenHits;
use std::ops::Range;

/// A sampled encircled-energy curve: (radius µm, fraction) columns.
pub type Curve = (Vec<f64>, Vec<f64>);

/// Bins of the histogram that locates a fraction's radius.
const BINS: usize = 4096;

/// Hits per block of the histogram pass.
const HIST_BLOCK: usize = 256;

/// The hit radii about the centroid with their weights, and a histogram
/// of them.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct EncircledEnergy {
    /// Centre of the circles (u, v), mm.
    pub centre_mm: [f64; 2],
    /// Radius of each hit from the centre (in hit order), mm.
    pub radius_mm: Vec<f64>,
    /// Weight of each hit; empty when every hit weighs `uniform`.
    pub weight: Vec<f64>,
    /// The one weight of every hit, when they are all equal.
    pub uniform: Option<f64>,
    /// Total weight.
    total: f64,
    /// Largest radius, mm.
    rmax: f64,
    /// Histogram: bin of r is ⌊r·scale⌋ (clamped); per bin the weight
    /// before it (cumulative) and its largest radius (−∞ when it holds no
    /// hit with a number for a radius).
    scale: f64,
    before: Vec<f64>,
    hi: Vec<f64>,
}

impl EncircledEnergy {
    /// Each hit's weight, in hit order.
    pub fn weights(&self) -> impl Iterator<Item = f64> + '_ {
        let n = self.radius_mm.len();
        let uniform = self.uniform.map(|w| std::iter::repeat_n(w, n));
        let listed = self.uniform.is_none().then(|| self.weight.iter().copied());
        uniform.into_iter().flatten().chain(listed.into_iter().flatten())
    }

    /// Calls `f(radius, weight)` for every hit, in hit order (one loop per
    /// case, so the uniform case reads no weights).
    #[inline(always)]
    fn each(&self, f: impl FnMut(f64, f64)) {
        self.each_in(0..self.radius_mm.len(), f)
    }

    /// [`EncircledEnergy::each`] over the hits of `r`.
    #[inline(always)]
    fn each_in(&self, r: Range<usize>, mut f: impl FnMut(f64, f64)) {
        match self.uniform {
            Some(w) => self.radius_mm[r].iter().for_each(|&x| f(x, w)),
            None => self.radius_mm[r.clone()].iter().zip(&self.weight[r]).for_each(|(&x, &w)| f(x, w)),
        }
    }

    /// Calls `f(bin, radius, weight)` for every hit of `c`, in hit order:
    /// block by block, the bins in a vector loop first, then `f` hit by hit.
    #[inline(always)]
    fn each_binned(&self, c: Range<usize>, mut f: impl FnMut(usize, f64, f64)) {
        let mut bin = [0u16; HIST_BLOCK];
        for start in c.clone().step_by(HIST_BLOCK) {
            let end = (start + HIST_BLOCK).min(c.end);
            self.bins_of(&self.radius_mm[start..end], &mut bin);
            let mut j = 0;
            self.each_in(start..end, |r, w| {
                f(bin[j] as usize, r, w);
                j += 1;
            });
        }
    }

    /// `f` of each chunk of the hits, in order (on the thread pool natively).
    fn per_chunk<T: Send>(&self, f: impl Fn(Range<usize>) -> T + Sync + Send) -> Vec<T> {
        over_chunks(self.radius_mm.len(), f)
    }

    /// [`EncircledEnergy::bin`] of each radius of `r` into `out`, in a loop
    /// the compiler vectorises: clamped to [0, BINS − 1] first (NaN to 0,
    /// as `bin` converts it), so the conversion needs no saturation.
    #[inline(always)]
    fn bins_of(&self, r: &[f64], out: &mut [u16; HIST_BLOCK]) {
        const TOP: f64 = (BINS - 1) as f64;
        for (o, &x) in out.iter_mut().zip(r) {
            *o = cell(x * self.scale, TOP) as u16;
        }
    }

    #[inline]
    fn bin(&self, r: f64) -> usize {
        // Through u32 (the same value: r·scale ≤ BINS for every hit), whose
        // conversion is one instruction where usize's takes several.
        ((r * self.scale) as u32).min(BINS as u32 - 1) as usize
    }

    /// Radius (mm) holding `frac` of the power, interpolated; `None`
    /// without hits or for `frac` outside (0, 1].
    pub fn radius_for(&self, frac: f64) -> Option<f64> {
        self.radii_for(&[frac])[0]
    }

    /// [`EncircledEnergy::radius_for`] of several fractions, with one pass
    /// over the hits for all of them.
    pub fn radii_for(&self, fracs: &[f64]) -> Vec<Option<f64>> {
        self.radii_and_curve(fracs, 0).0
    }

    /// The curve sampled at `n` evenly spaced radii from 0 to the largest
    /// (µm, fraction) for plotting.
    pub fn curve(&self, n: usize) -> Curve {
        self.radii_and_curve(&[], n).1
    }

    /// [`EncircledEnergy::radii_for`] of `fracs` and [`EncircledEnergy::curve`]
    /// of `n` points (none when `n` is 0) together, in one pass over the
    /// hits: each figure needs the hits of one histogram bin in order, so
    /// the pass gathers the hits of the wanted bins only.
    pub fn radii_and_curve(&self, fracs: &[f64], n: usize) -> (Vec<Option<f64>>, Curve) {
        let step = if n > 1 { self.rmax / (n - 1) as f64 } else { 0.0 };
        let radii: Vec<f64> = (0..n).map(|k| step * k as f64).collect();
        let um = radii.iter().map(|r| r * 1e3).collect();
        if self.radius_mm.is_empty() {
            let curve = radii.iter().map(|&r| self.fraction_at(r)).collect();
            return (vec![None; fracs.len()], (um, curve));
        }
        // The bin whose hits settle each figure.
        let frac_bins: Vec<Option<Option<usize>>> = fracs.iter().map(|&f| self.frac_bin(f)).collect();
        let sample_bins: Vec<Option<usize>> = radii.iter().map(|&r| (r > 0.0 && r <= self.rmax).then(|| self.bin(r))).collect();
        let mut wanted = vec![false; BINS];
        for b in frac_bins.iter().flatten().flatten() {
            wanted[*b] = true;
        }
        for &b in sample_bins.iter().flatten() {
            wanted[b] = true;
            // The least radius above a sample may lie in the next bin with hits.
            if let Some(k) = self.next_filled(b + 1) {
                wanted[k] = true;
            }
        }
        let bins = self.gather(&wanted);
        let below = self.prefix_max();
        let radius = frac_bins
            .iter()
            .zip(fracs)
            .map(|(b, &frac)| {
                let b = (*b)?;
                let Some(b) = b else { return Some(0.0) };
                Some(self.radius_in_bin(frac, b, below[b], &bins[b]))
            })
            .collect();
        let curve = radii
            .iter()
            .zip(&sample_bins)
            .map(|(&r, b)| match b {
                None if r <= 0.0 => 0.0,
                None => 1.0,
                Some(b) => self.fraction_in_bin(r, *b, below[*b], &bins),
            })
            .collect();
        (radius, (um, curve))
    }

    /// The bin of the first sorted position whose cumulative fraction
    /// reaches `frac` (`Some(None)` when the first hit already does);
    /// `None` for `frac` outside (0, 1].
    fn frac_bin(&self, frac: f64) -> Option<Option<usize>> {
        if !(frac > 0.0 && frac <= 1.0) {
            return None;
        }
        Some((0..BINS).rev().find(|&b| self.before[b] / self.total < frac && self.filled(b)))
    }

    /// First bin from `b` on that holds hits.
    fn next_filled(&self, b: usize) -> Option<usize> {
        (b..BINS).find(|&k| self.filled(k))
    }

    /// Whether bin `b` holds a hit.
    fn filled(&self, b: usize) -> bool {
        self.hi[b].is_finite()
    }

    /// Largest radius below each bin (0 when none).
    fn prefix_max(&self) -> Vec<f64> {
        let mut m = 0.0f64;
        self.hi
            .iter()
            .map(|&hi| {
                let before = m;
                if hi.is_finite() {
                    m = hi;
                }
                before
            })
            .collect()
    }

    /// The (radius, weight) of the hits of every wanted bin, sorted by
    /// radius (ties in hit order): one pass, chunks joined in order. A hit
    /// lies in bin b exactly when `bin` says so (binning keeps the order).
    fn gather(&self, wanted: &[bool]) -> Vec<Vec<(f64, f64)>> {
        let found = self.per_chunk(|c| {
            let mut got: Vec<(usize, f64, f64)> = Vec::new();
            self.each_binned(c, |b, r, w| {
                if wanted[b] {
                    got.push((b, r, w));
                }
            });
            got
        });
        let mut bins: Vec<Vec<(f64, f64)>> = vec![Vec::new(); BINS];
        for (b, r, w) in found.into_iter().flatten() {
            bins[b].push((r, w));
        }
        for v in &mut bins {
            v.sort_by(|a, b| a.0.total_cmp(&b.0));
        }
        bins
    }

    /// The radius holding `frac` when its position falls in bin `b` (with
    /// its sorted hits `inside`, and `r0` the largest radius before it).
    fn radius_in_bin(&self, frac: f64, b: usize, mut r0: f64, inside: &[(f64, f64)]) -> f64 {
        let mut acc = self.before[b];
        let mut f0 = acc / self.total;
        let last_bin = self.next_filled(b + 1).is_none();
        for (j, &(r1, w)) in inside.iter().enumerate() {
            acc += w;
            // The very last hit holds everything (whatever the rounding).
            let f1 = if last_bin && j + 1 == inside.len() { 1.0 } else { acc / self.total };
            if f1 >= frac {
                return if f1 > f0 && f1 != frac { r0 + (r1 - r0) * (frac - f0) / (f1 - f0) } else { r1 };
            }
            (r0, f0) = (r1, f1);
        }
        r0
    }

    /// The fraction within radius `r` (0 < r ≤ the largest), which lies in
    /// bin `b`; `r0` is the largest radius before the bin.
    fn fraction_in_bin(&self, r: f64, b: usize, mut r0: f64, bins: &[Vec<(f64, f64)>]) -> f64 {
        let mut below = self.before[b];
        let mut next = None;
        for (j, &(x, w)) in bins[b].iter().enumerate() {
            if x <= r {
                below += w;
                r0 = x;
            } else {
                next = Some((b, j, x, w));
                break;
            }
        }
        // First radius above r: in this bin, or the next one's least.
        let next = next.or_else(|| self.next_filled(b + 1).and_then(|k| bins[k].first().map(|&(x, w)| (k, 0, x, w))));
        match next {
            Some((k, j, r1, w1)) => {
                // The very last hit holds everything (whatever the rounding).
                let last = j + 1 == bins[k].len() && self.next_filled(k + 1).is_none();
                let f1 = if last { 1.0 } else { (below + w1) / self.total };
                interpolate(r, r0, below / self.total, r1, f1)
            }
            None => 1.0,
        }
    }

    /// Fraction of the power within radius `r` mm, interpolated.
    pub fn fraction_at(&self, r: f64) -> f64 {
        if self.radius_mm.is_empty() || r <= 0.0 {
            return 0.0;
        }
        if r >= self.rmax {
            return 1.0;
        }
        // Weight within r, the largest radius within it and the first above
        // it (with its weight).
        let (mut below, mut r0, mut r1, mut w1) = (0.0, 0.0f64, f64::INFINITY, 0.0);
        self.each(|x, w| {
            if x <= r {
                below += w;
                r0 = r0.max(x);
            } else if x < r1 {
                (r1, w1) = (x, w);
            }
        });
        interpolate(r, r0, below / self.total, r1, (below + w1) / self.total)
    }
}

/// Linear interpolation of the cumulative curve between (r0, f0) and (r1, f1).
fn interpolate(r: f64, r0: f64, f0: f64, r1: f64, f1: f64) -> f64 {
    if r1 > r0 { f0 + (f1 - f0) * (r - r0) / (r1 - r0) } else { f1 }
}

/// Encircled energy of the hits of `source` about their weighted centroid;
/// `None` without hits.
pub fn encircled_energy(h: &ScreenHits, source: Option<u32>) -> Option<EncircledEnergy> {
    encircled_energy_of(&Subset::new(h, source))
}

pub(crate) fn encircled_energy_of(sel: &Subset) -> Option<EncircledEnergy> {
    if sel.n == 0 {
        return None;
    }
    let c = sel.centroid();
    let (u, v) = (sel.col(&sel.h.u), sel.col(&sel.h.v));
    let radius_mm: Vec<f64> = u.iter().zip(v).map(|(x, y)| ((x - c[0]) * (x - c[0]) + (y - c[1]) * (y - c[1])).sqrt()).collect();
    let rmax = radius_mm.iter().copied().fold(0.0, f64::max);
    Some(EncircledEnergy::from_radii(c, radius_mm, &sel.weights(), sel.uniform_weight(), rmax))
}

impl EncircledEnergy {
    /// From the hits' radii about `centre` (largest `rmax`) and weights,
    /// `uniform` the one weight they all have if so.
    pub(crate) fn from_radii(centre: [f64; 2], radius_mm: Vec<f64>, weight: &[f64], uniform: Option<f64>, rmax: f64) -> EncircledEnergy {
        let mut e = EncircledEnergy {
            centre_mm: centre,
            radius_mm,
            weight: if uniform.is_some() { Vec::new() } else { weight.to_vec() },
            uniform,
            total: 0.0,
            rmax,
            scale: if rmax > 0.0 { BINS as f64 / rmax } else { 0.0 },
            before: vec![0.0; BINS],
            hi: vec![f64::NEG_INFINITY; BINS],
        };
        // Per chunk (weight, largest radius) per bin, side by side so a
        // hit updates one cache line; merged in chunk order.
        let parts = e.per_chunk(|c| {
            let mut acc = vec![[0.0, f64::NEG_INFINITY]; BINS];
            e.each_binned(c, |b, r, w| {
                let a = &mut acc[b];
                a[0] += w;
                // As f64::max (the bin's largest is never NaN; a NaN radius
                // is passed over), without NaN fix-ups.
                a[1] = if r > a[1] { r } else { a[1] };
            });
            acc
        });
        let mut wsum = vec![0.0; BINS];
        for acc in parts {
            for (b, [w, hi]) in acc.into_iter().enumerate() {
                wsum[b] += w;
                e.hi[b] = e.hi[b].max(hi);
            }
        }
        let mut acc = 0.0;
        for (b, w) in wsum.iter().enumerate() {
            e.before[b] = acc;
            acc += w;
        }
        // The total in bin order, so cumulative fractions end at exactly 1.
        e.total = acc;
        e
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The definition by a full sort (the previous implementation).
    fn sorted(e: &EncircledEnergy) -> (Vec<f64>, Vec<f64>) {
        let mut rw: Vec<(f64, f64)> = e.radius_mm.iter().copied().zip(e.weights()).collect();
        rw.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
        let mut acc = 0.0;
        let (r, mut f): (Vec<f64>, Vec<f64>) = rw
            .iter()
            .map(|&(r, w)| {
                acc += w;
                (r, acc)
            })
            .unzip();
        f.iter_mut().for_each(|x| *x /= acc);
        (r, f)
    }

    fn radius_for_sorted(r: &[f64], f: &[f64], frac: f64) -> f64 {
        let k = f.partition_point(|&x| x < frac).min(f.len() - 1);
        let (r0, f0) = if k == 0 { (0.0, 0.0) } else { (r[k - 1], f[k - 1]) };
        if f[k] > f0 { r0 + (r[k] - r0) * (frac - f0) / (f[k] - f0) } else { r[k] }
    }

    fn fraction_at_sorted(r: &[f64], f: &[f64], x: f64) -> f64 {
        if x <= 0.0 {
            return 0.0;
        }
        let k = r.partition_point(|&y| y <= x);
        if k >= r.len() {
            return 1.0;
        }
        let (r0, f0) = if k == 0 { (0.0, 0.0) } else { (r[k - 1], f[k - 1]) };
        interpolate(x, r0, f0, r[k], f[k])
    }

    #[test]
    fn block_binning_agrees_with_the_bin_of_each_radius() {
        // Common practice: the histogram pass and the refinement that
        // reads it must put every radius in the same bin; edges of bins,
        // the largest radius, a little past it and NaN included.
        let rmax = 0.37;
        let e = EncircledEnergy::from_radii([0.0; 2], vec![0.0, rmax], &[1.0, 1.0], Some(1.0), rmax);
        let mut r = vec![0.0, 1e-300, rmax, rmax * (1.0 + 1e-15), 2.0 * rmax, f64::NAN, -0.0];
        for k in [1, 2, 17, BINS / 2, BINS - 1] {
            let edge = k as f64 / e.scale;
            r.extend([edge, f64::from_bits(edge.to_bits() - 1), f64::from_bits(edge.to_bits() + 1)]);
        }
        let mut out = [0u16; HIST_BLOCK];
        e.bins_of(&r, &mut out);
        for (x, &b) in r.iter().zip(&out) {
            assert_eq!(b as usize, e.bin(*x), "radius {x}");
        }
    }

    #[test]
    fn histogram_figures_equal_the_full_sort() {
        // Common practice: the binned method must reproduce the sorted
        // definition. Spots with ties, a point mass, unequal weights.
        let mut seed = 0x1234_5678_u64;
        let mut next = || {
            seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (seed >> 11) as f64 / (1u64 << 53) as f64
        };
        for case in 0..6 {
            let mut h = ScreenHits::default();
            let n = [1usize, 2, 7, 100, 5000, 20000][case];
            for i in 0..n {
                let r = if case == 3 && i % 3 == 0 { 0.25 } else { next() };
                let t = next() * std::f64::consts::TAU;
                h.u.push(1.0 + r * t.cos());
                h.v.push(-2.0 + r * t.sin());
                h.du.push(0.0);
                h.dv.push(0.0);
                h.dw.push(-1.0);
                h.opl.push(0.0);
                h.weight.push(if case == 4 { 0.5 + next() } else { 1e-3 });
                h.source.push(0);
            }
            let e = encircled_energy(&h, Some(0)).unwrap();
            let (r, f) = sorted(&e);
            for frac in [1e-9, 0.1, 0.5, 0.8, 0.999, 1.0] {
                let a = e.radius_for(frac).unwrap();
                let b = radius_for_sorted(&r, &f, frac);
                assert!((a - b).abs() <= 1e-12 * (1.0 + b), "case {case} frac {frac}: {a} vs {b}");
            }
            let (cr, cf) = e.curve(101);
            for (x, y) in cr.iter().zip(&cf) {
                let want = fraction_at_sorted(&r, &f, x * 1e-3);
                assert!((y - want).abs() < 1e-12, "case {case} r {x}: {y} vs {want}");
                assert!((e.fraction_at(x * 1e-3) - want).abs() < 1e-12);
            }
        }
    }
}
