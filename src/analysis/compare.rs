//! Several fitted specs side by side: estimates by parameter name, fit
//! statistics, likelihood-ratio tests where one model nests another on the
//! same data, and the ranking by AIC and BIC.

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
    /// Model indices from best to worst.
    pub aic_rank: Vec<usize>,
    pub bic_rank: Vec<usize>,
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
    Comparison {
        parameters,
        nested,
        aic_rank: rank(&|f| f.stats.aic),
        bic_rank: rank(&|f| f.stats.bic),
    }
}
