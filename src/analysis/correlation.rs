//! Correlated random coefficients (`[model].correlated`): the standard
//! deviations and correlations their Cholesky factor implies, of the
//! underlying normals and of the coefficients themselves, with delta-method
//! errors, and the Wald test that every correlation is 0.
//!
//! With Sigma = L L' the covariance of the underlying normals X_i (the
//! logarithms, for lognormal coefficients), the coefficients' correlations
//! follow from the lognormal's moments (Johnson, Kotz & Balakrishnan,
//! Continuous Univariate Distributions, vol. 1, ch. 14; the bivariate
//! case is common practice): between two lognormals
//! (exp(s_ij) - 1) / sqrt((exp(s_ii) - 1)(exp(s_jj) - 1)); between a normal X_i
//! and a lognormal exp(X_j), s_ij / sqrt(s_ii (exp(s_jj) - 1)); between
//! normals, the normals' own. A negative-lognormal coefficient flips the
//! sign of its correlations. These closed forms are exact (no simulation).

use serde::Serialize;

use super::delta;
use super::hypothesis::{wald, ChiTest};
use super::random::Figure;
use crate::estimate::Fit;
use crate::model::distribution::Distribution;
use crate::model::{correlated_group, covariance, RandomCoefficient};
use crate::spec::Restriction;

/// The correlated random coefficients of a fit (JSON contract).
#[derive(Clone, Debug, Serialize)]
pub struct Correlations {
    /// The correlated coefficients, in the order of the Cholesky factor.
    pub coefficients: Vec<String>,
    /// Each one's distribution.
    pub distributions: Vec<String>,
    /// Standard deviations of the underlying normals (of the logarithms, for lognormals).
    pub std_devs: Vec<Figure>,
    /// Correlations of the underlying normals, row by row.
    pub correlations: Vec<Vec<Figure>>,
    /// Correlations of the coefficients themselves (the same as the
    /// normals' between two normal coefficients).
    pub coefficient_correlations: Vec<Vec<Figure>>,
    /// Wald test that every correlation is 0 (every Cholesky off-diagonal).
    pub independence: Option<ChiTest>,
}

/// The figures at `beta`: D standard deviations, D x D correlations of the
/// normals, D x D correlations of the coefficients.
fn figures(terms: &[&RandomCoefficient], beta: &[f64]) -> Vec<f64> {
    let d = terms.len();
    let cov: Vec<f64> = (0..d * d)
        .map(|x| covariance(terms[x / d], terms[x % d], beta))
        .collect();
    let sd: Vec<f64> = (0..d).map(|i| cov[i * d + i].max(0.0).sqrt()).collect();
    let mut out = sd.clone();
    for i in 0..d {
        for j in 0..d {
            out.push(if i == j {
                1.0
            } else {
                ratio(cov[i * d + j], sd[i] * sd[j])
            });
        }
    }
    for i in 0..d {
        for j in 0..d {
            let (a, b) = (terms[i].distribution, terms[j].distribution);
            let (sii, sjj, sij) = (cov[i * d + i], cov[j * d + j], cov[i * d + j]);
            let c = match (a.is_log(), b.is_log()) {
                _ if i == j => 1.0,
                (false, false) => ratio(sij, sd[i] * sd[j]),
                (true, true) => ratio(sij.exp_m1(), (sii.exp_m1() * sjj.exp_m1()).sqrt()),
                (false, true) => ratio(sij, (sii * sjj.exp_m1()).sqrt()),
                (true, false) => ratio(sij, (sjj * sii.exp_m1()).sqrt()),
            };
            out.push(if i == j { 1.0 } else { c * sign(a) * sign(b) });
        }
    }
    out
}

fn ratio(a: f64, b: f64) -> f64 {
    if b > 0.0 {
        a / b
    } else {
        0.0
    }
}

fn sign(d: Distribution) -> f64 {
    if d == Distribution::NegativeLognormal {
        -1.0
    } else {
        1.0
    }
}

/// The fit's correlated random coefficients, `None` without any.
pub fn correlations(fit: &Fit) -> Option<Correlations> {
    let all = fit.family.random_coefficients();
    let group = correlated_group(&all);
    if group.is_empty() {
        return None;
    }
    let terms: Vec<&RandomCoefficient> = group.iter().map(|&i| &all[i]).collect();
    let d = terms.len();
    let value = figures(&terms, &fit.beta);
    let se = delta::delta_se(fit, &|b: &[f64]| figures(&terms, b));
    let fig = |k: usize| Figure {
        value: value[k],
        std_error: se[k],
    };
    let matrix = |at: usize| -> Vec<Vec<Figure>> {
        (0..d)
            .map(|i| (0..d).map(|j| fig(at + i * d + j)).collect())
            .collect()
    };
    Some(Correlations {
        coefficients: terms
            .iter()
            .map(|t| fit.names[t.location].clone())
            .collect(),
        distributions: terms
            .iter()
            .map(|t| t.distribution.name().to_string())
            .collect(),
        std_devs: (0..d).map(fig).collect(),
        correlations: matrix(d),
        coefficient_correlations: matrix(d + d * d),
        independence: independence(fit, &terms),
    })
}

/// The Wald test that every free Cholesky off-diagonal is 0.
fn independence(fit: &Fit, terms: &[&RandomCoefficient]) -> Option<ChiTest> {
    let restrictions: Vec<Restriction> = terms
        .iter()
        .flat_map(|t| t.loadings[1..].iter())
        .filter(|l| fit.free.contains(&l.0))
        .map(|l| Restriction {
            text: format!("{} = 0", fit.names[l.0]),
            coefficients: vec![(l.0, 1.0)],
            constant: 0.0,
        })
        .collect();
    if restrictions.is_empty() {
        return None;
    }
    let mut test = wald(fit, &restrictions).ok()?;
    test.name = "Wald: every correlation of the random coefficients is 0".into();
    Some(test)
}
