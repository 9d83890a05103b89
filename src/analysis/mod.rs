//! Analyses of a finished trace: spot statistics, best focus and the
//! through-focus curve, the working f-number and Airy radius, wavefront
//! error and Strehl estimate, encircled energy, longitudinal aberration,
//! the caustic raster, flux maps and concentration, the report, and the
//! diffraction image (PSF, MTF, Zernike terms).

mod caustic;
mod cone;
mod energy;
mod flux;
mod focus;
mod fused;
mod lanes;
mod longitudinal;
mod psf;
mod pupil;
mod report;
mod select;
mod spot;
mod wavefront;
pub mod zernike;

/// Runs `a` and `b` at once on the thread pool natively (each one is
/// sequential inside, so the answers do not depend on the threads), one
/// after the other in a wasm module.
use std::ops::Range;

pub(crate) fn join<A: Send, B: Send>(a: impl FnOnce() -> A + Send, b: impl FnOnce() -> B + Send) -> (A, B) {
    #[cfg(not(target_arch = "wasm32"))]
    {
        rayon::join(a, b)
    }
    #[cfg(target_arch = "wasm32")]
    {
        (a(), b())
    }
}

/// Hits per chunk of a pass. Fixed, so no sum depends on how many threads
/// run the chunks: chunk partials are added in chunk order.
pub(crate) const CHUNK: usize = 1 << 15;

/// `f` of each chunk of `0..n`, in chunk order; natively the chunks run on
/// the thread pool.
pub(crate) fn over_chunks<T: Send>(n: usize, f: impl Fn(Range<usize>) -> T + Sync + Send) -> Vec<T> {
    over_parts(n, CHUNK, f)
}

/// `f` of each part of `0..n` (parts of `size`, the last one shorter), in
/// order; natively the parts run on the thread pool.
pub(crate) fn over_parts<T: Send>(n: usize, size: usize, f: impl Fn(Range<usize>) -> T + Sync + Send) -> Vec<T> {
    let size = size.max(1);
    let ranges: Vec<Range<usize>> = (0..n.div_ceil(size)).map(|c| c * size..((c + 1) * size).min(n)).collect();
    #[cfg(not(target_arch = "wasm32"))]
    {
        use rayon::prelude::*;
        ranges.into_par_iter().map(f).collect()
    }
    #[cfg(target_arch = "wasm32")]
    {
        ranges.into_iter().map(f).collect()
    }
}

/// [`over_chunks`] with each chunk's part of `out` to write.
pub(crate) fn over_chunks_mut<T: Send, E: Send>(out: &mut [E], f: impl Fn(Range<usize>, &mut [E]) -> T + Sync + Send) -> Vec<T> {
    let at = |c: usize, o: &mut [E]| f(c * CHUNK..c * CHUNK + o.len(), o);
    #[cfg(not(target_arch = "wasm32"))]
    {
        use rayon::prelude::*;
        out.par_chunks_mut(CHUNK).enumerate().map(|(c, o)| at(c, o)).collect()
    }
    #[cfg(target_arch = "wasm32")]
    {
        out.chunks_mut(CHUNK).enumerate().map(|(c, o)| at(c, o)).collect()
    }
}


pub use caustic::{caustic, caustic_raster, MAX_RASTER_SIDE};
pub use cone::{airy_radius, cone_half_angle, f_number, mean_direction, AIRY_FACTOR};
pub use energy::{encircled_energy, EncircledEnergy};
pub(crate) use flux::flux_stats_with;
pub use flux::{
    beam_irradiance, flux_map, flux_stats, flux_stats_of, screen_geometry, FluxMap, FluxStats, DEFAULT_FLUX_GRID,
    MAX_FLUX_GRID,
};
pub use focus::{
    default_focus_range, focus_fit, through_focus, through_focus_of, FocusFit, ThroughFocus, MIN_FOCUS_RANGE_MM,
    MIN_SLOPE_SPREAD,
};
pub use longitudinal::{longitudinal_aberration, trace_meridional, LongitudinalAberration};
pub use psf::{
    check_grid, psf, EeDiffraction, MtfCurves, Psf, PsfFocus, PsfImageInfo, PsfOptions, PsfReport, ZernikeTerm, DEFAULT_PSF_GRID,
    MAX_PSF_GRID, MIN_PSF_GRID, MIN_PSF_HITS, PSF_PADDING,
};
pub use pupil::{resample, PupilGrid, PupilRays};
pub use report::{analyse_all, first_arrivals, trace_report, Analyses, ScreenReport, SourceCurves, SourceReport, TraceReport, CURVE_POINTS};
pub use spot::{spot_stats, SpotStats};
pub use wavefront::{strehl_from_rms, wavefront, wavefront_map, WavefrontMap, WavefrontStats, MARECHAL_RMS_WAVES};

/// Shared by the analyses' unit tests: a reproducible stream of numbers.
#[cfg(test)]
pub(crate) mod test_rng {
    /// Numbers in [0, 1) from a 64-bit linear congruential generator
    /// (Knuth's MMIX constants; common practice for a fixed test stream).
    pub fn uniform(mut seed: u64) -> impl FnMut() -> f64 {
        move || {
            seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (seed >> 11) as f64 / (1u64 << 53) as f64
        }
    }
}
