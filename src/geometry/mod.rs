//! Geometry: local frames, sag profiles, apertures and ray–surface
//! intersection, all in millimetres.
//!
//! # Tolerance
//!
//! Lengths in layouts range from micrometres (departures) to tens of metres
//! (a facade). The tolerances below are therefore relative to the size of
//! the part involved, never bare epsilons:
//!
//! * [`SELF_HIT_REL`]: a ray leaving a surface ignores hits closer than
//!   this fraction of the scene size (1e-9 of a 1 m scene is 1 pm).
//! * [`SAG_SOLVE_REL`]: the iterative solver for aspheric and spline sags
//!   stops when the bracket is this fraction of the part size (1e-13 of a
//!   200 mm mirror is 2e-11 mm), or after [`SAG_SOLVE_MAX_ITER`] steps.
//! * [`SAG_BRACKET_STEPS`]: how many pieces the ray's path through the
//!   part's slab is cut into to find the first sign change. Two crossings
//!   closer together than one piece (a ray grazing a ripple) may be missed.

mod aperture;
mod frame;
mod profile;
mod quadratic;
mod spline;
mod surface;

pub use aperture::Aperture;
pub use frame::{plane_dir, Frame};
pub use profile::{Profile, Sag};
pub use quadratic::solve_quadratic;
pub use spline::NaturalSpline;
pub use surface::{Hit, MirrorSurface};

/// Vectors are nalgebra's `Vector3<f64>`, in mm (positions) or unitless
/// (directions).
pub type Vec3 = nalgebra::Vector3<f64>;

/// Hits closer than this fraction of the scene size are the surface the ray
/// just left.
pub const SELF_HIT_REL: f64 = 1e-9;
/// Relative stopping tolerance of the general sag solver.
pub const SAG_SOLVE_REL: f64 = 1e-13;
/// Iteration cap of the general sag solver (per bracket).
pub const SAG_SOLVE_MAX_ITER: usize = 80;
/// Pieces of the in-slab path scanned for a sign change.
pub const SAG_BRACKET_STEPS: usize = 24;

/// max(x, 0), and 0 for NaN (as `x.max(0.0)`), written as a comparison:
/// `f64::max` is a library call in a wasm build, which stops the loops
/// around it from vectorising.
#[inline(always)]
pub fn positive_part(x: f64) -> f64 {
    if x > 0.0 { x } else { 0.0 }
}

/// `v` scaled to unit length: one square root and one division (the
/// tracers' normals and directions all go through this, so the batched
/// and reference tracers round alike).
#[inline(always)]
pub fn unit(v: &Vec3) -> Vec3 {
    let inv = 1.0 / (v.x * v.x + v.y * v.y + v.z * v.z).sqrt();
    Vec3::new(v.x * inv, v.y * inv, v.z * inv)
}

/// Mirror reflection of `d` about unit normal `n`: d − 2(d·n)n.
#[inline]
pub fn reflect(d: &Vec3, n: &Vec3) -> Vec3 {
    d - n * (2.0 * d.dot(n))
}
