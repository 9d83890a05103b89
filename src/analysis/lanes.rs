//! Four f64 lanes as one value, for the analyses' hot loops: arithmetic
//! on [`V4`] is element by element, which the compiler turns into one
//! vector instruction per operation (where a loop of running sums with
//! many accumulators is left scalar). The same operations in the same
//! order as on four separate f64, so the results are bit for bit those of
//! the scalar formula.

use std::ops::{Add, Mul, Sub};

/// Lanes per value.
pub(crate) const LANES: usize = 4;

#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct V4(pub [f64; LANES]);

impl V4 {
    #[inline(always)]
    fn map2(self, o: V4, f: impl Fn(f64, f64) -> f64) -> V4 {
        V4([f(self.0[0], o.0[0]), f(self.0[1], o.0[1]), f(self.0[2], o.0[2]), f(self.0[3], o.0[3])])
    }

    /// Lane by lane, the lesser (as `f64::min` for numbers; a NaN in `o` is passed over).
    #[inline(always)]
    pub fn least(self, o: V4) -> V4 {
        self.map2(o, |a, b| if b < a { b } else { a })
    }

    /// Lane by lane, the square root.
    #[inline(always)]
    pub fn sqrt(self) -> V4 {
        V4(self.0.map(f64::sqrt))
    }

    /// Lane by lane, the greater (as `f64::max` for numbers; a NaN in `o` is passed over).
    #[inline(always)]
    pub fn greatest(self, o: V4) -> V4 {
        self.map2(o, |a, b| if b > a { b } else { a })
    }
}

/// The columns (all as long as the first) in whole groups of [`LANES`],
/// each cut to the same number of groups (so indexing a group needs no
/// check per column); and the index where the ungrouped rest starts.
#[inline(always)]
pub(crate) fn groups<const C: usize>(cols: [&[f64]; C]) -> ([&[[f64; LANES]]; C], usize) {
    let n = cols[0].len() / LANES;
    (cols.map(|c| &c.as_chunks::<LANES>().0[..n]), n * LANES)
}

impl From<f64> for V4 {
    /// Every lane `x`.
    #[inline(always)]
    fn from(x: f64) -> V4 {
        V4([x; LANES])
    }
}

impl Add for V4 {
    type Output = V4;
    #[inline(always)]
    fn add(self, o: V4) -> V4 {
        self.map2(o, |a, b| a + b)
    }
}

impl Sub for V4 {
    type Output = V4;
    #[inline(always)]
    fn sub(self, o: V4) -> V4 {
        self.map2(o, |a, b| a - b)
    }
}

impl Mul for V4 {
    type Output = V4;
    #[inline(always)]
    fn mul(self, o: V4) -> V4 {
        self.map2(o, |a, b| a * b)
    }
}

/// What the lane-generic formulas need: f64 itself, or [`V4`].
pub(crate) trait Lane: Copy + Add<Output = Self> + Sub<Output = Self> + Mul<Output = Self> + From<f64> {}
impl Lane for f64 {}
impl Lane for V4 {}

/// ⌊x⌋ of `x` clamped to [0, `top`] (NaN to 0), for a bin or pixel index;
/// `top` is a whole number below 2³¹. As `x.clamp(0.0, top) as i32`, but
/// with plain comparisons and no saturating conversion, which keeps the
/// loops calling it vectorised.
#[inline(always)]
pub(crate) fn cell(x: f64, top: f64) -> u32 {
    let y = if x > 0.0 { x } else { 0.0 };
    let y = if y < top { y } else { top };
    // SAFETY: 0 ≤ y ≤ top < 2³¹ and not NaN: an i32 holds its integer part.
    unsafe { y.to_int_unchecked::<i32>() as u32 }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cell_is_the_saturating_floor_of_the_clamped_value() {
        // Common practice: the vectorisable index must equal Rust's own
        // `x.clamp(0, top) as i32` (NaN to 0) at and around every edge.
        let top = 4095.0;
        let xs = [0.0, -0.0, 1e-300, 0.5, 1.0, 4094.999999, top, top + 0.5, 1e300, -1.0, -1e300, f64::INFINITY, f64::NEG_INFINITY, f64::NAN];
        for x in xs {
            assert_eq!(cell(x, top), x.clamp(0.0, top) as i32 as u32, "x = {x}");
        }
    }

    #[test]
    fn lanes_compute_what_four_scalars_do() {
        // Common practice: a lane-wise type must agree bit for bit with
        // the scalar operations it stands for, including the order of a
        // compound expression.
        let (a, b) = (V4([1.5, -2.25, 3.0e-7, 8.0]), V4([0.1, 7.0, -3.0, f64::NAN]));
        let e = (a * b + a) - b;
        for l in 0..LANES {
            let (x, y) = (a.0[l], b.0[l]);
            assert_eq!(e.0[l].to_bits(), ((x * y + x) - y).to_bits(), "lane {l}");
        }
        assert_eq!(a.least(b).0[..3], [0.1, -2.25, -3.0]);
        assert_eq!(a.greatest(b).0[..3], [1.5, 7.0, 3.0e-7]);
        // A NaN in the new value leaves the running value as it was.
        assert_eq!((a.least(b).0[3], a.greatest(b).0[3]), (8.0, 8.0));
        assert_eq!(V4::from(2.0), V4([2.0; 4]));
        assert_eq!(V4([4.0, 2.0, 0.0, 9.0]).sqrt(), V4([2.0, 2f64.sqrt(), 0.0, 3.0]));
        let (x, y) = ([1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0], [0.0; 9]);
        let ([gx, gy], rest) = groups([&x[..], &y[..]]);
        assert_eq!((gx, gy.len(), rest), (&[[1.0, 2.0, 3.0, 4.0], [5.0, 6.0, 7.0, 8.0]][..], 2, 8));
    }
}

