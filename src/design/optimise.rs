//! Optimisation: damped least squares (Levenberg–Marquardt, the
//! `levenberg-marquardt` crate) over layout fields named by path
//! (docs/FORMATS.md §3 and §5, `catoptric optimise`).
//!
//! # Residuals
//!
//! Every evaluation sets the variables in a copy of the layout, validates
//! it and traces it with the same rays (fixed sampling, so the goal is a
//! smooth function of the variables). The residual vector has one slot
//! per launched ray of the chosen sources (two for the spot), so its
//! length never changes; a source's hits fill its first slots in ray
//! order and a ray that does not arrive fills a slot with a penalty: for
//! `rms` and `wavefront` the root mean square of the evaluation's
//! arrived residuals per launched ray (so the cost is the goal² times
//! 1 + lost/launched: one ray vignetted at an edge weighs little, yet
//! keeping rays pays), and a fixed value when a source has no hits at all.
//! A layout that fails validation (a conic past its domain, a size ≤ 0)
//! gets residuals far above any valid layout's, so the step is refused
//! and the damping grows: the bounds are the layout's own rules.
//!
//! * `rms`: the transverse errors (u, v) on the screen plane about each
//!   source's own centroid, each scaled by √(nₛ/N · wᵢ/Wₛ) so the sum of
//!   squares is the pooled mean square radius (hits nₛ of N, ray power wᵢ
//!   of Wₛ); a source with no hits counts its rays at the screen's edge.
//!   Minimised.
//! * `wavefront`: each hit's residual wavefront (piston, tilt and defocus
//!   removed, i.e. at best focus; `analysis::wavefront_map`), in waves,
//!   scaled likewise; a source without a wavefront counts
//!   [`LOST_RAY_WAVES`] per ray. Minimised.
//! * `intercept`: a smooth surrogate of the fraction of launched power on
//!   the screen: the layout is traced with the screen [`INTERCEPT_MARGIN`]
//!   times larger and each ray's distance outside the real screen shrunk
//!   by [`INTERCEPT_INSET`], over the real half-size (continuous up to the
//!   larger screen's edge, where a ray that misses joins it), is weighted
//!   by its share of the launched power. Its zero is every ray well on the
//!   screen; the reported goal is the real intercept, maximised.
//!
//! The Jacobian is taken by central differences with steps
//! [`FD_REL`]·max(|x|, 1). `start`/`end` are the goal's values from plain
//! traces of the first and last layouts: the pooled RMS spot radius (µm),
//! the pooled RMS wavefront at best focus (waves), or the intercept.

use super::merit::{measure, trace_layout, Target};
use crate::analysis::{focus_fit, wavefront, wavefront_map};
use crate::error::InputError;
use crate::layout::{get_field, set_field, validate, Element, Layout};
use crate::trace::{Emitter, ScreenHits, TraceResult};
use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra034::{storage::Owned, DMatrix, DVector, Dyn};
use serde::Serialize;
use std::cell::{Cell, RefCell};

/// Residual of a ray that misses the screen in the `wavefront` goal, waves.
pub const LOST_RAY_WAVES: f64 = 1.0;
/// How much larger the screen is traced for the `intercept` surrogate.
pub const INTERCEPT_MARGIN: f64 = 2.0;
/// The `intercept` surrogate aims every ray at the screen less this
/// fraction of its half-size all round, so a small spot ends up inside
/// the screen rather than on its edge.
pub const INTERCEPT_INSET: f64 = 0.1;
/// Relative finite-difference step of the Jacobian.
pub const FD_REL: f64 = 1e-6;
/// Times the finite-difference step is shrunk tenfold when a ray
/// arrives or is lost within it.
const FD_SHRINKS: usize = 4;
/// Every residual of a layout that fails validation: far above any valid
/// layout's, still finite.
const INVALID_RESIDUAL: f64 = 1e100;
/// Relative tolerance on the goal and the variables at which the search
/// stops (the crate's `ftol`, `xtol`).
pub const OPTIMISE_TOL: f64 = 1e-12;
/// The search gives up after this many evaluations per variable plus one
/// (the crate's `patience`).
pub const OPTIMISE_PATIENCE: usize = 40;

/// What to optimise.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Goal {
    Rms,
    Wavefront,
    Intercept,
}

impl Goal {
    /// Reads a goal name (field `goal`).
    pub fn parse(s: &str) -> Result<Goal, InputError> {
        match s {
            "rms" => Ok(Goal::Rms),
            "wavefront" => Ok(Goal::Wavefront),
            "intercept" => Ok(Goal::Intercept),
            _ => Err(InputError::new("goal", format!("must be one of rms, wavefront, intercept (got \"{s}\")"))),
        }
    }
    pub fn name(self) -> &'static str {
        match self {
            Goal::Rms => "rms",
            Goal::Wavefront => "wavefront",
            Goal::Intercept => "intercept",
        }
    }
}

/// What to vary and how to judge.
#[derive(Debug, Clone, PartialEq)]
pub struct OptimiseSpec {
    /// Field paths (see `layout::field_mut`).
    pub vary: Vec<String>,
    pub goal: Goal,
    /// Screen id (first screen when `None`).
    pub screen: Option<String>,
    /// Source id (every source when `None` or `"all"`).
    pub source: Option<String>,
    /// Rays per source (each source's own count when `None`).
    pub rays: Option<usize>,
    /// Threads per trace (every core when `None`; same answer).
    pub threads: Option<usize>,
}

/// One variable's path (as given) and values.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Variable {
    pub path: String,
    pub start: f64,
    pub end: f64,
}

/// The JSON of `catoptric optimise`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OptimiseReport {
    pub goal: String,
    pub start: Option<f64>,
    pub end: Option<f64>,
    /// Jacobian evaluations (outer iterations of the search).
    pub iterations: usize,
    pub variables: Vec<Variable>,
    pub layout: Layout,
}

/// The goal's value for a layout (a plain trace), `None` where it means
/// nothing (no hits, no wavefront).
pub fn goal_value(layout: &Layout, t: &Target, goal: Goal, rays: Option<usize>, threads: Option<usize>) -> Option<f64> {
    match goal {
        Goal::Rms => measure(layout, t, rays, threads, false).0.rms_radius_um,
        Goal::Intercept => Some(measure(layout, t, rays, threads, false).0.intercept),
        Goal::Wavefront => {
            let (scene, res) = trace_layout(layout, rays, threads);
            let h = &res.screens[t.screen];
            let (mut n, mut ms) = (0usize, 0.0);
            for &s in &t.sources {
                let fit = focus_fit(h, Some(s as u32))?;
                let reference = fit.best_point().unwrap_or([fit.centroid[0], fit.centroid[1], 0.0]);
                let w = wavefront(h, Some(s as u32), reference, scene.wavelength_mm)?;
                n += w.hits;
                ms += w.hits as f64 * w.rms_waves * w.rms_waves;
            }
            (n > 0).then(|| (ms / n as f64).sqrt())
        }
    }
}

/// The first arrivals of `source` on a screen: (u, v, weight) in ray order.
fn arrivals(h: &ScreenHits, source: u32) -> Vec<(f64, f64, f64)> {
    (0..h.len())
        .filter(|&i| h.source[i] == source && h.first.get(i).copied().unwrap_or(true))
        .map(|i| (h.u[i], h.v[i], h.weight[i]))
        .collect()
}

/// Relative weights summing to 1 (equal when the powers sum to zero).
fn shares(w: impl Iterator<Item = f64> + Clone) -> Vec<f64> {
    let total: f64 = w.clone().sum();
    let n = w.clone().count();
    if total > 0.0 { w.map(|x| x / total).collect() } else { vec![1.0 / n.max(1) as f64; n] }
}

/// One evaluation: the residuals and the hits per chosen source (empty
/// for an invalid layout).
#[derive(Clone)]
struct Eval {
    r: DVector<f64>,
    hits: Vec<usize>,
}

/// The least-squares problem the crate drives.
struct Problem<'a> {
    base: Layout,
    paths: Vec<String>,
    target: Target,
    goal: Goal,
    rays: Option<usize>,
    threads: Option<usize>,
    /// Launched rays of each chosen source (a pattern may round the
    /// asked count).
    launched: Vec<usize>,
    /// Screen half-size, mm.
    half: f64,
    circle: bool,
    x: DVector<f64>,
    cache: RefCell<Option<(Vec<f64>, Eval)>>,
    jacobians: Cell<usize>,
    evaluations: Cell<usize>,
    progress: RefCell<&'a mut dyn FnMut(usize, f64)>,
}

impl Problem<'_> {
    fn slots(&self) -> usize {
        let per = if self.goal == Goal::Rms { 2 } else { 1 };
        per * self.launched.iter().sum::<usize>()
    }

    /// What a lost ray costs: for `rms` and `wavefront` each slot of a
    /// source with no hits holds this over √(launched rays); for the
    /// `intercept` it is the surrogate's largest distance, in half-sizes.
    fn lost(&self) -> f64 {
        match self.goal {
            Goal::Rms => self.half,
            Goal::Wavefront => LOST_RAY_WAVES,
            Goal::Intercept => INTERCEPT_MARGIN - 1.0 + INTERCEPT_INSET,
        }
    }

    /// The layout with variables `x`, validated.
    fn layout_at(&self, x: &[f64]) -> Option<Layout> {
        let mut l = self.base.clone();
        for (p, &v) in self.paths.iter().zip(x) {
            set_field(&mut l, p, v).ok()?;
        }
        validate(&l).ok().map(|_| l)
    }

    fn evaluate(&self, x: &[f64]) -> Eval {
        let m = self.slots();
        let total: usize = self.launched.iter().sum();
        let penalty = self.lost() / (total.max(1) as f64).sqrt();
        let (r, hits) = match self.layout_at(x) {
            None => (DVector::from_element(m, INVALID_RESIDUAL), Vec::new()),
            Some(mut l) => {
                if self.goal == Goal::Intercept
                    && let Element::Screen(s) = &mut l.elements[self.target.element] {
                        s.size *= INTERCEPT_MARGIN;
                    }
                let (scene, res) = trace_layout(&l, self.rays, self.threads);
                let h = &res.screens[self.target.screen];
                let hits = self.target.sources.iter().map(|&s| arrivals(h, s as u32).len()).collect();
                (DVector::from_vec(self.residuals_of(&res, scene.wavelength_mm, penalty)), hits)
            }
        };
        let n = self.evaluations.get() + 1;
        self.evaluations.set(n);
        (self.progress.borrow_mut())(n, r.norm_squared());
        Eval { r, hits }
    }

    fn residuals_of(&self, res: &TraceResult, lambda: f64, penalty: f64) -> Vec<f64> {
        let h = &res.screens[self.target.screen];
        let mut out = Vec::with_capacity(self.slots());
        let hits: Vec<Vec<(f64, f64, f64)>> = self.target.sources.iter().map(|&s| arrivals(h, s as u32)).collect();
        let n_all: usize = hits.iter().map(Vec::len).sum();
        let powers: Vec<f64> = self.target.sources.iter().map(|&s| res.power_by_source.get(s).copied().unwrap_or(0.0)).collect();
        let launched_power: f64 = powers.iter().sum();
        for (k, (&s, a)) in self.target.sources.iter().zip(&hits).enumerate() {
            let slots = self.launched[k];
            let frac = a.len() as f64 / n_all.max(1) as f64;
            let wsh = shares(a.iter().map(|x| x.2));
            let before = out.len();
            match self.goal {
                Goal::Rms => {
                    let cu: f64 = a.iter().zip(&wsh).map(|(x, w)| w * x.0).sum();
                    let cv: f64 = a.iter().zip(&wsh).map(|(x, w)| w * x.1).sum();
                    for (x, w) in a.iter().zip(&wsh).take(slots) {
                        let k = (frac * w).sqrt();
                        out.push(k * (x.0 - cu));
                        out.push(k * (x.1 - cv));
                    }
                    out.resize(before + 2 * slots, if a.is_empty() { penalty } else { f64::NAN });
                }
                Goal::Wavefront => {
                    let map = focus_fit(h, Some(s as u32)).and_then(|fit| {
                        let reference = fit.best_point().unwrap_or([fit.centroid[0], fit.centroid[1], 0.0]);
                        wavefront_map(h, Some(s as u32), reference, lambda)
                    });
                    let mut fill = penalty;
                    if let Some(map) = map.filter(|m| m.opd_waves.len() == a.len()) {
                        for (opd, w) in map.opd_waves.iter().zip(&wsh).take(slots) {
                            out.push((frac * w).sqrt() * opd);
                        }
                        fill = f64::NAN;
                    }
                    out.resize(before + slots, fill);
                }
                Goal::Intercept => {
                    // Each ray's share of the launched power.
                    let per_ray = |w: f64| {
                        if launched_power > 0.0 { w / launched_power } else { 1.0 / self.launched.iter().sum::<usize>().max(1) as f64 }
                    };
                    let inner = (1.0 - INTERCEPT_INSET) * self.half;
                    let lost = self.lost();
                    for x in a.iter().take(slots) {
                        let outside = if self.circle {
                            (x.0.hypot(x.1) - inner).max(0.0)
                        } else {
                            (x.0.abs() - inner).max(0.0).hypot((x.1.abs() - inner).max(0.0))
                        };
                        out.push(per_ray(x.2).sqrt() * (outside / self.half).min(lost));
                    }
                    let mean = if slots > 0 { powers[k] / slots as f64 } else { 0.0 };
                    out.resize(before + slots, per_ray(mean).sqrt() * lost);
                }
            }
        }
        // A lost ray of a source that has hits costs as much as an average
        // ray: the cost is the goal² times (1 + lost/launched), so a ray
        // vignetted at an edge weighs little, yet keeping rays pays.
        let arrived: f64 = out.iter().filter(|r| !r.is_nan()).map(|r| r * r).sum();
        let total: usize = self.launched.iter().sum();
        let per_ray = (arrived / total.max(1) as f64).sqrt();
        out.iter_mut().filter(|r| r.is_nan()).for_each(|r| *r = per_ray);
        out
    }

    fn residuals_at(&self, x: &[f64]) -> Eval {
        if let Some((cx, e)) = self.cache.borrow().as_ref()
            && cx.as_slice() == x {
                return e.clone();
            }
        let e = self.evaluate(x);
        *self.cache.borrow_mut() = Some((x.to_vec(), e.clone()));
        e
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Problem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.x.copy_from(x);
    }

    fn params(&self) -> DVector<f64> {
        self.x.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        Some(self.residuals_at(self.x.as_slice()).r)
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        self.jacobians.set(self.jacobians.get() + 1);
        let n = self.x.len();
        let here = self.residuals_at(self.x.as_slice());
        let mut j = DMatrix::zeros(self.slots(), n);
        for c in 0..n {
            let mut h = FD_REL * self.x[c].abs().max(1.0);
            // Slots hold hits in ray order: a difference is only taken
            // between evaluations with the same hits per source.
            let d = (0..FD_SHRINKS).find_map(|_| {
                let at = |step: f64| {
                    let mut x = self.x.as_slice().to_vec();
                    x[c] += step;
                    self.evaluate(&x)
                };
                let (p, m) = (at(h), at(-h));
                let d = match (p.hits == here.hits, m.hits == here.hits) {
                    (true, true) => Some((&p.r - &m.r) / (2.0 * h)),
                    (true, false) => Some((&p.r - &here.r) / h),
                    (false, true) => Some((&here.r - &m.r) / h),
                    (false, false) => None,
                };
                h *= 0.1;
                d
            });
            j.set_column(c, &d.unwrap_or_else(|| DVector::zeros(self.slots())));
        }
        Some(j)
    }
}

/// The residual vector the search minimises (see the module's notes), at
/// the layout as it is: its squares sum to the cost. Errors as
/// [`optimise`]'s.
pub fn residuals(layout: &Layout, spec: &OptimiseSpec) -> Result<Vec<f64>, InputError> {
    let mut quiet = |_: usize, _: f64| {};
    let (problem, start) = problem(layout, spec, &mut quiet)?;
    Ok(problem.evaluate(&start).r.iter().copied().collect())
}

/// The finite-difference Jacobian the search takes at the layout as it
/// is: one column per varied field, the derivatives of [`residuals`] by
/// that field's value. Errors as [`optimise`]'s.
pub fn jacobian(layout: &Layout, spec: &OptimiseSpec) -> Result<Vec<Vec<f64>>, InputError> {
    let mut quiet = |_: usize, _: f64| {};
    let (problem, start) = problem(layout, spec, &mut quiet)?;
    let j = problem.jacobian().unwrap_or_else(|| DMatrix::zeros(problem.slots(), start.len()));
    Ok(j.column_iter().map(|c| c.iter().copied().collect()).collect())
}

/// Checks a request and sets up its least-squares problem; also returns
/// the variables' values in `layout`.
fn problem<'a>(
    layout: &Layout,
    spec: &OptimiseSpec,
    progress: &'a mut dyn FnMut(usize, f64),
) -> Result<(Problem<'a>, Vec<f64>), InputError> {
    validate(layout)?;
    let target = Target::new(layout, spec.screen.as_deref(), spec.source.as_deref())?;
    if spec.vary.is_empty() {
        return Err(InputError::new("vary", "name at least one field to vary, e.g. secondary.profile.conic"));
    }
    let mut start = Vec::with_capacity(spec.vary.len());
    for (i, p) in spec.vary.iter().enumerate() {
        if spec.vary[..i].contains(p) {
            return Err(InputError::new("vary", format!("{p}: named twice")));
        }
        let v = get_field(layout, p).map_err(|e| InputError::new("vary", e.to_string()))?;
        start.push(v);
    }
    if let Some(n) = spec.rays
        && (n == 0 || n as u64 > crate::layout::MAX_RAYS_PER_SOURCE) {
            return Err(InputError::new("rays", format!("must be between 1 and {} (got {n})", crate::layout::MAX_RAYS_PER_SOURCE)));
        }
    if spec.goal == Goal::Wavefront && target.has_extended(layout) {
        return Err(InputError::new(
            "goal",
            "wavefront needs point-like sources (a star or a lamp), not a solar disk; choose --source or the rms goal",
        ));
    }
    let Element::Screen(screen) = &layout.elements[target.element] else {
        return Err(InputError::new("screen", "is not a screen"));
    };
    let launched = target
        .sources
        .iter()
        .map(|&s| {
            let src = &layout.sources[s];
            Emitter::new(src, spec.rays.unwrap_or(src.rays() as usize)).len()
        })
        .collect();
    let problem = Problem {
        base: layout.clone(),
        paths: spec.vary.clone(),
        target: target.clone(),
        goal: spec.goal,
        rays: spec.rays,
        threads: spec.threads,
        launched,
        half: 0.5 * screen.size,
        circle: matches!(screen.shape, crate::layout::ScreenShape::Circle),
        x: DVector::from_vec(start.clone()),
        cache: RefCell::new(None),
        jacobians: Cell::new(0),
        evaluations: Cell::new(0),
        progress: RefCell::new(progress),
    };
    Ok((problem, start))
}

/// Optimises a layout; `progress(evaluations, cost)` is called after each
/// trace. Errors name `vary` (with the path), `goal`, `screen`, `source`
/// or `rays`.
pub fn optimise(layout: &Layout, spec: &OptimiseSpec, progress: &mut dyn FnMut(usize, f64)) -> Result<OptimiseReport, InputError> {
    let (problem, start) = problem(layout, spec, progress)?;
    let target = problem.target.clone();
    let start_value = goal_value(layout, &target, spec.goal, spec.rays, spec.threads);
    let lm = LevenbergMarquardt::new()
        .with_ftol(OPTIMISE_TOL)
        .with_xtol(OPTIMISE_TOL)
        .with_patience(OPTIMISE_PATIENCE);
    let (done, _report) = lm.minimize(problem);
    let end: Vec<f64> = done.x.iter().copied().collect();
    let best = done.layout_at(&end).unwrap_or_else(|| layout.clone());
    let end: Vec<f64> = spec.vary.iter().map(|p| get_field(&best, p).unwrap_or(f64::NAN)).collect();
    let end_value = goal_value(&best, &target, spec.goal, spec.rays, spec.threads);
    Ok(OptimiseReport {
        goal: spec.goal.name().to_string(),
        start: start_value,
        end: end_value,
        iterations: done.jacobians.get(),
        variables: spec.vary.iter().zip(start).zip(end).map(|((p, s), e)| Variable { path: p.clone(), start: s, end: e }).collect(),
        layout: best,
    })
}
