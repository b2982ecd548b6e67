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
    /// Mean number of available alternatives in a full set.
    pub mean_full: f64,
}

/// The sampled observations when the spec samples and `obs` holds full sets
/// built from tables; `None` otherwise (fit `obs` as it is).
pub(super) fn sampled(spec: &Spec, obs: &Observations) -> Option<(Arc<Observations>, SampledSets)> {
    let s = spec.sampling.as_ref()?;
    let tables = obs.tables.as_ref()?;
    let weights = tables.sampling_weight.as_deref();
    let sets = sample::sets_of(obs, s, weights);
    let filled = sets.members.iter().filter(|&&j| j != sample::EMPTY).count();
    let open = obs.available.iter().filter(|&&a| a).count();
    let n = obs.situations.max(1) as f64;
    let (scheme, weight) = match &s.scheme {
        Scheme::Uniform => ("uniform", None),
        Scheme::Weighted(w) => ("weighted", Some(w.clone())),
    };
    let info = SampledSets {
        scheme: scheme.into(),
        weight,
        drawn: s.alternatives,
        seed: s.seed,
        mean_set: filled as f64 / n,
        mean_full: open as f64 / n,
    };
    Some((Arc::new(sample::sampled(obs, &sets, weights)), info))
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
