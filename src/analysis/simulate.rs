//! Sample enumeration: aggregate (weighted) shares of every alternative after
//! a change to each situation's utilities, in one pass split across cores.
//! Arc elasticities, removal diversion and scenarios are built on it.

use crate::design::Design;
use crate::estimate::likelihood::{probabilities_from_utilities, Kind};

/// Runs `f(i, probabilities)` for every situation after `modify(i, utilities)`,
/// each core folding into its own accumulator of length `width`; returns the sum.
pub fn fold<M, F>(d: &Design, kind: Kind, beta: &[f64], width: usize, modify: M, f: F) -> Vec<f64>
where
    M: Fn(usize, &mut [f64]) + Sync,
    F: Fn(usize, &[f64], &mut [f64]) + Sync,
{
    let j = d.alternatives();
    d.par_fold(width, |range, acc| {
        let mut v = vec![0.0; j];
        let mut p = vec![0.0; j];
        for i in range {
            d.utilities(beta, i, &mut v);
            modify(i, &mut v);
            if v.iter().all(|x| !x.is_finite()) {
                continue; // nothing left to choose
            }
            probabilities_from_utilities(kind, &v, &mut p);
            f(i, &p, acc);
        }
    })
}

/// Weighted aggregate shares (divided by the total weight of all situations).
pub fn shares_with<M>(d: &Design, kind: Kind, beta: &[f64], modify: M) -> Vec<f64>
where
    M: Fn(usize, &mut [f64]) + Sync,
{
    let j = d.alternatives();
    let w = &d.obs.weight;
    let sums = fold(d, kind, beta, j, modify, |i, p, acc| {
        for a in 0..p.len() {
            acc[a] += w[i] * p[a];
        }
    });
    let tw = d.total_weight();
    sums.into_iter().map(|s| s / tw).collect()
}

/// Base shares at `beta`.
pub fn shares(d: &Design, kind: Kind, beta: &[f64]) -> Vec<f64> {
    shares_with(d, kind, beta, |_, _| {})
}
