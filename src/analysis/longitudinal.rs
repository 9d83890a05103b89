//! Longitudinal aberration: where each meridional ray crosses the screen's
//! axis, against its height in the source's pupil.
//!
//! Meridional rays are those of [`crate::trace::Emitter::fan_ray`]: evenly
//! across a beam's diameter (height in mm from the beam's centre line,
//! positive toward the beam frame's local +y) or evenly in angle across a
//! lamp's cone (degrees from its axis). Each is traced through the scene by
//! the ordinary tracer as a one-ray source; a ray that reaches the screen
//! at height v with direction (dv, dw) in the screen frame crosses the
//! screen's axis (v = 0) at w = −v·dw/dv, measured from the screen plane,
//! positive along the screen's axis (toward the light, as for the best
//! focus shift). Rays that miss the screen, and the central ray (which runs
//! along the axis and has no crossing), are left out.

use crate::layout::Source;
use crate::scene::Scene;
use crate::trace::{trace, TraceOptions, TraceResult};

/// Longitudinal aberration curve of one source on one screen.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct LongitudinalAberration {
    /// Normalised pupil coordinate of each ray, −1..1.
    pub pupil: Vec<f64>,
    /// Height in the pupil: mm across a beam, degrees across a lamp's cone.
    pub height: Vec<f64>,
    /// "mm" or "deg", the unit of `height`.
    pub height_unit: &'static str,
    /// Axis crossing from the screen plane, mm (+ along the screen axis).
    pub crossing_mm: Vec<f64>,
}

/// Pupil coordinate of fan ray `j` of `n` (as `Emitter::fan_ray`).
fn pupil_of(j: usize, n: usize) -> f64 {
    if n <= 1 { 0.0 } else { -1.0 + 2.0 * j as f64 / (n - 1) as f64 }
}

/// Width of the beam a probe ray stands for (mm): thin enough to be one
/// ray, wide enough to carry a positive power through the tracer.
const PROBE_DIAMETER_MM: f64 = 1e-9;

/// One single-ray source per meridional fan ray of `source`, traced on its
/// own: source index k of the result is fan ray k.
pub fn trace_meridional(scene: &Scene, source: usize, n: usize) -> Option<TraceResult> {
    let src = scene.sources.get(source)?;
    let probes: Vec<Source> = (0..n)
        .map(|j| {
            let s = pupil_of(j, n);
            match src {
                Source::Beam(b) => {
                    let mut p = b.clone();
                    let r = 0.5 * b.diameter;
                    let (sn, cs) = b.direction_deg.to_radians().sin_cos();
                    // Beam frame local y is (cos a, −sin a) in [y, z].
                    p.center = [b.center[0] + s * r * cs, b.center[1] - s * r * sn];
                    p.diameter = PROBE_DIAMETER_MM;
                    p.rays = 1;
                    p.pattern = crate::layout::Pattern::Hex;
                    p.sun_half_angle_mrad = 0.0;
                    p.irradiance_w_m2 = 1000.0;
                    Source::Beam(p)
                }
                Source::Point(l) => {
                    let mut p = l.clone();
                    p.direction_deg = l.direction_deg + s * l.cone_half_angle_deg;
                    p.cone_half_angle_deg = 0.0;
                    p.rays = 1;
                    p.pattern = crate::layout::Pattern::Hex;
                    p.power_w = 1.0;
                    Source::Point(p)
                }
            }
        })
        .collect();
    let mut probe_scene = scene.clone();
    probe_scene.sources = probes;
    Some(trace(&probe_scene, TraceOptions { rays: Some(1), ..Default::default() }))
}

/// The longitudinal aberration of `n` meridional rays of source number
/// `source` on screen number `screen` (indices into `scene.sources` and
/// `scene.screen_ids`). `None` for a bad index.
pub fn longitudinal_aberration(scene: &Scene, screen: usize, source: usize, n: usize) -> Option<LongitudinalAberration> {
    if screen >= scene.screen_ids.len() {
        return None;
    }
    let res = trace_meridional(scene, source, n)?;
    let (scale, unit) = match &scene.sources[source] {
        Source::Beam(b) => (0.5 * b.diameter, "mm"),
        Source::Point(l) => (l.cone_half_angle_deg, "deg"),
    };
    let h = &res.screens[screen];
    let mut out = LongitudinalAberration { height_unit: unit, ..Default::default() };
    let mut seen = vec![false; n];
    for i in 0..h.len() {
        let j = h.source[i] as usize;
        if seen[j] {
            continue; // a later pass of the same ray
        }
        seen[j] = true;
        let (v, dv, dw) = (h.v[i], h.dv[i], h.dw[i]);
        if dv.abs() <= 1e-12 * dw.abs() {
            continue;
        }
        let s = pupil_of(j, n);
        out.pupil.push(s);
        out.height.push(s * scale);
        out.crossing_mm.push(-v * dw / dv);
    }
    Some(out)
}
