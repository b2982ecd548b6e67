//! Estimation: maximum likelihood for the spec's model, its covariance, fit
//! statistics and diagnostics. `fit` is the room's entry point.

pub mod diagnose;
pub mod document;
mod finish;
pub mod inference;
mod newton;
pub mod optimise;
mod reference;
pub mod sampled;
pub mod simcheck;
mod start;

use std::sync::Arc;
use std::time::Instant;

use nalgebra::DMatrix;
use serde::{Deserialize, Serialize};

pub use inference::{Diagnostic, DiagnosticKind};
pub use optimise::{Progress, Step};

use crate::data::Observations;
use crate::design::Design;
use crate::error::{Error, Result};
pub use crate::model::Baseline;
use crate::model::{self, normal, FamilyRef};
use crate::spec::Spec;

/// Two-sided 95% normal quantile.
pub const Z95: f64 = 1.959_963_984_540_054;

#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct ParameterRow {
    pub name: String,
    pub term: String,
    #[serde(deserialize_with = "document::nullable")]
    pub estimate: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub std_error: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub robust_std_error: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub t_stat: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub p_value: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub ci_low: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub ci_high: f64,
    pub fixed: bool,
    /// The value `t_stat` and `p_value` test against: 0, or 1 for a nest scale.
    #[serde(default)]
    pub null: f64,
}

/// t statistic, two-sided normal p-value and 95% interval of one parameter under chosen errors.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Inference {
    pub std_error: f64,
    pub t_stat: f64,
    pub p_value: f64,
    pub ci_low: f64,
    pub ci_high: f64,
}

impl ParameterRow {
    /// The row's inference with classical (`robust = false`) or robust errors.
    pub fn inference(&self, robust: bool) -> Inference {
        let se = if robust {
            self.robust_std_error
        } else {
            self.std_error
        };
        let t = (self.estimate - self.null) / se;
        Inference {
            std_error: se,
            t_stat: t,
            p_value: normal_p(t),
            ci_low: self.estimate - Z95 * se,
            ci_high: self.estimate + Z95 * se,
        }
    }
}

#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct FitStats {
    pub situations: usize,
    pub groups: usize,
    #[serde(deserialize_with = "document::nullable")]
    pub log_likelihood: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub null_log_likelihood: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub constants_log_likelihood: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub rho_squared: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub rho_squared_constants: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub adjusted_rho_squared: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub aic: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub bic: f64,
    pub iterations: usize,
    pub newton_steps: usize,
    pub passes: usize,
    #[serde(deserialize_with = "document::nullable")]
    pub gradient_norm: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub newton_decrement: f64,
    pub converged: bool,
    #[serde(deserialize_with = "document::nullable")]
    pub seconds: f64,
    pub estimated_parameters: usize,
    /// "robust" when `[data].group` is set, else "classical": which errors t, p and intervals use.
    pub inference: String,
    /// How the family's own starts fared (a latent class model's EM starts).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub starts: Option<crate::model::Starts>,
    /// How the choice sets were sampled, when the spec has `[sampling]`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sampled: Option<sampled::SampledSets>,
}

#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct ShareRow {
    pub alternative: String,
    #[serde(deserialize_with = "document::nullable")]
    pub observed: f64,
    #[serde(deserialize_with = "document::nullable")]
    pub predicted: f64,
}

/// A fitted model: the design it was fitted on and everything estimated.
#[derive(Clone, Debug)]
pub struct Fit {
    pub design: Design,
    /// The model family, built for the spec.
    pub family: FamilyRef,
    pub names: Vec<String>,
    /// All K parameters, fixed ones at their value.
    pub beta: Vec<f64>,
    /// Positions of the estimated (not fixed) parameters.
    pub free: Vec<usize>,
    /// K x K covariances (zero rows for fixed parameters; NaN when not identified).
    pub covariance: DMatrix<f64>,
    pub robust_covariance: DMatrix<f64>,
    pub parameters: Vec<ParameterRow>,
    pub stats: FitStats,
    pub shares: Vec<ShareRow>,
    pub diagnostics: Vec<Diagnostic>,
    /// Utilities and probabilities of every situation at `beta`, computed on first use
    /// (what-ifs re-simulate against them). Reset it when the design changes.
    pub baseline: std::sync::OnceLock<Baseline>,
}

impl Fit {
    /// The baseline at the estimates (computed once).
    pub fn baseline(&self) -> &Baseline {
        self.baseline
            .get_or_init(|| Baseline::new(&*self.family, &self.design, &self.beta))
    }

    /// The covariance that inference uses (robust when the data have groups).
    pub fn inference_covariance(&self) -> &DMatrix<f64> {
        if self.design.obs.group.is_some() {
            &self.robust_covariance
        } else {
            &self.covariance
        }
    }
}

fn normal_p(t: f64) -> f64 {
    if t.is_finite() {
        2.0 * normal::cdf(-t.abs())
    } else {
        f64::NAN
    }
}

/// Log-likelihood with every coefficient 0: equal probabilities over each
/// situation's available alternatives (or, with a sampling correction, the
/// probabilities the corrections alone give).
pub fn null_log_likelihood(obs: &Observations) -> f64 {
    let j = obs.alternatives;
    (0..obs.situations)
        .map(|i| {
            let open = &obs.available[i * j..(i + 1) * j];
            let Some(o) = &obs.offset else {
                let n = open.iter().filter(|a| **a).count() as f64;
                return -obs.weight[i] * n.ln();
            };
            let o = &o[i * j..(i + 1) * j];
            let m = (0..j)
                .filter(|&a| open[a])
                .map(|a| o[a])
                .fold(f64::NEG_INFINITY, f64::max);
            let sum: f64 = (0..j).filter(|&a| open[a]).map(|a| (o[a] - m).exp()).sum();
            obs.weight[i] * (o[obs.chosen[i] as usize] - m - sum.ln())
        })
        .sum()
}

/// Weighted observed and predicted shares of each alternative (one pass, nothing stored per situation).
pub fn shares(spec: &Spec, d: &Design, family: &dyn model::Family, beta: &[f64]) -> Vec<ShareRow> {
    shares_from(spec, d, family, beta, None)
}

/// `shares`, reading the probabilities from `baseline` (at `beta`) when given.
fn shares_from(
    spec: &Spec,
    d: &Design,
    family: &dyn model::Family,
    beta: &[f64],
    baseline: Option<&Baseline>,
) -> Vec<ShareRow> {
    let j = d.alternatives();
    if j != spec.alternatives.len() {
        // Sampled sets: the shares are the full sets' (`sampled::onto_full`).
        return Vec::new();
    }
    let obs = &d.obs;
    let enumeration = model::enumerate::Enumeration::new(family, d, beta).baseline(baseline);
    let sums = enumeration.fold(2 * j, |acc, s| {
        let w = obs.weight[s.i];
        acc[obs.chosen[s.i] as usize] += w;
        for (a, p) in acc[j..].iter_mut().zip(s.p0) {
            *a += w * p;
        }
    });
    let tw = d.total_weight();
    spec.alternatives
        .iter()
        .enumerate()
        .map(|(a, alt)| ShareRow {
            alternative: alt.name.clone(),
            observed: sums[a] / tw,
            predicted: sums[j + a] / tw,
        })
        .collect()
}

/// Fits the spec's model to the observations.
/// With `[sampling]` and full sets from tables, the fit runs on sampled sets
/// and is then moved onto the full sets (`sampled`).
pub fn fit(spec: &Spec, obs: Arc<Observations>, progress: Progress) -> Result<Fit> {
    let family = model::for_spec(spec)?;
    match sampled::sampled(spec, &obs) {
        Some((drawn, info)) => {
            let fit = fit_family(spec, drawn, family, progress)?;
            Ok(sampled::onto_full(spec, fit, obs, info))
        }
        None => {
            // Sets already drawn from the tables (`data::load_for_fit`).
            let drawn = sampled::drawn_sets(spec, &obs);
            let mut fit = fit_family(spec, obs, family, progress)?;
            fit.stats.sampled = drawn;
            Ok(fit)
        }
    }
}

/// Fits the spec's model with a family built by the caller (a family on
/// draws given from outside, for reference checks).
pub fn fit_family(
    spec: &Spec,
    obs: Arc<Observations>,
    family: FamilyRef,
    progress: Progress,
) -> Result<Fit> {
    let started = Instant::now();
    model::admit_family(spec, &*family, &obs)?;
    let design = Design::build(spec, obs.clone());
    let k = design.params;
    let free: Vec<usize> = (0..k)
        .filter(|&p| spec.parameters[p].fixed.is_none())
        .collect();
    let start: Vec<f64> = spec.parameters.iter().map(|p| p.start).collect();
    let out = search(spec, &design, &family, start, &free, progress);
    let out = start::settle(spec, &design, &family, &free, out, progress, search)?;
    finish::finish(spec, obs, design, family, free, out, started, None)
}

/// The search from `start`: a first search on a simpler (or cheaper) family
/// where the family has one, then the family's own.
fn search(
    spec: &Spec,
    design: &Design,
    family: &FamilyRef,
    mut start: Vec<f64>,
    free: &[usize],
    progress: Progress,
) -> optimise::Outcome {
    // A family may run its own starts (a latent class model's EM).
    if let Some((start, starts)) = family.search_starts(spec, design, &start, free) {
        let mut out = optimise::maximise(design, &**family, &start, free, progress);
        if family.canonical(design, &mut out.beta) {
            out.hessian = None; // of the parameters in their former order
        }
        out.passes += starts.passes;
        out.starts = Some(starts);
        return out;
    }
    // A family may start from a simpler model: its own parameters held first.
    let held = family.held_in_first_search();
    let first: Vec<usize> = free.iter().copied().filter(|p| !held.contains(p)).collect();
    let mut first_passes = 0;
    let start_from = family.start_from();
    if (first.len() < free.len() || start_from.is_some()) && !first.is_empty() {
        // With its own parameters at their null values a family may equal a
        // simpler one, which then searches faster; or it starts from a
        // cheaper family's estimates.
        let at_null = held.iter().all(|&p| start[p] == spec.parameters[p].null);
        let searcher = match (at_null, family.simpler(), start_from) {
            (true, Some(s), _) => s,
            (_, _, Some(s)) => s,
            _ => family.clone(),
        };
        let by_simpler = !Arc::ptr_eq(&searcher, family);
        let o = optimise::maximise(design, &*searcher, &start, &first, progress);
        if o.ll.is_finite() {
            start = o.beta;
        }
        first_passes = o.passes;
        family.after_first_search(spec, design, &mut start, by_simpler);
        for (b, p) in start.iter_mut().zip(&spec.parameters) {
            if let Some(f) = p.fixed {
                *b = f; // a fixed value is never moved
            }
        }
    }
    // A middle search with some of the family's parameters still held (the
    // correlated mixed logit's independent model), then the full one.
    let middle_held = family.held_in_middle_search();
    let middle: Vec<usize> = free
        .iter()
        .copied()
        .filter(|p| !middle_held.contains(p))
        .collect();
    if middle.len() < free.len() && !middle.is_empty() {
        // Only a start for the full search: no Newton steps to confirm it.
        let o = optimise::approach(design, &**family, &start, &middle, progress);
        if o.ll.is_finite() {
            start = o.beta;
        }
        first_passes += o.passes;
        family.after_middle_search(&mut start);
        for (b, p) in start.iter_mut().zip(&spec.parameters) {
            if let Some(f) = p.fixed {
                *b = f;
            }
        }
    }
    let mut out = optimise::maximise(design, &**family, &start, free, progress);
    out.passes += first_passes;
    out
}

/// A fit rebuilt from a saved results document (`fit --save`) without searching:
/// estimates are taken from the document; covariances, statistics and diagnostics
/// are recomputed at them in a few passes. The caller checks the fingerprint.
pub fn restore(spec: &Spec, obs: Arc<Observations>, doc: &document::FitDocument) -> Result<Fit> {
    match sampled::sampled(spec, &obs) {
        Some((drawn, info)) => {
            let fit = restore_on(spec, drawn, doc)?;
            Ok(sampled::onto_full(spec, fit, obs, info))
        }
        None => restore_on(spec, obs, doc),
    }
}

/// `restore` on the observations the fit was made on.
fn restore_on(spec: &Spec, obs: Arc<Observations>, doc: &document::FitDocument) -> Result<Fit> {
    let started = Instant::now();
    let bad = |m: &str| Error::Usage(format!("the saved results do not match this spec: {m}"));
    if doc.family != spec.family {
        return Err(bad(&format!(
            "they are of family `{}`, the spec names `{}`",
            doc.family, spec.family
        )));
    }
    let mut beta = Vec::with_capacity(spec.parameters.len());
    for p in &spec.parameters {
        let row = doc
            .parameters
            .iter()
            .find(|r| r.name == p.name)
            .ok_or_else(|| bad(&format!("parameter `{}` is missing", p.name)))?;
        if !row.estimate.is_finite() {
            return Err(bad(&format!("parameter `{}` has no estimate", p.name)));
        }
        beta.push(p.fixed.unwrap_or(row.estimate));
    }
    let design = Design::build(spec, obs.clone());
    let family = model::for_spec(spec)?;
    let free: Vec<usize> = (0..design.params)
        .filter(|&p| spec.parameters[p].fixed.is_none())
        .collect();
    let e = family.evaluate(&design, &beta, true, false);
    let f = &doc.fit;
    let out = optimise::Outcome {
        ll: e.ll,
        gradient_norm: free
            .iter()
            .map(|&i| e.grad[i] * e.grad[i])
            .sum::<f64>()
            .sqrt(),
        beta,
        bfgs_iterations: f.iterations,
        newton_steps: f.newton_steps,
        passes: f.passes,
        criterion: f.newton_decrement,
        converged: f.converged,
        note: None,
        restart: None,
        hessian: None,
        starts: f.starts.clone(),
    };
    let constants_ll = Some(f.constants_log_likelihood).filter(|x| x.is_finite());
    finish::finish(spec, obs, design, family, free, out, started, constants_ll)
}
