//! The non-sequential tracer: each ray meets the nearest element, reflects
//! off mirror fronts, dies on mirror backs, and is recorded by screens.

use super::source::{Emitter, Ray};
use crate::geometry::{reflect, Vec3};
use crate::scene::{Part, Scene};


/// Hits recorded on one screen, as parallel arrays (one entry per hit).
/// Positions are screen coordinates (u along global x, v along the
/// screen's local y) in mm; directions are in the screen frame (w along
/// the screen axis, negative for light arriving on the sensitive face).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ScreenHits {
    pub u: Vec<f64>,
    pub v: Vec<f64>,
    pub du: Vec<f64>,
    pub dv: Vec<f64>,
    pub dw: Vec<f64>,
    /// Optical path length from the source's launch surface, mm.
    pub opl: Vec<f64>,
    /// Power carried, W.
    pub weight: Vec<f64>,
    /// Index into the layout's sources.
    pub source: Vec<u32>,
    /// True for a ray's first arrival on this screen; false when the same
    /// ray comes back (a cavity, a screen between two mirrors).
    pub first: Vec<bool>,
}

impl ScreenHits {
    pub fn len(&self) -> usize {
        self.u.len()
    }
    pub fn is_empty(&self) -> bool {
        self.u.is_empty()
    }
    /// Drops every hit, keeping the capacity.
    pub fn clear(&mut self) {
        self.u.clear();
        self.v.clear();
        self.du.clear();
        self.dv.clear();
        self.dw.clear();
        self.opl.clear();
        self.weight.clear();
        self.source.clear();
        self.first.clear();
    }
    /// Room for `n` more hits in every column.
    pub fn reserve(&mut self, n: usize) {
        self.u.reserve(n);
        self.v.reserve(n);
        self.du.reserve(n);
        self.dv.reserve(n);
        self.dw.reserve(n);
        self.opl.reserve(n);
        self.weight.reserve(n);
        self.source.reserve(n);
        self.first.reserve(n);
    }
    /// Appends hits `r` of `o`.
    pub fn extend_range(&mut self, o: &ScreenHits, r: std::ops::Range<usize>) {
        self.u.extend_from_slice(&o.u[r.clone()]);
        self.v.extend_from_slice(&o.v[r.clone()]);
        self.du.extend_from_slice(&o.du[r.clone()]);
        self.dv.extend_from_slice(&o.dv[r.clone()]);
        self.dw.extend_from_slice(&o.dw[r.clone()]);
        self.opl.extend_from_slice(&o.opl[r.clone()]);
        self.weight.extend_from_slice(&o.weight[r.clone()]);
        self.source.extend_from_slice(&o.source[r.clone()]);
        // Hits built without the first-arrival flag count as first.
        match o.first.get(r.clone()) {
            Some(f) => self.first.extend_from_slice(f),
            None => self.first.extend(r.map(|i| o.first.get(i).copied().unwrap_or(true))),
        }
    }
    #[inline(always)]
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn push(&mut self, u: f64, v: f64, d: &Vec3, opl: f64, w: f64, src: u32, first: bool) {
        self.u.push(u);
        self.v.push(v);
        self.du.push(d.x);
        self.dv.push(d.y);
        self.dw.push(d.z);
        self.opl.push(opl);
        self.weight.push(w);
        self.source.push(src);
        self.first.push(first);
    }
}

/// The screens a ray has been recorded on (screen indices below 256, the
/// most a layout may have; a larger index always counts as a first
/// arrival).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub(crate) struct ScreenSet(pub [u64; 4]);

impl ScreenSet {
    #[inline(always)]
    pub fn contains(&self, i: usize) -> bool {
        i < 256 && self.0[i >> 6] & (1 << (i & 63)) != 0
    }
    #[inline(always)]
    pub fn insert(&mut self, i: usize) {
        if i < 256 {
            self.0[i >> 6] |= 1 << (i & 63);
        }
    }
}

/// Options of a full trace.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct TraceOptions {
    /// Rays per source instead of each source's own `rays`.
    pub rays: Option<usize>,
    /// Threads to trace on (natively); `None` uses every core. The result
    /// is the same whatever the count.
    pub threads: Option<usize>,
    /// Compiled kernel copy to run; `None` picks the best the machine has
    /// (tests run each one against the reference).
    pub kernel: Option<super::Kernel>,
    /// Most screen hits the trace may record (default
    /// [`super::MAX_RECORDED_HITS`]; see `trace::budget`).
    pub max_hits: Option<u64>,
}

/// Everything a trace produced.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct TraceResult {
    pub rays_launched: u64,
    pub rays_escaped: u64,
    pub rays_absorbed: u64,
    /// Rays launched by each source.
    pub launched_by_source: Vec<u64>,
    /// Power each source put out, W.
    pub power_by_source: Vec<f64>,
    /// One record per screen, in `Scene::screen_ids` order.
    pub screens: Vec<ScreenHits>,
    /// Ray–surface intersections computed (mirror and screen hits).
    pub surface_hits: u64,
    /// Set when the trace stopped at a limit (see `trace::budget`); the
    /// screens then hold no hits.
    pub limit: Option<super::budget::Limit>,
}

/// What became of a ray.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Fate {
    Escaped,
    Absorbed,
}

/// Path events reported to an observer (the fan drawer).
pub trait Observer {
    /// The ray moved from `a` to `b`.
    fn segment(&mut self, a: &Vec3, b: &Vec3);
}

/// Observer that ignores everything (the fast path).
pub struct Quiet;
impl Observer for Quiet {
    #[inline(always)]
    fn segment(&mut self, _: &Vec3, _: &Vec3) {}
}

/// Nearest element hit by the ray: (element index, t, local hit data).
struct Nearest {
    index: usize,
    t: f64,
    /// Local hit point and normal (mirror) or local point (screen).
    point: Vec3,
    normal: Vec3,
}

#[inline(always)]
/// `skip` is an element the ray cannot meet again on this leg (the screen
/// plane it has just crossed: a line meets a plane once), or `usize::MAX`.
fn nearest(scene: &Scene, o: &Vec3, d: &Vec3, skip: usize) -> Option<Nearest> {
    let mut best: Option<Nearest> = None;
    let mut t_best = f64::INFINITY;
    let eps = scene.t_eps;
    for (i, e) in scene.elements.iter().enumerate() {
        if i == skip {
            continue;
        }
        // Bounding sphere reject.
        let oc = e.bound_center - o;
        let tca = oc.dot(d);
        let d2 = oc.norm_squared() - tca * tca;
        let r2 = e.bound_radius * e.bound_radius;
        if d2 > r2 {
            continue;
        }
        let thc = (r2 - d2).sqrt();
        if tca + thc <= eps || tca - thc >= t_best {
            continue;
        }
        // Solve from where the ray enters the bounding sphere, not from its
        // origin: a ray launched far away (a beam kilometres off) would
        // otherwise lose precision quadratically with the distance in the
        // intersection's cancellation. Distances are then t0 + t'.
        let t0 = (tca - thc).max(0.0);
        let lo = e.frame.to_local_point(&(o + d * t0));
        let ld = e.frame.to_local_dir(d);
        match &e.part {
            Part::Mirror { surface, .. } => {
                if let Some(h) = surface.intersect(&lo, &ld, eps - t0, t_best - t0) {
                    t_best = t0 + h.t;
                    best = Some(Nearest { index: i, t: t_best, point: h.point, normal: h.normal });
                }
            }
            Part::Screen { half, circle, .. } => {
                if ld.z == 0.0 {
                    continue;
                }
                let tl = -lo.z / ld.z;
                let t = t0 + tl;
                if !(t > eps && t < t_best) {
                    continue;
                }
                let p = lo + ld * tl;
                let inside = if *circle { p.x * p.x + p.y * p.y <= half * half } else { p.x.abs() <= *half && p.y.abs() <= *half };
                if inside {
                    t_best = t;
                    best = Some(Nearest { index: i, t, point: p, normal: Vec3::z() });
                }
            }
        }
    }
    best
}

/// Follows ray number `id` of source `src` through the scene, recording
/// screen hits.
#[inline]
#[allow(clippy::too_many_arguments)]
pub(crate) fn propagate<O: Observer>(
    scene: &Scene,
    mut ray: Ray,
    src: u32,
    id: u64,
    screens: &mut [ScreenHits],
    hits: &mut u64,
    obs: &mut O,
) -> (Fate, Ray) {
    let mut bounces = 0u32;
    let mut seen = ScreenSet::default();
    let mut skip = usize::MAX;
    // Each event is a reflection or a screen crossing; a ray cannot cross
    // more screens than exist between two reflections.
    let max_events = (scene.max_bounces as usize + 1) * (scene.elements.len() + 1);
    for event in 0..max_events {
        let Some(n) = nearest(scene, &ray.origin, &ray.dir, skip) else {
            return (Fate::Escaped, ray);
        };
        *hits += 1;
        let e = &scene.elements[n.index];
        // The hit point from the element's own frame: as precise as the
        // element's coordinates, however far the ray came.
        let p = e.frame.to_world_point(&n.point);
        obs.segment(&ray.origin, &p);
        ray.origin = p;
        ray.opl += n.t;
        match &e.part {
            Part::Mirror { reflectivity, no_return, slope, .. } => {
                let ld = e.frame.to_local_dir(&ray.dir);
                if ld.dot(&n.normal) >= 0.0 {
                    return (Fate::Absorbed, ray); // back face
                }
                bounces += 1;
                ray.weight *= reflectivity;
                if bounces > scene.max_bounces || ray.weight <= 0.0 {
                    return (Fate::Absorbed, ray);
                }
                // d − 2(d·n)n keeps |d| = 1 to rounding (a few ulp per
                // bounce, far below every tolerance): not renormalised.
                ray.dir = e.frame.to_world_dir(&reflect(&ld, &n.normal));
                if let Some(s) = slope {
                    ray.dir = s.perturb(&e.frame, &n.normal, &ray.dir, src, id, event as u32);
                }
                skip = if *no_return { n.index } else { usize::MAX };
            }
            Part::Screen { opaque, index, .. } => {
                let ld = e.frame.to_local_dir(&ray.dir);
                if ld.z < 0.0 {
                    let first = !seen.contains(*index);
                    seen.insert(*index);
                    screens[*index].push(n.point.x, n.point.y, &ld, ray.opl, ray.weight, src, first);
                }
                if *opaque {
                    return (Fate::Absorbed, ray);
                }
                skip = n.index;
            }
        }
    }
    (Fate::Absorbed, ray)
}

/// Traces every source with the scalar reference tracer: one ray at a
/// time through [`propagate`], on one thread. The batched tracer
/// (`trace::trace`) is tested against it; it is kept simple on purpose.
pub fn trace_reference(scene: &Scene, opts: TraceOptions) -> TraceResult {
    let emitters: Vec<Emitter> =
        scene.sources.iter().map(|s| Emitter::new(s, opts.rays.unwrap_or(s.rays() as usize))).collect();
    let mut res = TraceResult { screens: vec![ScreenHits::default(); scene.screen_ids.len()], ..Default::default() };
    for (si, em) in emitters.iter().enumerate() {
        res.launched_by_source.push(em.len() as u64);
        res.power_by_source.push(em.power_w);
        for i in 0..em.len() {
            match propagate(scene, em.ray(i), si as u32, i as u64, &mut res.screens, &mut res.surface_hits, &mut Quiet).0 {
                Fate::Escaped => res.rays_escaped += 1,
                Fate::Absorbed => res.rays_absorbed += 1,
            }
        }
        res.rays_launched += em.len() as u64;
    }
    res
}
