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

/// What the lane-generic formulas need: f64 itself, [`V4`] or [`Y4`].
pub(crate) trait Lane: Copy + Add<Output = Self> + Sub<Output = Self> + Mul<Output = Self> + From<f64> {}
impl Lane for f64 {}
impl Lane for V4 {}

/// Four lanes with what the analysis passes do to them besides
/// arithmetic: [`V4`] in the portable copies, [`Y4`] in the AVX2 ones.
/// Both give the bits of the scalar operations lane by lane.
pub(crate) trait Quad: Lane {
    /// The lanes of a group of [`LANES`] values.
    fn load(a: &[f64; LANES]) -> Self;
    /// The lanes as values.
    fn lanes(self) -> [f64; LANES];
    fn sqrt(self) -> Self;
    /// As [`V4::least`].
    fn least(self, o: Self) -> Self;
    /// As [`V4::greatest`].
    fn greatest(self, o: Self) -> Self;
    /// Lane by lane, `a` where this lane is above 0, else `b`.
    fn where_positive(self, a: Self, b: Self) -> Self;
    /// Lane by lane, `a` where this lane is at most 0, else `b`.
    fn where_not_positive(self, a: Self, b: Self) -> Self;
    /// Lane by lane, −x.
    fn neg(self) -> Self;
}

impl Quad for V4 {
    #[inline(always)]
    fn load(a: &[f64; LANES]) -> V4 {
        V4(*a)
    }
    #[inline(always)]
    fn lanes(self) -> [f64; LANES] {
        self.0
    }
    #[inline(always)]
    fn sqrt(self) -> V4 {
        V4::sqrt(self)
    }
    #[inline(always)]
    fn least(self, o: V4) -> V4 {
        V4::least(self, o)
    }
    #[inline(always)]
    fn greatest(self, o: V4) -> V4 {
        V4::greatest(self, o)
    }
    #[inline(always)]
    fn where_positive(self, a: V4, b: V4) -> V4 {
        V4(std::array::from_fn(|l| if self.0[l] > 0.0 { a.0[l] } else { b.0[l] }))
    }
    #[inline(always)]
    fn where_not_positive(self, a: V4, b: V4) -> V4 {
        V4(std::array::from_fn(|l| if self.0[l] <= 0.0 { a.0[l] } else { b.0[l] }))
    }
    #[inline(always)]
    fn neg(self) -> V4 {
        V4(self.0.map(|x| -x))
    }
}

#[cfg(target_arch = "x86_64")]
pub(crate) use avx::Y4;

#[cfg(target_arch = "x86_64")]
mod avx {
    use super::{Lane, Quad, LANES};
    use std::arch::x86_64::*;
    use std::ops::{Add, Mul, Sub};

    /// Four f64 lanes in one 256-bit AVX register. A loop over [`super::V4`]
    /// is left to the compiler, which splits many of its operations into
    /// 128-bit halves and single lanes; here each operation is the one
    /// instruction. The operations are IEEE's, lane by lane, with no fused
    /// multiply–add, so the bits are [`super::V4`]'s.
    ///
    /// Only for code compiled with AVX2 enabled (a `#[target_feature(enable
    /// = "avx2")]` function, run once `trace::Kernel` found AVX2): the
    /// methods are always inlined there, and each `unsafe` below is an AVX
    /// instruction that such a caller guarantees.
    #[derive(Clone, Copy)]
    pub(crate) struct Y4(__m256d);

    impl From<f64> for Y4 {
        #[inline(always)]
        fn from(x: f64) -> Y4 {
            // SAFETY: see the type.
            Y4(unsafe { _mm256_set1_pd(x) })
        }
    }

    impl Add for Y4 {
        type Output = Y4;
        #[inline(always)]
        fn add(self, o: Y4) -> Y4 {
            // SAFETY: see the type.
            Y4(unsafe { _mm256_add_pd(self.0, o.0) })
        }
    }

    impl Sub for Y4 {
        type Output = Y4;
        #[inline(always)]
        fn sub(self, o: Y4) -> Y4 {
            // SAFETY: see the type.
            Y4(unsafe { _mm256_sub_pd(self.0, o.0) })
        }
    }

    impl Mul for Y4 {
        type Output = Y4;
        #[inline(always)]
        fn mul(self, o: Y4) -> Y4 {
            // SAFETY: see the type.
            Y4(unsafe { _mm256_mul_pd(self.0, o.0) })
        }
    }

    impl Lane for Y4 {}

    // SAFETY (every block below): see the type; the loads and stores read
    // and write exactly the four values of an array.
    impl Quad for Y4 {
        #[inline(always)]
        fn load(a: &[f64; LANES]) -> Y4 {
            Y4(unsafe { _mm256_loadu_pd(a.as_ptr()) })
        }
        #[inline(always)]
        fn lanes(self) -> [f64; LANES] {
            let mut a = [0.0; LANES];
            unsafe { _mm256_storeu_pd(a.as_mut_ptr(), self.0) };
            a
        }
        #[inline(always)]
        fn sqrt(self) -> Y4 {
            Y4(unsafe { _mm256_sqrt_pd(self.0) })
        }
        // `max(a, b)` is `if a > b { a } else { b }` (b on a NaN), so the
        // new value goes first.
        #[inline(always)]
        fn least(self, o: Y4) -> Y4 {
            Y4(unsafe { _mm256_min_pd(o.0, self.0) })
        }
        #[inline(always)]
        fn greatest(self, o: Y4) -> Y4 {
            Y4(unsafe { _mm256_max_pd(o.0, self.0) })
        }
        // Ordered comparisons: false on a NaN, as Rust's `>` and `<=`.
        #[inline(always)]
        fn where_positive(self, a: Y4, b: Y4) -> Y4 {
            Y4(unsafe { _mm256_blendv_pd(b.0, a.0, _mm256_cmp_pd::<_CMP_GT_OQ>(self.0, _mm256_setzero_pd())) })
        }
        #[inline(always)]
        fn where_not_positive(self, a: Y4, b: Y4) -> Y4 {
            Y4(unsafe { _mm256_blendv_pd(b.0, a.0, _mm256_cmp_pd::<_CMP_LE_OQ>(self.0, _mm256_setzero_pd())) })
        }
        #[inline(always)]
        fn neg(self) -> Y4 {
            Y4(unsafe { _mm256_xor_pd(self.0, _mm256_set1_pd(-0.0)) })
        }
    }
}

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

    /// Every operation of [`Quad`] on `a` and `b`, as values.
    #[inline(always)]
    fn quad_ops<Q: Quad>(a: [f64; LANES], b: [f64; LANES]) -> [[f64; LANES]; 10] {
        let (x, y) = (Q::load(&a), Q::load(&b));
        [
            (x + y).lanes(),
            (x - y).lanes(),
            (x * y).lanes(),
            x.sqrt().lanes(),
            x.least(y).lanes(),
            x.greatest(y).lanes(),
            x.where_positive(x, y).lanes(),
            x.where_not_positive(x, y).lanes(),
            x.neg().lanes(),
            Q::from(a[1]).lanes(),
        ]
    }

    /// Inputs that reach every edge of the operations: signed zeros,
    /// infinities, NaN on either side, subnormals, ties.
    const QUAD_CASES: [([f64; LANES], [f64; LANES]); 4] = [
        ([1.5, -2.25, 3.0e-7, 8.0], [0.1, 7.0, -3.0, f64::NAN]),
        ([0.0, -0.0, f64::NAN, f64::INFINITY], [-0.0, 0.0, 1.0, f64::NEG_INFINITY]),
        ([f64::MIN_POSITIVE / 8.0, -1e300, 2.0, -5.0], [1e300, f64::MIN_POSITIVE, 2.0, -5.0]),
        ([f64::NEG_INFINITY, 4.0, -0.5, 1e-320], [f64::NAN, f64::NAN, 0.25, -1e-320]),
    ];

    #[cfg(target_arch = "x86_64")]
    #[test]
    fn avx_lanes_give_the_bits_of_the_portable_lanes() {
        // Common practice for run-time dispatched SIMD: the register type
        // must agree bit for bit with the portable one it stands in for.
        #[target_feature(enable = "avx2")]
        fn on_avx(a: [f64; LANES], b: [f64; LANES]) -> [[f64; LANES]; 10] {
            quad_ops::<Y4>(a, b)
        }
        if !std::arch::is_x86_feature_detected!("avx2") {
            eprintln!("no AVX2 here: the AVX copies are never chosen");
            return;
        }
        for (a, b) in QUAD_CASES {
            // SAFETY: AVX2 was detected above.
            let got = unsafe { on_avx(a, b) };
            let want = quad_ops::<V4>(a, b);
            for (k, (g, w)) in got.iter().zip(&want).enumerate() {
                assert_eq!(g.map(f64::to_bits), w.map(f64::to_bits), "operation {k} of {a:?}, {b:?}: {g:?} vs {w:?}");
            }
        }
    }

    #[test]
    fn portable_quad_operations_are_the_scalar_ones() {
        // Common practice: each lane is the scalar operation (`<`/`>` as
        // in `f64::min`/`max` for numbers, a NaN newcomer passed over).
        for (a, b) in QUAD_CASES {
            let got = quad_ops::<V4>(a, b);
            for l in 0..LANES {
                let (x, y) = (a[l], b[l]);
                let want = [
                    x + y,
                    x - y,
                    x * y,
                    x.sqrt(),
                    if y < x { y } else { x },
                    if y > x { y } else { x },
                    if x > 0.0 { x } else { y },
                    if x <= 0.0 { x } else { y },
                    -x,
                    a[1],
                ];
                for (k, w) in want.iter().enumerate() {
                    assert_eq!(got[k][l].to_bits(), w.to_bits(), "operation {k}, lane {l}: {x}, {y}");
                }
            }
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

