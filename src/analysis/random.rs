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
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
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
    /// Correlated with other random coefficients (`[model].correlated`):
    /// `spread` is then its Cholesky row's diagonal entry, and the standard
    /// deviation of its underlying normal is `underlying_std_dev`.
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    pub correlated: bool,
    /// The standard deviation of the underlying distribution (of the
    /// logarithm, for a lognormal): |spread|, or its Cholesky row's length.
    pub underlying_std_dev: f64,
    pub mean: Figure,
    pub std_dev: Figure,
    pub median: Figure,
    pub share_positive: Figure,
    pub share_negative: Figure,
    pub quantiles: Vec<QuantileFigure>,
}

/// The nine figures of one random coefficient at `beta`.
fn figures(t: &RandomCoefficient, beta: &[f64]) -> Vec<f64> {
    let (m, s, dist) = (beta[t.location], t.scale(beta), t.distribution);
    let (mean, sd) = dist.moments(m, s);
    let positive = dist.share_positive(m, s);
    let mut out = vec![mean, sd, dist.quantile(m, s, 0.5), positive, 1.0 - positive];
    out.extend(LEVELS.iter().map(|q| dist.quantile(m, s, *q)));
    out
}

/// Every random coefficient of the fit's family (none for fixed coefficients).
pub fn rows(fit: &Fit) -> Vec<RandomRow> {
    let terms = fit.family.random_coefficients();
    let grouped: Vec<usize> = crate::model::correlated_group(&terms)
        .into_iter()
        .map(|i| terms[i].location)
        .collect();
    terms
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
                correlated: grouped.contains(&t.location),
                underlying_std_dev: t.scale(&fit.beta),
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

/// A random coefficient's distribution as bins of equal width between its
/// 0.5% and 99.5% points, with the share of decision makers in each, and the
/// share below zero.
#[derive(Clone, Debug, PartialEq)]
pub struct Histogram {
    pub low: f64,
    pub high: f64,
    pub shares: Vec<f64>,
    pub below_zero: f64,
}

/// The histogram of coefficient `t` at `beta` in `bins` bins, from its
/// quantile function on a stratified grid of 4,000 points (exact shares up
/// to the grid's resolution).
pub fn histogram(t: &RandomCoefficient, beta: &[f64], bins: usize) -> Histogram {
    let (m, s, dist) = (beta[t.location], t.scale(beta), t.distribution);
    let bins = bins.max(1);
    let (low, high) = (dist.quantile(m, s, 0.005), dist.quantile(m, s, 0.995));
    let mut shares = vec![0.0; bins];
    let n = 4000;
    let width = (high - low).max(1e-300);
    for i in 0..n {
        let x = dist.quantile(m, s, (i as f64 + 0.5) / n as f64);
        if x < low || x > high {
            continue;
        }
        let b = (((x - low) / width) * bins as f64) as usize;
        shares[b.min(bins - 1)] += 1.0 / n as f64;
    }
    Histogram {
        low,
        high,
        shares,
        below_zero: 1.0 - dist.share_positive(m, s),
    }
}

/// The median of a coefficient whose location is the mean of its logarithm:
/// exp(m) for a lognormal, -exp(m) for a negative-lognormal one, with its
/// delta-method error |median| · se(m) (the median depends on the location
/// alone: d exp(m)/dm = exp(m)); None for other distributions.
pub fn log_median(t: &RandomCoefficient, location: f64, location_se: f64) -> Option<Figure> {
    if !t.distribution.is_log() {
        return None;
    }
    let value = t.distribution.coefficient(location, 0.0, 0.0);
    Some(Figure {
        value,
        std_error: value.abs() * location_se,
    })
}
