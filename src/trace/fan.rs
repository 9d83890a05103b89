//! The meridional ray fan: polylines in the layout plane for drawing.

use super::source::Emitter;
use super::tracer::{propagate, Fate, Observer, ScreenHits};
use crate::geometry::Vec3;
use crate::scene::Scene;

/// Fan segments as flat arrays ready for a canvas.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Fan {
    /// Segments as [y0, z0, y1, z1] quadruples, mm.
    pub segments: Vec<f32>,
    /// Source index of each segment.
    pub source: Vec<u16>,
    /// Number of the fan ray (within its source) of each segment.
    pub ray: Vec<u32>,
    /// True for the last leg of a ray that left the scene (drawn on for a
    /// fixed length).
    pub escaping: Vec<u8>,
}

struct Collect<'a> {
    fan: &'a mut Fan,
    src: u16,
    ray: u32,
}

impl Collect<'_> {
    fn push(&mut self, a: &Vec3, b: &Vec3, escaping: bool) {
        self.fan.segments.extend_from_slice(&[a.y as f32, a.z as f32, b.y as f32, b.z as f32]);
        self.fan.source.push(self.src);
        self.fan.ray.push(self.ray);
        self.fan.escaping.push(escaping as u8);
    }
}

impl Observer for Collect<'_> {
    fn segment(&mut self, a: &Vec3, b: &Vec3) {
        self.push(a, b, false);
    }
}

/// Traces `per_source` meridional rays from each source and returns their
/// paths; escaping rays are drawn on for `extend` mm (twice the scene size
/// when `None`).
pub fn trace_fan(scene: &Scene, per_source: usize, extend: Option<f64>) -> Fan {
    let mut fan = Fan::default();
    let mut scratch: Vec<ScreenHits> = vec![ScreenHits::default(); scene.screen_ids.len()];
    let mut hits = 0u64;
    let ext = extend.unwrap_or(scene.scale * 2.0);
    for (si, s) in scene.sources.iter().enumerate() {
        let em = Emitter::new(s, 1);
        for j in 0..per_source {
            let ray = em.fan_ray(j, per_source);
            let mut obs = Collect { fan: &mut fan, src: si as u16, ray: j as u32 };
            let (fate, last) = propagate(scene, ray, si as u32, j as u64, &mut scratch, &mut hits, &mut obs);
            if fate == Fate::Escaped {
                let b = last.origin + last.dir * ext;
                obs.push(&last.origin, &b, true);
            }
        }
        for s in scratch.iter_mut() {
            s.clear();
        }
    }
    fan
}
