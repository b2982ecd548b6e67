//! Several fitted specs side by side: estimates by parameter name, fit
//! statistics, likelihood-ratio tests where one model nests another on the
//! same data, and the ranking by AIC and BIC when all were fitted on the same
//! data (otherwise their likelihoods are not comparable and nothing is ranked).
//! Models are named M1, M2, ... in the order given, in text, JSON and workbench.

use serde::Serialize;

use super::hypothesis::{likelihood_ratio, ChiTest};
use crate::data::Observations;
use crate::estimate::Fit;

#[derive(Clone, Debug, Serialize)]
pub struct Nesting {
    pub restricted: usize,
    pub general: usize,
    pub test: ChiTest,
}

#[derive(Clone, Debug, Serialize)]
pub struct Comparison {
    /// Every parameter name in order of first appearance.
    pub parameters: Vec<String>,
    pub nested: Vec<Nesting>,
    /// Model indices from best to worst; empty when the models are not comparable.
    pub aic_rank: Vec<usize>,
    pub bic_rank: Vec<usize>,
    /// The models' names: M1, M2, ... in the order given.
    pub ids: Vec<String>,
    /// Whether every model was fitted on the same situations, choices,
    /// weights and availability (only then are AIC and BIC ranked).
    pub comparable: bool,
    /// Why the models are not ranked, when they are not.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// The name of model `i` (from 0): M1, M2, ...
pub fn model_id(i: usize) -> String {
    format!("M{}", i + 1)
}

/// Same situations, same choices, same weights: the likelihoods are comparable.
pub fn same_data(a: &Observations, b: &Observations) -> bool {
    a.situations == b.situations
        && a.chosen == b.chosen
        && a.weight == b.weight
        && a.available == b.available
}

/// `restricted` nests in `general` when its estimated parameters are a subset of
/// the general model's and the data are the same.
pub fn nests(restricted: &Fit, general: &Fit) -> bool {
    let names = |f: &Fit| {
        f.free
            .iter()
            .map(|&k| f.names[k].clone())
            .collect::<Vec<_>>()
    };
    let (r, g) = (names(restricted), names(general));
    r.len() < g.len()
        && r.iter().all(|n| g.contains(n))
        && (restricted.family.name() == general.family.name()
            || general.family.reduces_to() == Some(restricted.family.name()))
        && same_data(&restricted.design.obs, &general.design.obs)
}

pub fn compare(fits: &[&Fit]) -> Comparison {
    let mut parameters: Vec<String> = Vec::new();
    for f in fits {
        for n in &f.names {
            if !parameters.contains(n) {
                parameters.push(n.clone());
            }
        }
    }
    let mut nested = Vec::new();
    for (r, fr) in fits.iter().enumerate() {
        for (g, fg) in fits.iter().enumerate() {
            if r != g && nests(fr, fg) {
                nested.push(Nesting {
                    restricted: r,
                    general: g,
                    test: likelihood_ratio(fr, fg),
                });
            }
        }
    }
    let rank = |key: &dyn Fn(&Fit) -> f64| {
        let mut idx: Vec<usize> = (0..fits.len()).collect();
        idx.sort_by(|&a, &b| key(fits[a]).total_cmp(&key(fits[b])));
        idx
    };
    let ids: Vec<String> = (0..fits.len()).map(model_id).collect();
    let different: Vec<String> = (1..fits.len())
        .filter(|&i| !same_data(&fits[0].design.obs, &fits[i].design.obs))
        .map(model_id)
        .collect();
    let comparable = different.is_empty();
    let note = (!comparable).then(|| {
        format!(
            "not ranked: {} {} fitted on other data than M1 (other situations, choices, weights or availability), so the log-likelihoods, AIC and BIC are not comparable",
            different.join(", "),
            if different.len() == 1 { "is" } else { "are" }
        )
    });
    Comparison {
        parameters,
        nested,
        aic_rank: if comparable {
            rank(&|f| f.stats.aic)
        } else {
            Vec::new()
        },
        bic_rank: if comparable {
            rank(&|f| f.stats.bic)
        } else {
            Vec::new()
        },
        ids,
        comparable,
        note,
    }
}
