//! Aggregate (weighted) shares of every alternative after a change to each
//! situation's utilities, by sample enumeration through the model family
//! (`model::enumerate`). Arc elasticities and removal diversion are built on it.

use crate::design::Design;
use crate::model::enumerate::{Edit, Enumeration};
use crate::model::{Baseline, Family};

/// Weighted aggregate shares after `modify(i, coefficients, utilities)` (divided
/// by the total weight of all situations; see `Edit` for the coefficients).
/// `baseline`, when given, holds the base at `beta`.
pub fn shares_with<M>(
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    baseline: Option<&Baseline>,
    modify: M,
) -> Vec<f64>
where
    M: Fn(usize, &[f64], &mut [f64]) + Sync,
{
    let j = d.alternatives();
    let w = &d.obs.weight;
    let edit = Edit(modify);
    let sums = Enumeration::new(family, d, beta)
        .baseline(baseline)
        .what_if(&edit)
        .fold(j, |acc, s| {
            for (a, p) in acc.iter_mut().zip(s.p1) {
                *a += w[s.i] * p;
            }
        });
    let tw = d.total_weight();
    sums.into_iter().map(|s| s / tw).collect()
}

/// Base shares at `beta`.
pub fn shares(family: &dyn Family, d: &Design, beta: &[f64]) -> Vec<f64> {
    let j = d.alternatives();
    let w = &d.obs.weight;
    let sums = Enumeration::new(family, d, beta).fold(j, |acc, s| {
        for (a, p) in acc.iter_mut().zip(s.p0) {
            *a += w[s.i] * p;
        }
    });
    let tw = d.total_weight();
    sums.into_iter().map(|s| s / tw).collect()
}
