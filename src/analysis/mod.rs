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

pub use caustic::{caustic, caustic_raster, MAX_RASTER_SIDE};
pub use cone::{airy_radius, cone_half_angle, f_number, mean_direction, AIRY_FACTOR};
pub use energy::{encircled_energy, EncircledEnergy};
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
