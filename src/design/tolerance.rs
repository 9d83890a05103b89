//! Tolerances: a seeded Monte Carlo of mirror making and alignment errors,
//! and the sensitivity of each parameter alone (docs/FORMATS.md §3,
//! `catoptric tolerance`).
//!
//! # Perturbation model
//!
//! Every mirror of the layout gets, in each trial, five independent errors
//! drawn uniformly in ±A (A the tolerance of that kind):
//!
//! * `decenter` (mm): the vertex moves along the mirror's local y, in the
//!   layout plane;
//! * `tilt` (arcminutes): the axis turns about the vertex, in the layout
//!   plane;
//! * `despace` (mm): the vertex moves along the mirror's own axis (the
//!   mirror alone moves);
//! * `radius` (percent): the vertex radius changes by that percentage of
//!   |R| (R(1 + p/100); a flat mirror stays flat);
//! * `conic`: the conic constant changes by that absolute amount.
//!
//! The draw of trial t, mirror m (its place among the layout's mirrors,
//! from 0) and kind k (in the order above, from 0) is word pair 5m + k of
//! ChaCha8 stream t keyed by the seed: u = (x >> 11)·2⁻⁵³, value
//! A·(2u − 1). Each trial depends only on its number, so trials run in any
//! order and on any number of threads with the same answer.
//!
//! With `refocus`, each trial's screen is moved to the pooled best focus
//! of its own trace and traced again (see `merit::measure`).
//!
//! # Figures
//!
//! Per trial the figures of `merit` (RMS radius, Strehl ratio from the
//! diffraction image at best focus, intercept); percentiles over trials by linear interpolation between
//! order statistics (p = (n − 1)·q, the common "type 7" rule). A trial
//! with no hits counts as the worst RMS (a `null` where a percentile lands
//! on it) and a Strehl of 0.
//!
//! Sensitivity: each mirror's each kind with a non-zero tolerance moved
//! alone by +A and by −A; the changes of the figures from the nominal are
//! averaged over the two signs.

use super::merit::{measure, Figures, Target};
use crate::error::{InputError, Num};
use crate::layout::{validate, Element, Layout, Mirror};
use rand_chacha::rand_core::{Rng as _, SeedableRng as _};
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

/// Rays per source of each trial unless asked otherwise.
pub const DEFAULT_TOLERANCE_RAYS: usize = 20_000;
/// Most trials a run may ask for.
pub const MAX_TRIALS: usize = 100_000;

/// A kind of error.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    Decenter,
    Tilt,
    Despace,
    Radius,
    Conic,
}

impl ErrorKind {
    /// Every kind, in draw order.
    pub const ALL: [ErrorKind; 5] = [ErrorKind::Decenter, ErrorKind::Tilt, ErrorKind::Despace, ErrorKind::Radius, ErrorKind::Conic];

    /// The name in the report's `parameter`.
    pub fn name(self) -> &'static str {
        match self {
            ErrorKind::Decenter => "decenter",
            ErrorKind::Tilt => "tilt",
            ErrorKind::Despace => "despace",
            ErrorKind::Radius => "radius",
            ErrorKind::Conic => "conic",
        }
    }

    /// The field of [`ToleranceSpec`] (front ends spell it as a flag).
    pub fn field(self) -> &'static str {
        match self {
            ErrorKind::Decenter => "decenter_mm",
            ErrorKind::Tilt => "tilt_arcmin",
            ErrorKind::Despace => "despace_mm",
            ErrorKind::Radius => "radius_pct",
            ErrorKind::Conic => "conic",
        }
    }

    /// Applies an error of `amount` (this kind's unit) to a mirror.
    pub fn apply(self, m: &mut Mirror, amount: f64) {
        let (s, c) = m.axis_deg.to_radians().sin_cos();
        match self {
            // Local y is (cos a, −sin a) in [y, z]; local z (the axis) is (sin a, cos a).
            ErrorKind::Decenter => m.vertex = [m.vertex[0] + amount * c, m.vertex[1] - amount * s],
            ErrorKind::Despace => m.vertex = [m.vertex[0] + amount * s, m.vertex[1] + amount * c],
            ErrorKind::Tilt => m.axis_deg += amount / 60.0,
            ErrorKind::Radius => m.profile.radius = m.profile.radius.map(|r| r * (1.0 + amount / 100.0)),
            ErrorKind::Conic => m.profile.conic += amount,
        }
    }
}

/// What to perturb and how to measure.
#[derive(Debug, Clone, PartialEq)]
pub struct ToleranceSpec {
    /// Screen id (first screen when `None`).
    pub screen: Option<String>,
    /// Source id (every source when `None` or `"all"`).
    pub source: Option<String>,
    pub trials: usize,
    pub seed: u64,
    pub decenter_mm: f64,
    pub tilt_arcmin: f64,
    pub despace_mm: f64,
    pub radius_pct: f64,
    pub conic: f64,
    pub refocus: bool,
    /// Rays per source in each trace; `None`: each source's own count, at
    /// most [`DEFAULT_TOLERANCE_RAYS`] (so the nominal is the layout's own
    /// trace when its sources launch no more than that).
    pub rays: Option<usize>,
}

impl Default for ToleranceSpec {
    fn default() -> Self {
        ToleranceSpec {
            screen: None,
            source: None,
            trials: 200,
            seed: 1,
            decenter_mm: 0.0,
            tilt_arcmin: 0.0,
            despace_mm: 0.0,
            radius_pct: 0.0,
            conic: 0.0,
            refocus: false,
            rays: None,
        }
    }
}

impl ToleranceSpec {
    /// The tolerance of a kind.
    pub fn amount(&self, k: ErrorKind) -> f64 {
        match k {
            ErrorKind::Decenter => self.decenter_mm,
            ErrorKind::Tilt => self.tilt_arcmin,
            ErrorKind::Despace => self.despace_mm,
            ErrorKind::Radius => self.radius_pct,
            ErrorKind::Conic => self.conic,
        }
    }
}

/// The uniform draw in [−1, 1) of trial `trial`, mirror `mirror`, kind
/// `kind` (see the module doc).
pub fn unit_draw(seed: u64, trial: u64, mirror: usize, kind: ErrorKind) -> f64 {
    let k = ErrorKind::ALL.iter().position(|&x| x == kind).unwrap_or(0);
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(trial);
    rng.set_word_pos(2 * (5 * mirror as u128 + k as u128));
    let u = (rng.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64);
    2.0 * u - 1.0
}

/// Percentiles of the RMS radius over trials, µm.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RmsPercentiles {
    pub p50: Option<f64>,
    pub p90: Option<f64>,
    pub p99: Option<f64>,
    pub max: Option<f64>,
}

/// 10th, 50th and 90th percentiles.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LowMidHigh {
    pub p10: Option<f64>,
    pub p50: Option<f64>,
    pub p90: Option<f64>,
}

/// The unperturbed layout's figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Nominal {
    pub rms_radius_um: Option<f64>,
    pub strehl: Option<f64>,
    pub intercept: f64,
}

/// One row of the sensitivity table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sensitivity {
    pub element: String,
    pub parameter: String,
    pub step: f64,
    pub d_rms_radius_um: Option<f64>,
    pub d_strehl: Option<f64>,
}

/// The JSON of `catoptric tolerance`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ToleranceReport {
    pub trials: usize,
    pub nominal: Nominal,
    pub rms_radius_um: RmsPercentiles,
    pub strehl: LowMidHigh,
    pub intercept: LowMidHigh,
    pub sensitivity: Vec<Sensitivity>,
}

/// A checked tolerance run that front ends drive trial by trial (the page
/// runs it in a worker with progress) or all at once ([`tolerance`]).
#[derive(Debug, Clone)]
pub struct TolerancePlan {
    /// The nominal layout, its sources' ray counts set as traced.
    pub layout: Layout,
    pub spec: ToleranceSpec,
    pub target: Target,
    /// Element indices of the mirrors, in layout order.
    pub mirrors: Vec<usize>,
    /// Threads each trace uses (`Some(1)` when trials run in parallel).
    pub trace_threads: Option<usize>,
}

fn check_amount(field: &str, v: f64, max: f64) -> Result<(), InputError> {
    if !v.is_finite() || v < 0.0 {
        return Err(InputError::new(field, format!("must be a number ≥ 0, the half-width of the ± range (got {})", Num(v))));
    }
    if v > max {
        return Err(InputError::new(field, format!("must be at most {} (got {})", Num(max), Num(v))));
    }
    Ok(())
}

impl TolerancePlan {
    /// Checks the spec against a layout (errors name the spec's fields).
    pub fn new(layout: &Layout, spec: &ToleranceSpec) -> Result<Self, InputError> {
        validate(layout)?;
        let target = Target::new(layout, spec.screen.as_deref(), spec.source.as_deref())?;
        if spec.trials == 0 || spec.trials > MAX_TRIALS {
            return Err(InputError::new("trials", format!("must be between 1 and {MAX_TRIALS} (got {})", spec.trials)));
        }
        let mut traced = layout.clone();
        for s in &mut traced.sources {
            let n = spec.rays.map_or(s.rays().min(DEFAULT_TOLERANCE_RAYS as u64), |n| n as u64);
            s.set_rays(n);
        }
        if let Some(n) = spec.rays
            && (n == 0 || n as u64 > crate::layout::MAX_RAYS_PER_SOURCE) {
                return Err(InputError::new("rays", format!("must be between 1 and {} (got {n})", crate::layout::MAX_RAYS_PER_SOURCE)));
            }
        let total: u64 = traced.sources.iter().map(|s| s.rays()).sum();
        if total > crate::layout::MAX_RAYS_TOTAL {
            return Err(InputError::new(
                "rays",
                format!("{total} rays in all for {} sources is more than {}", layout.sources.len(), crate::layout::MAX_RAYS_TOTAL),
            ));
        }
        check_amount("decenter_mm", spec.decenter_mm, crate::layout::MAX_LENGTH_MM)?;
        check_amount("tilt_arcmin", spec.tilt_arcmin, 60.0 * 180.0)?;
        check_amount("despace_mm", spec.despace_mm, crate::layout::MAX_LENGTH_MM)?;
        check_amount("radius_pct", spec.radius_pct, 99.0)?;
        check_amount("conic", spec.conic, 1e6)?;
        let mirrors = layout
            .elements
            .iter()
            .enumerate()
            .filter(|(_, e)| matches!(e, Element::Mirror(_)))
            .map(|(i, _)| i)
            .collect();
        Ok(TolerancePlan { layout: traced, spec: spec.clone(), target, mirrors, trace_threads: None })
    }

    /// Kinds with a non-zero tolerance.
    pub fn kinds(&self) -> Vec<ErrorKind> {
        ErrorKind::ALL.into_iter().filter(|&k| self.spec.amount(k) > 0.0).collect()
    }

    /// The sensitivity cases: (mirror element index, kind), mirror by mirror.
    pub fn cases(&self) -> Vec<(usize, ErrorKind)> {
        self.mirrors.iter().flat_map(|&m| self.kinds().into_iter().map(move |k| (m, k))).collect()
    }

    /// The layout with `errors` (per kind) applied to the mirror at
    /// element index `m`.
    fn apply(&self, layout: &mut Layout, m: usize, errors: &[(ErrorKind, f64)]) {
        if let Element::Mirror(mirror) = &mut layout.elements[m] {
            for &(k, v) in errors {
                k.apply(mirror, v);
            }
        }
    }

    /// Trial `t`'s errors per mirror (ordinal, element index, draws).
    fn draws(&self, t: usize) -> Vec<(usize, Vec<(ErrorKind, f64)>)> {
        self.mirrors
            .iter()
            .enumerate()
            .map(|(ord, &m)| {
                let d = ErrorKind::ALL
                    .into_iter()
                    .map(|k| (k, self.spec.amount(k) * unit_draw(self.spec.seed, t as u64, ord, k)))
                    .collect();
                (m, d)
            })
            .collect()
    }

    /// The perturbed layout of trial `t`, validated; an invalid one is
    /// reported under the field of the first kind that makes it invalid.
    pub fn trial_layout(&self, t: usize) -> Result<Layout, InputError> {
        let draws = self.draws(t);
        let mut l = self.layout.clone();
        for (m, d) in &draws {
            self.apply(&mut l, *m, d);
        }
        validate(&l).map_err(|e| self.blame(&draws, &format!("trial {}", t + 1), e))?;
        Ok(l)
    }

    /// Names the kind whose errors alone make a layout invalid.
    fn blame(&self, draws: &[(usize, Vec<(ErrorKind, f64)>)], what: &str, e: InputError) -> InputError {
        let kind = ErrorKind::ALL.into_iter().find(|&k| {
            let mut l = self.layout.clone();
            for (m, d) in draws {
                let only: Vec<_> = d.iter().copied().filter(|x| x.0 == k).collect();
                self.apply(&mut l, *m, &only);
            }
            validate(&l).is_err()
        });
        let field = kind.map_or("tolerances", |k| k.field());
        InputError::new(
            field,
            format!("{what} gives an invalid layout ({e}); use a smaller tolerance"),
        )
    }

    /// Measures a layout (with refocus when asked).
    pub fn measure(&self, layout: &Layout) -> Figures {
        measure(layout, &self.target, None, self.trace_threads, self.spec.refocus).0
    }

    /// The nominal figures.
    pub fn nominal(&self) -> Figures {
        self.measure(&self.layout)
    }

    /// The figures of trial `t` (0-based).
    pub fn trial(&self, t: usize) -> Result<Figures, InputError> {
        Ok(self.measure(&self.trial_layout(t)?))
    }

    /// The figures with case `(m, k)` moved by `+step` and by `−step`.
    pub fn case(&self, (m, k): (usize, ErrorKind)) -> Result<(Figures, Figures), InputError> {
        let step = self.spec.amount(k);
        let mut out = [None, None];
        for (i, sign) in [1.0, -1.0].into_iter().enumerate() {
            let mut l = self.layout.clone();
            self.apply(&mut l, m, &[(k, sign * step)]);
            validate(&l).map_err(|e| {
                InputError::new(k.field(), format!("one step on mirror `{}` gives an invalid layout ({e}); use a smaller tolerance", self.layout.elements[m].id()))
            })?;
            out[i] = Some(self.measure(&l));
        }
        Ok((out[0].expect("set"), out[1].expect("set")))
    }

    /// The report from the nominal, the trials (in order) and the cases'
    /// (+, −) figures (in [`TolerancePlan::cases`] order).
    pub fn report(&self, nominal: &Figures, trials: &[Figures], cases: &[(Figures, Figures)]) -> ToleranceReport {
        // A trial without hits is the worst RMS.
        let rms: Vec<f64> = trials.iter().map(|f| f.rms_radius_um.unwrap_or(f64::INFINITY)).collect();
        let finite = |v: f64| v.is_finite().then_some(v);
        let q = |xs: &[f64], p: f64| percentile(xs, p);
        let has_strehl = nominal.strehl.is_some();
        let strehl: Vec<f64> = trials.iter().map(|f| f.strehl.unwrap_or(0.0)).collect();
        let intercept: Vec<f64> = trials.iter().map(|f| f.intercept).collect();
        let s = |p: f64| has_strehl.then(|| q(&strehl, p));
        let sensitivity = self
            .cases()
            .into_iter()
            .zip(cases)
            .map(|((m, k), (plus, minus))| {
                let d = |a: Option<f64>, b: Option<f64>, n: Option<f64>| match (a, b, n) {
                    (Some(a), Some(b), Some(n)) => Some(0.5 * ((a - n) + (b - n))),
                    _ => None,
                };
                Sensitivity {
                    element: self.layout.elements[m].id().to_string(),
                    parameter: k.name().to_string(),
                    step: self.spec.amount(k),
                    d_rms_radius_um: d(plus.rms_radius_um, minus.rms_radius_um, nominal.rms_radius_um),
                    d_strehl: d(plus.strehl, minus.strehl, nominal.strehl),
                }
            })
            .collect();
        ToleranceReport {
            trials: trials.len(),
            nominal: Nominal { rms_radius_um: nominal.rms_radius_um, strehl: nominal.strehl, intercept: nominal.intercept },
            rms_radius_um: RmsPercentiles {
                p50: finite(q(&rms, 0.5)),
                p90: finite(q(&rms, 0.9)),
                p99: finite(q(&rms, 0.99)),
                max: finite(q(&rms, 1.0)),
            },
            strehl: LowMidHigh { p10: s(0.1), p50: s(0.5), p90: s(0.9) },
            intercept: LowMidHigh { p10: Some(q(&intercept, 0.1)), p50: Some(q(&intercept, 0.5)), p90: Some(q(&intercept, 0.9)) },
            sensitivity,
        }
    }
}

/// The `q` quantile (0 ≤ q ≤ 1) of `xs` by linear interpolation between
/// order statistics at (n − 1)·q; NaN for no values.
pub fn percentile(xs: &[f64], q: f64) -> f64 {
    if xs.is_empty() {
        return f64::NAN;
    }
    let mut v = xs.to_vec();
    v.sort_by(f64::total_cmp);
    let at = (v.len() - 1) as f64 * q.clamp(0.0, 1.0);
    let (lo, frac) = (at.floor() as usize, at - at.floor());
    let hi = (lo + 1).min(v.len() - 1);
    if frac == 0.0 || v[lo] == v[hi] { v[lo] } else { v[lo] + (v[hi] - v[lo]) * frac }
}

/// Runs `f(0..n)` and returns the results in order: natively on a pool of
/// `threads` (every core when `None`), one after another in a wasm module.
pub(crate) fn map_in_order<T: Send>(n: usize, threads: Option<usize>, f: impl Fn(usize) -> T + Sync + Send) -> Vec<T> {
    #[cfg(not(target_arch = "wasm32"))]
    {
        use rayon::prelude::*;
        let run = || (0..n).into_par_iter().map(&f).collect::<Vec<T>>();
        match threads.and_then(|t| rayon::ThreadPoolBuilder::new().num_threads(t.max(1)).build().ok()) {
            Some(pool) => pool.install(run),
            None => run(),
        }
    }
    #[cfg(target_arch = "wasm32")]
    {
        let _ = threads;
        (0..n).map(f).collect()
    }
}

/// The whole tolerance run: nominal, trials and sensitivity, the trials
/// and cases spread over `threads` (every core when `None`); the answer is
/// the same whatever the count.
pub fn tolerance(layout: &Layout, spec: &ToleranceSpec, threads: Option<usize>) -> Result<ToleranceReport, InputError> {
    let mut plan = TolerancePlan::new(layout, spec)?;
    plan.trace_threads = Some(1);
    let cases = plan.cases();
    let n = 1 + spec.trials + cases.len();
    // Job 0 is the nominal, then the trials, then the cases.
    let out = map_in_order(n, threads, |j| -> Result<(Figures, Option<Figures>), InputError> {
        if j == 0 {
            Ok((plan.nominal(), None))
        } else if j <= spec.trials {
            plan.trial(j - 1).map(|f| (f, None))
        } else {
            plan.case(cases[j - 1 - spec.trials]).map(|(a, b)| (a, Some(b)))
        }
    });
    let out: Vec<(Figures, Option<Figures>)> = out.into_iter().collect::<Result<_, _>>()?;
    let nominal = out[0].0;
    let trials: Vec<Figures> = out[1..=spec.trials].iter().map(|x| x.0).collect();
    let pairs: Vec<(Figures, Figures)> = out[1 + spec.trials..].iter().map(|(a, b)| (*a, b.unwrap_or(*a))).collect();
    Ok(plan.report(&nominal, &trials, &pairs))
}
