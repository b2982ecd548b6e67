//! Values the families hand to the rest of the program: random
//! coefficients and their covariances, conditional means, the latent class
//! model's starts and posteriors, and derived figures.

#[allow(unused_imports)]
use super::*;

/// A coefficient that varies across decision makers: its location and spread
/// parameters and its distribution. Its standardised value is
/// sum over `loadings` (parameter p, draw dimension d) of beta_p e_d: its own
/// draw times its spread, plus for correlated coefficients the Cholesky
/// entries times the draws of the coefficients listed before it.
#[derive(Clone, Debug, PartialEq)]
pub struct RandomCoefficient {
    pub location: usize,
    pub spread: usize,
    pub distribution: distribution::Distribution,
    /// (parameter, draw dimension) pairs, the spread's own first.
    pub loadings: Vec<(usize, usize)>,
}

impl RandomCoefficient {
    /// The standard deviation of the coefficient's underlying distribution
    /// (of its logarithm for a lognormal): the spread, or for a correlated
    /// one the length of its row of the Cholesky factor.
    pub fn scale(&self, beta: &[f64]) -> f64 {
        if self.loadings.len() <= 1 {
            return beta[self.spread].abs();
        }
        self.loadings
            .iter()
            .map(|&(p, _)| beta[p] * beta[p])
            .sum::<f64>()
            .sqrt()
    }
}

/// The random coefficients correlated with another (indices into `terms`),
/// in the order of their Cholesky factor (row i has i + 1 loadings).
pub fn correlated_group(terms: &[RandomCoefficient]) -> Vec<usize> {
    let mut group: Vec<usize> = (0..terms.len())
        .filter(|&i| {
            terms[i].loadings.len() > 1
                || terms.iter().any(|u| {
                    u.loadings[1..]
                        .iter()
                        .any(|l| l.1 == terms[i].loadings[0].1)
                })
        })
        .collect();
    group.sort_by_key(|&i| terms[i].loadings.len());
    group
}

/// The covariance of two random coefficients' underlying normals at `beta`.
pub fn covariance(a: &RandomCoefficient, b: &RandomCoefficient, beta: &[f64]) -> f64 {
    let mut c = 0.0;
    for &(pa, da) in &a.loadings {
        for &(pb, db) in &b.loadings {
            if da == db {
                c += beta[pa] * beta[pb];
            }
        }
    }
    c
}

/// Each decision maker's coefficients conditional on their observed choices.
#[derive(Clone, Debug, Default)]
pub struct Conditional {
    /// The first situation of each decision maker (to name them).
    pub first: Vec<usize>,
    /// Per decision maker, the conditional mean of each random coefficient
    /// (in `random_coefficients` order), `[unit * D + d]`.
    pub means: Vec<f64>,
}

/// How a family's own multi-start search fared (`Family::search_starts`).
#[derive(Clone, Debug, Default, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Starts {
    /// Starts run.
    pub tried: usize,
    /// Starts that ended within `tolerance` of the best log-likelihood.
    pub reached_best: usize,
    pub tolerance: f64,
    /// The log-likelihood each start ended at, in start order.
    pub log_likelihoods: Vec<f64>,
    /// Seconds each start took.
    pub seconds: Vec<f64>,
    /// The start the search continued from (from 0).
    pub best: usize,
    /// Starts stopped because a class ran off towards a maximum at infinity
    /// (they are passed over when another start stayed inside).
    #[serde(default)]
    pub ran_off: usize,
    /// Passes over the data the starts ran.
    #[serde(default)]
    pub passes: usize,
    /// The seed of the starts.
    pub seed: u64,
}

/// Decision makers' class probabilities (`Family::posterior_classes`, `prior_classes`).
#[derive(Clone, Debug, Default)]
pub struct Posteriors {
    pub classes: usize,
    /// The first situation of each decision maker (to name them); for prior
    /// shares, every situation.
    pub first: Vec<usize>,
    /// `[unit * classes + c]`.
    pub probabilities: Vec<f64>,
}

/// A figure derived from a family's parameters (`Family::derived`).
#[derive(Clone, Debug, PartialEq)]
pub struct Derived {
    /// The table it belongs to ("covariance of the error differences against car").
    pub group: String,
    pub name: String,
    pub value: f64,
}
