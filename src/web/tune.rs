//! Tolerances and optimisation for the page (run in a worker, see
//! www/js/tune-worker.js): a tolerance run driven a few jobs at a time so
//! the worker can report progress, and the optimiser with a progress
//! callback. Errors are `JsError`s whose message starts with the spec's
//! field name (`decenter_mm: …`, `vary: …`), as the page's forms expect.

use crate::design::merit::Figures;
use crate::design::optimise::{optimise, Goal, OptimiseSpec};
use crate::design::tolerance::{TolerancePlan, ToleranceSpec};
use crate::layout::parse_layout;
use crate::InputError;
use serde::Deserialize;
use serde_json::json;
use wasm_bindgen::prelude::*;

fn input_error(e: InputError) -> JsError {
    JsError::new(&e.to_string())
}

/// The page's tolerance form.
#[derive(Deserialize)]
struct ToleranceForm {
    screen: Option<String>,
    source: Option<String>,
    trials: usize,
    seed: u64,
    decenter_mm: f64,
    tilt_arcmin: f64,
    despace_mm: f64,
    radius_pct: f64,
    conic: f64,
    refocus: bool,
    rays: Option<usize>,
}

/// A tolerance run in progress: the nominal, then the trials, then the
/// sensitivity cases, a few at a time.
#[wasm_bindgen]
pub struct ToleranceRun {
    plan: TolerancePlan,
    cases: Vec<(usize, crate::design::tolerance::ErrorKind)>,
    nominal: Option<Figures>,
    trials: Vec<Figures>,
    pairs: Vec<(Figures, Figures)>,
}

#[wasm_bindgen]
impl ToleranceRun {
    /// Checks the layout and the form (JSON of [`ToleranceForm`]).
    #[wasm_bindgen(constructor)]
    pub fn new(layout_json: &str, form_json: &str) -> Result<ToleranceRun, JsError> {
        let layout = parse_layout(layout_json).map_err(input_error)?;
        let f: ToleranceForm = serde_json::from_str(form_json).map_err(|e| JsError::new(&format!("form: {e}")))?;
        let spec = ToleranceSpec {
            screen: f.screen,
            source: f.source,
            trials: f.trials,
            seed: f.seed,
            decenter_mm: f.decenter_mm,
            tilt_arcmin: f.tilt_arcmin,
            despace_mm: f.despace_mm,
            radius_pct: f.radius_pct,
            conic: f.conic,
            refocus: f.refocus,
            rays: f.rays,
        };
        let plan = TolerancePlan::new(&layout, &spec).map_err(input_error)?;
        let cases = plan.cases();
        Ok(ToleranceRun { plan, cases, nominal: None, trials: Vec::new(), pairs: Vec::new() })
    }

    /// Jobs in all: the nominal, the trials, the sensitivity cases.
    pub fn total(&self) -> usize {
        1 + self.plan.spec.trials + self.cases.len()
    }

    /// Jobs done so far.
    pub fn done(&self) -> usize {
        usize::from(self.nominal.is_some()) + self.trials.len() + self.pairs.len()
    }

    /// Runs up to `n` more jobs; returns the jobs done so far.
    pub fn step(&mut self, n: usize) -> Result<usize, JsError> {
        for _ in 0..n {
            if self.nominal.is_none() {
                self.nominal = Some(self.plan.nominal());
            } else if self.trials.len() < self.plan.spec.trials {
                let f = self.plan.trial(self.trials.len()).map_err(input_error)?;
                self.trials.push(f);
            } else if self.pairs.len() < self.cases.len() {
                let p = self.plan.case(self.cases[self.pairs.len()]).map_err(input_error)?;
                self.pairs.push(p);
            } else {
                break;
            }
        }
        Ok(self.done())
    }

    /// The report (the JSON of `catoptric tolerance`) plus `samples`: each
    /// trial's `rms_radius_um` and `strehl`, for the histogram.
    pub fn report_json(&self) -> Result<String, JsError> {
        let nominal = self.nominal.ok_or_else(|| JsError::new("run: not started"))?;
        let report = self.plan.report(&nominal, &self.trials, &self.pairs);
        let mut doc = serde_json::to_value(&report).map_err(|e| JsError::new(&format!("report: {e}")))?;
        doc["samples"] = json!({
            "rms_radius_um": self.trials.iter().map(|f| f.rms_radius_um).collect::<Vec<_>>(),
            "strehl": self.trials.iter().map(|f| f.strehl).collect::<Vec<_>>(),
        });
        Ok(doc.to_string())
    }
}

/// The page's solve form.
#[derive(Deserialize)]
struct OptimiseForm {
    vary: Vec<String>,
    goal: String,
    screen: Option<String>,
    source: Option<String>,
    rays: Option<usize>,
}

/// Optimises a layout: the JSON of `catoptric optimise`.
/// `progress(evaluations, cost)` is called after each trace.
#[wasm_bindgen]
pub fn optimise_json(layout_json: &str, form_json: &str, progress: &js_sys::Function) -> Result<String, JsError> {
    let layout = parse_layout(layout_json).map_err(input_error)?;
    let f: OptimiseForm = serde_json::from_str(form_json).map_err(|e| JsError::new(&format!("form: {e}")))?;
    let spec = OptimiseSpec {
        vary: f.vary,
        goal: Goal::parse(&f.goal).map_err(input_error)?,
        screen: f.screen,
        source: f.source,
        rays: f.rays,
        threads: None,
    };
    let r = optimise(&layout, &spec, &mut |n, cost| {
        let _ = progress.call2(&JsValue::NULL, &JsValue::from(n as f64), &JsValue::from(cost));
    })
    .map_err(input_error)?;
    serde_json::to_string(&r).map_err(|e| JsError::new(&format!("report: {e}")))
}
