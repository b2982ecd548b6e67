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

/// A change to one situation's utilities, as `shares_with` takes it.
pub type EditFn<'a> = dyn Fn(usize, &[f64], &mut [f64]) + Sync + 'a;

/// Base shares and the shares after each of `edits`, all from one pass over
/// the cached base at `beta` (the same figures as `shares` and one
/// `shares_with` per edit, which a family with coefficient points still uses).
pub fn shares_many(
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    baseline: &Baseline,
    edits: &[&EditFn],
) -> (Vec<f64>, Vec<Vec<f64>>) {
    if family.mixture(d).is_some() {
        let after = edits
            .iter()
            .map(|e| shares_with(family, d, beta, Some(baseline), |i, b, v| e(i, b, v)))
            .collect();
        return (shares(family, d, beta), after);
    }
    let j = d.alternatives();
    let w = &d.obs.weight;
    let width = (edits.len() + 1) * j;
    let parts = Enumeration::new(family, d, beta)
        .baseline(Some(baseline))
        .pieces(
            |_| (vec![0.0; width], vec![0.0; j], vec![0.0; j]),
            |(acc, v1, p1), s| {
                let (i, p0) = (s.i, s.p0);
                let v0 = &baseline.utilities[i * j..(i + 1) * j];
                for (a, p) in acc.iter_mut().zip(p0) {
                    *a += w[i] * p;
                }
                for (e, edit) in edits.iter().enumerate() {
                    v1.copy_from_slice(v0);
                    edit(i, beta, v1);
                    if v1.iter().all(|x| !x.is_finite()) {
                        p1.iter_mut().for_each(|x| *x = 0.0); // nothing left to choose
                    } else {
                        family.probabilities_after(beta, v0, p0, v1, p1);
                    }
                    let out = &mut acc[(e + 1) * j..(e + 2) * j];
                    for (a, p) in out.iter_mut().zip(p1.iter()) {
                        *a += w[i] * p;
                    }
                }
            },
        );
    let mut sums = vec![0.0; width];
    for (p, _, _) in parts {
        sums.iter_mut().zip(&p).for_each(|(a, b)| *a += b);
    }
    let tw = d.total_weight();
    let mut each = sums.chunks(j).map(|c| c.iter().map(|s| s / tw).collect());
    let base = each.next().unwrap_or_default();
    (base, each.collect())
}
