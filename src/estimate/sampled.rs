//! Estimation on sampled choice sets (`[sampling]`): the fit runs on each
//! situation's chosen alternative and the alternatives drawn beside it
//! (`data::tables::sample`), then the fit is moved onto the full sets, which
//! every analysis, scenario and forecast reads.

use std::sync::Arc;

use serde::{Deserialize, Serialize};

use super::{shares_from, Fit};
use crate::data::tables::sample;
use crate::data::Observations;
use crate::design::Design;
use crate::model::Baseline;
use crate::spec::{Scheme, Spec};

/// How the fit's choice sets were sampled (JSON `fit.sampled`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SampledSets {
    /// "uniform" or "weighted".
    pub scheme: String,
    /// The weighted scheme's column of the alternatives table.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub weight: Option<String>,
    /// Alternatives drawn per situation besides the chosen one.
    pub drawn: usize,
    pub seed: u64,
    /// Mean number of distinct alternatives in a sampled set (the chosen one included).
    pub mean_set: f64,
    /// Mean number of available alternatives in a full set (null when the
    /// sets were drawn straight from the tables, the full sets never made).
    pub mean_full: Option<f64>,
}

/// The sampled observations when the spec samples and `obs` holds full sets
/// built from tables; `None` otherwise (fit `obs` as it is).
pub(super) fn sampled(spec: &Spec, obs: &Observations) -> Option<(Arc<Observations>, SampledSets)> {
    let s = spec.sampling.as_ref()?;
    let tables = obs.tables.as_ref()?;
    let weights = tables.sampling_weight.as_deref();
    let sets = sample::sets_of(obs, s, weights);
    let drawn = Arc::new(sample::sampled(obs, &sets, weights));
    let mut info = drawn_sets(spec, &drawn)?;
    let open = obs.available.iter().filter(|&&a| a).count();
    info.mean_full = Some(open as f64 / obs.situations.max(1) as f64);
    Some((drawn, info))
}

/// How the sets of sampled observations `obs` were drawn; `None` unless the
/// spec samples and `obs` holds sampled sets (fewer slots than alternatives).
pub(super) fn drawn_sets(spec: &Spec, obs: &Observations) -> Option<SampledSets> {
    let s = spec.sampling.as_ref()?;
    if obs.alternatives >= spec.alternatives.len() {
        return None;
    }
    let filled = obs.available.iter().filter(|&&a| a).count();
    let (scheme, weight) = match &s.scheme {
        Scheme::Uniform => ("uniform", None),
        Scheme::Weighted(w) => ("weighted", Some(w.clone())),
    };
    Some(SampledSets {
        scheme: scheme.into(),
        weight,
        drawn: s.alternatives,
        seed: s.seed,
        mean_set: filled as f64 / obs.situations.max(1) as f64,
        mean_full: None,
    })
}

/// The fit on sampled sets moved onto the full sets `full`: its design, its
/// baseline and its predicted shares are the full sets'; the estimates,
/// errors and log-likelihoods stay those of the sampled estimator.
pub(super) fn onto_full(
    spec: &Spec,
    mut fit: Fit,
    full: Arc<Observations>,
    info: SampledSets,
) -> Fit {
    fit.design = Design::build(spec, full);
    fit.baseline = std::sync::OnceLock::new();
    let baseline = Baseline::new(&*fit.family, &fit.design, &fit.beta);
    fit.shares = shares_from(spec, &fit.design, &*fit.family, &fit.beta, Some(&baseline));
    let _ = fit.baseline.set(baseline);
    fit.stats.sampled = Some(info);
    fit
}
