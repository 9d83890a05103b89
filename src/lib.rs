//! Catoptric: a ray-optics workbench for curved mirrors.
//!
//! Data flows one way: [`layout`] (file format, validation, share links) →
//! [`scene`] (compiled geometry) → [`trace`] (sources and the tracer) →
//! [`analysis`] (spot statistics and the focus and flux analyses).
//! [`design`] holds the closed-form designers and mirror-testing tables,
//! which emit layouts; [`sun`] places the sun from a date, a time and a
//! site and sweeps a day. The core has no web or I/O dependency; `src/web`
//! (wasm only) and `src/bin` are thin front ends.

/// Calls `body(args…)` compiled for the instruction set `kernel` names
/// (AVX-512, AVX2, else the portable build; see `trace::Kernel`), chosen at
/// run time. The body should be `#[inline(always)]`; every copy runs the
/// same operations in the same order (no fused multiply–add), so they give
/// the same bits. Used for the tracer's kernels and the analyses' hot loops.
macro_rules! best_simd {
    ($kernel:expr, $body:ident ( $($a:ident : $t:ty),* ) -> $r:ty) => {{
        let kernel: $crate::trace::Kernel = $kernel;
        #[cfg(target_arch = "x86_64")]
        {
            #[target_feature(enable = "avx2,avx512f,avx512vl")]
            fn avx512($($a: $t),*) -> $r {
                $body($($a),*)
            }
            #[target_feature(enable = "avx2")]
            fn avx2($($a: $t),*) -> $r {
                $body($($a),*)
            }
            match kernel {
                // SAFETY: `Kernel::available` (and so `detect`) names these
                // only when the CPU has the features.
                $crate::trace::Kernel::Avx512 => return unsafe { avx512($($a),*) },
                $crate::trace::Kernel::Avx2 => return unsafe { avx2($($a),*) },
                $crate::trace::Kernel::Portable => {}
            }
        }
        let _ = kernel;
        // A function of its own in the wasm build too: V8 compiles and
        // profiles each kernel apart (and the page's stacks name it).
        #[cfg(target_arch = "wasm32")]
        #[inline(never)]
        fn portable($($a: $t),*) -> $r {
            $body($($a),*)
        }
        #[cfg(not(target_arch = "wasm32"))]
        use $body as portable;
        portable($($a),*)
    }};
}

pub mod analysis;
pub mod bench_scenes;
pub mod design;
pub mod error;
pub mod format;
pub mod geometry;
pub mod layout;
pub mod pixels;
pub mod scene;
pub mod sun;
pub mod trace;
#[cfg(target_arch = "wasm32")]
pub mod web;

pub use error::InputError;
pub use layout::{parse_layout, validate, Layout};
pub use scene::Scene;
pub use trace::{trace, TraceOptions, TraceResult};
