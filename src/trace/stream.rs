//! Streaming (non-temporal) copies of hit columns into a trace's result.
//!
//! The result of a big trace is written once and is far larger than the
//! caches: a plain store first fetches each line it overwrites, doubling
//! the memory traffic. On x86-64 the threaded trace's copies into the
//! result bypass the cache instead (`run/direct.rs`). The one-thread trace
//! keeps plain stores: streaming them made its own trace 5 % faster but
//! the analyses after it 15 % slower, which then found no part of the
//! result left in the cache.

use std::mem::MaybeUninit;

/// Copies `src` into `dst` with streaming (non-temporal) stores on
/// x86-64: the result is written once and read only after the trace, so
/// its cache lines need not be fetched before they are overwritten.
/// [`fence`] must follow before another thread reads them.
pub(crate) fn put_f64(dst: &mut [MaybeUninit<f64>], src: &[f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        use std::arch::x86_64::{_mm_loadu_pd, _mm_stream_pd};
        let n = dst.len().min(src.len());
        let d = dst.as_mut_ptr().cast::<f64>();
        let mut i = 0;
        while i < n && !(d.wrapping_add(i) as usize).is_multiple_of(16) {
            dst[i].write(src[i]);
            i += 1;
        }
        while i + 2 <= n {
            // SAFETY: i + 2 ≤ n, within both slices; d + i is 16-byte
            // aligned (the loop above); SSE2 is part of x86-64.
            unsafe { _mm_stream_pd(d.add(i), _mm_loadu_pd(src.as_ptr().add(i))) };
            i += 2;
        }
        for (d, s) in dst[i..n].iter_mut().zip(&src[i..n]) {
            d.write(*s);
        }
    }
    #[cfg(not(target_arch = "x86_64"))]
    for (d, s) in dst.iter_mut().zip(src) {
        d.write(*s);
    }
}

/// Orders this thread's streaming stores before what follows (the end of
/// its job, after which other threads read the result).
pub(crate) fn fence() {
    #[cfg(target_arch = "x86_64")]
    // SAFETY: SSE is part of x86-64.
    unsafe {
        std::arch::x86_64::_mm_sfence()
    };
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn streaming_copy_writes_every_value_at_any_alignment_and_length() {
        // Common practice: a copy is checked against the plain one, here at
        // every start offset (so every 16-byte alignment of the target) and
        // lengths around the two-value store.
        let src: Vec<f64> = (0..40).map(|k| k as f64 * 1.5 - 7.25).collect();
        for at in 0..4 {
            for n in 0..12 {
                let mut dst = vec![MaybeUninit::new(f64::NAN); 64];
                put_f64(&mut dst[at..at + n], &src[..n]);
                fence();
                // SAFETY: every slot was initialised (NaN, or copied).
                let got: Vec<f64> = dst.iter().map(|x| unsafe { x.assume_init() }).collect();
                for (k, g) in got.iter().enumerate() {
                    if (at..at + n).contains(&k) {
                        assert_eq!(g.to_bits(), src[k - at].to_bits(), "offset {at}, length {n}, slot {k}");
                    } else {
                        assert!(g.is_nan(), "offset {at}, length {n}: slot {k} outside the copy was written");
                    }
                }
            }
        }
    }
}
