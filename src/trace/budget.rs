//! Bounded work: an upper estimate of a trace's cost before it starts, and
//! a cap on the screen hits it may record while it runs.
//!
//! Two facing concave mirrors can keep a ray bouncing up to `max_bounces`
//! times, and a screen between them records every crossing: a trace's
//! cost and memory are not set by the ray count alone.
//!
//! * [`work_estimate`]: element tests in the worst case — rays × the most
//!   events a ray may have ((max_bounces + 1) reflections, each leg crossing
//!   every screen once) × the elements each event is tested against. Front
//!   ends refuse layouts above [`WORK_BUDGET`] unless asked to go on.
//! * [`MAX_RECORDED_HITS`]: screen hits a trace may record in all (about
//!   60 bytes each). Every chunk of rays may record its share of it (in
//!   proportion to its rays) and at least [`MIN_HITS_PER_RAY`] per ray; a
//!   chunk over its share stops and the trace is marked
//!   [`Limit::TooManyHits`]. The shares depend only on the ray counts, so
//!   the outcome is the same whatever the thread count.

use crate::scene::{Part, Scene};

/// Largest [`work_estimate`] a front end traces without being asked to
/// (element tests; a few seconds to a minute on one core).
pub const WORK_BUDGET: u64 = 4_000_000_000;
/// Most screen hits one trace records (≈ 1 GB).
pub const MAX_RECORDED_HITS: u64 = 16_000_000;
/// Each chunk may record at least this many hits per ray.
pub const MIN_HITS_PER_RAY: u64 = 16;

/// Why a trace stopped short.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Limit {
    /// Some rays would record more screen hits than their share of
    /// [`MAX_RECORDED_HITS`]; the hits were dropped.
    TooManyHits { cap: u64 },
}

impl std::fmt::Display for Limit {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Limit::TooManyHits { cap } => write!(
                f,
                "the trace would record more than {cap} screen hits (rays crossing screens again and again, \
                 as in a cavity); lower the ray count or max_bounces, or make the screens opaque"
            ),
        }
    }
}

/// Worst-case element tests of tracing `rays` rays in all (see the module
/// documentation).
pub fn work_estimate(scene: &Scene, rays: u64) -> u64 {
    let screens = scene.elements.iter().filter(|e| matches!(e.part, Part::Screen { .. })).count() as u64;
    let events = (u64::from(scene.max_bounces) + 1).saturating_mul(screens + 1);
    rays.saturating_mul(events).saturating_mul(scene.elements.len().max(1) as u64)
}

/// Hits a chunk of `chunk_rays` rays out of `total_rays` may record when
/// the whole trace may record `max_hits`.
pub(crate) fn chunk_hit_cap(chunk_rays: u64, total_rays: u64, max_hits: u64) -> u64 {
    let share = (max_hits as u128 * chunk_rays as u128 / total_rays.max(1) as u128) as u64;
    share.max(MIN_HITS_PER_RAY.saturating_mul(chunk_rays).min(max_hits))
}
