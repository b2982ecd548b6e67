//! Random coefficients: the distribution across decision makers that each
//! location and spread imply (mean, standard deviation, median, the shares
//! above and below zero, the 5/25/75/95% points), in closed form from the
//! family's distributions, with delta-method errors.

use serde::Serialize;

use super::delta;
use crate::estimate::Fit;
use crate::model::RandomCoefficient;

/// The levels of the reported quantiles.
pub const LEVELS: [f64; 4] = [0.05, 0.25, 0.75, 0.95];

/// A figure with its delta-method standard error.
#[derive(Clone, Copy, Debug, Serialize)]
pub struct Figure {
    pub value: f64,
    pub std_error: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct QuantileFigure {
    pub level: f64,
    pub value: f64,
    pub std_error: f64,
}

/// One random coefficient's implied distribution (JSON contract).
#[derive(Clone, Debug, Serialize)]
pub struct RandomRow {
    /// The coefficient (its location parameter's name).
    pub coefficient: String,
    pub spread_parameter: String,
    pub distribution: String,
    pub location: f64,
    pub spread: f64,
    pub mean: Figure,
    pub std_dev: Figure,
    pub median: Figure,
    pub share_positive: Figure,
    pub share_negative: Figure,
    pub quantiles: Vec<QuantileFigure>,
}

/// The nine figures of one random coefficient at `beta`.
fn figures(t: &RandomCoefficient, beta: &[f64]) -> Vec<f64> {
    let (m, s, dist) = (beta[t.location], beta[t.spread], t.distribution);
    let (mean, sd) = dist.moments(m, s);
    let positive = dist.share_positive(m, s);
    let mut out = vec![mean, sd, dist.quantile(m, s, 0.5), positive, 1.0 - positive];
    out.extend(LEVELS.iter().map(|q| dist.quantile(m, s, *q)));
    out
}

/// Every random coefficient of the fit's family (none for fixed coefficients).
pub fn rows(fit: &Fit) -> Vec<RandomRow> {
    fit.family
        .random_coefficients()
        .iter()
        .map(|t| {
            let value = figures(t, &fit.beta);
            let se = delta::delta_se(fit, &|b: &[f64]| figures(t, b));
            let fig = |k: usize| Figure {
                value: value[k],
                std_error: se[k],
            };
            RandomRow {
                coefficient: fit.names[t.location].clone(),
                spread_parameter: fit.names[t.spread].clone(),
                distribution: t.distribution.name().to_string(),
                location: fit.beta[t.location],
                spread: fit.beta[t.spread],
                mean: fig(0),
                std_dev: fig(1),
                median: fig(2),
                share_positive: fig(3),
                share_negative: fig(4),
                quantiles: LEVELS
                    .iter()
                    .enumerate()
                    .map(|(k, level)| QuantileFigure {
                        level: *level,
                        value: value[5 + k],
                        std_error: se[5 + k],
                    })
                    .collect(),
            }
        })
        .collect()
}
