//! The simulation check of a family that simulates its probabilities: the same
//! model fitted again on draws from another seed, and how far each estimate
//! moves measured in its standard errors. Moves well below one standard error
//! mean the draws are enough for the conclusions drawn; moves near or above
//! it call for more draws.

use std::sync::Arc;

use serde::Serialize;

use super::{fit, Fit, Progress};
use crate::data::Observations;
use crate::error::{Error, Result};
use crate::model::draws::{reseeded, seed_of};
use crate::spec::Spec;

#[derive(Clone, Debug, Serialize)]
pub struct DrawsCheckRow {
    pub name: String,
    pub estimate: f64,
    /// The estimate on the other seed's draws.
    pub other: f64,
    pub difference: f64,
    /// |difference| in standard errors (those inference uses).
    pub in_std_errors: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct DrawsCheck {
    pub seed: u64,
    pub other_seed: u64,
    pub log_likelihood: f64,
    pub other_log_likelihood: f64,
    pub rows: Vec<DrawsCheckRow>,
    /// The largest move in standard errors.
    pub largest: f64,
}

/// Refits on the draws of seed + 1 and compares with `first`.
pub fn draws_check(
    spec: &Spec,
    obs: Arc<Observations>,
    first: &Fit,
    progress: Progress,
) -> Result<DrawsCheck> {
    if !first.family.abilities().simulation_draws {
        return Err(Error::Usage(format!(
            "--draws-check: the {} family computes its probabilities exactly, with no simulation draws to vary",
            first.family.name()
        )));
    }
    let seed = seed_of(spec);
    // The next seed, or the one before at the largest seed a spec can give.
    let other_seed = if seed >= i64::MAX as u64 {
        seed - 1
    } else {
        seed + 1
    };
    let second = fit(&reseeded(spec, other_seed), obs, progress)?;
    let robust = first.design.obs.group.is_some();
    // A spread's sign carries no meaning: spreads are compared in size, and
    // a Cholesky entry with the sign its column's spread gives it.
    let terms = first.family.random_coefficients();
    let spreads: Vec<usize> = terms.iter().map(|t| t.spread).collect();
    let column_of = |k: usize| {
        terms
            .iter()
            .flat_map(|t| t.loadings[1..].iter())
            .find(|l| l.0 == k)
            .and_then(|l| terms.get(l.1))
            .map(|t| t.spread)
    };
    let signed = |fit: &Fit, k: usize, x: f64| match column_of(k) {
        Some(s) if fit.beta[s] < 0.0 => -x,
        _ => x,
    };
    let rows: Vec<DrawsCheckRow> = first
        .parameters
        .iter()
        .zip(&second.parameters)
        .enumerate()
        .filter(|(_, (a, _))| !a.fixed)
        .map(|(k, (a, b))| {
            let se = a.inference(robust).std_error;
            let (x, y) = if spreads.contains(&k) {
                (a.estimate.abs(), b.estimate.abs())
            } else {
                (signed(first, k, a.estimate), signed(&second, k, b.estimate))
            };
            let difference = y - x;
            DrawsCheckRow {
                name: a.name.clone(),
                estimate: a.estimate,
                other: b.estimate,
                difference,
                in_std_errors: difference.abs() / se,
            }
        })
        .collect();
    // Without standard errors nothing can be judged: NaN, not 0.
    let largest = if rows.iter().any(|r| !r.in_std_errors.is_finite()) {
        f64::NAN
    } else {
        rows.iter().map(|r| r.in_std_errors).fold(0.0, f64::max)
    };
    Ok(DrawsCheck {
        seed,
        other_seed,
        log_likelihood: first.stats.log_likelihood,
        other_log_likelihood: second.stats.log_likelihood,
        rows,
        largest,
    })
}
