//! Tests between models: likelihood ratio (restricted against general), Wald
//! tests of linear restrictions, and the Hausman-McFadden test of IIA.

use std::sync::Arc;

use nalgebra::{DMatrix, DVector, SymmetricEigen};
use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF};

use crate::data::Observations;
use crate::error::{Error, Result};
use crate::estimate::{self, Fit, Step};
use crate::spec::{Restriction, Spec};

/// Wald test that every estimated parameter of the family's own (scales, ...)
/// equals its null value, when the family then reduces to a simpler one; None
/// when it does not or none of them is estimated.
pub fn family_reduction(spec: &Spec, fit: &Fit) -> Result<Option<ChiTest>> {
    let Some(simpler) = fit.family.reduces_to() else {
        return Ok(None);
    };
    let restrictions: Vec<Restriction> = spec
        .parameters
        .iter()
        .enumerate()
        .filter(|(k, p)| matches!(p.term, crate::spec::Term::Family(_)) && fit.free.contains(k))
        .map(|(k, p)| Restriction {
            // Six decimals are plenty to name the value (0.866025 for sqrt(3)/2).
            text: format!("{} = {}", p.name, (p.null * 1e6).round() / 1e6),
            coefficients: vec![(k, 1.0)],
            constant: p.null,
        })
        .collect();
    if restrictions.is_empty() {
        return Ok(None);
    }
    // The family's own test is not the user's: without a usable covariance
    // (a model not identified) it is left out rather than stopping the report.
    let Ok(mut t) = wald(fit, &restrictions) else {
        return Ok(None);
    };
    t.name = format!(
        "{} against {simpler} (Wald: {})",
        fit.family.name(),
        restrictions
            .iter()
            .map(|r| r.text.clone())
            .collect::<Vec<_>>()
            .join(", ")
    );
    Ok(Some(t))
}

#[derive(Clone, Debug, Serialize)]
pub struct ChiTest {
    pub name: String,
    pub statistic: f64,
    pub df: usize,
    pub p_value: f64,
}

pub fn chi_p(stat: f64, df: usize) -> f64 {
    if df == 0 || !stat.is_finite() {
        return f64::NAN;
    }
    match ChiSquared::new(df as f64) {
        Ok(c) => c.sf(stat.max(0.0)),
        Err(_) => f64::NAN,
    }
}

/// LR = 2 (LL_general - LL_restricted), df = difference in estimated parameters.
pub fn likelihood_ratio(restricted: &Fit, general: &Fit) -> ChiTest {
    let stat = 2.0 * (general.stats.log_likelihood - restricted.stats.log_likelihood);
    let df = general.free.len().saturating_sub(restricted.free.len());
    ChiTest {
        name: "likelihood ratio".into(),
        statistic: stat,
        df,
        p_value: chi_p(stat, df),
    }
}

/// Wald statistic of R beta = c with the fit's inference covariance.
pub fn wald(fit: &Fit, restrictions: &[Restriction]) -> Result<ChiTest> {
    let q = restrictions.len();
    let k = fit.beta.len();
    let cov = fit.inference_covariance();
    let mut r = DMatrix::<f64>::zeros(q, k);
    let mut diff = DVector::<f64>::zeros(q);
    for (row, res) in restrictions.iter().enumerate() {
        let mut lhs = 0.0;
        for &(p, a) in &res.coefficients {
            if !fit.free.contains(&p) {
                return Err(Error::Usage(format!(
                    "restriction `{}` involves the fixed parameter `{}`",
                    res.text, fit.names[p]
                )));
            }
            r[(row, p)] = a;
            lhs += a * fit.beta[p];
        }
        diff[row] = lhs - res.constant;
    }
    let middle = &r * cov * r.transpose();
    let inv = middle
        .clone()
        .cholesky()
        .map(|c| c.inverse())
        .ok_or_else(|| {
            Error::Usage(
                "the restrictions are linearly dependent or their covariance is singular".into(),
            )
        })?;
    let stat = (diff.transpose() * inv * &diff)[(0, 0)];
    let name = restrictions
        .iter()
        .map(|r| r.text.clone())
        .collect::<Vec<_>>()
        .join("; ");
    Ok(ChiTest {
        name: format!("Wald: {name}"),
        statistic: stat,
        df: q,
        p_value: chi_p(stat, q),
    })
}

#[derive(Clone, Debug, Serialize)]
pub struct IiaTest {
    pub dropped: String,
    pub statistic: f64,
    pub df: usize,
    pub p_value: f64,
    pub compared: Vec<String>,
    pub situations_used: usize,
    pub note: Option<String>,
}

/// Hausman-McFadden: refit without alternative `drop` (situations that chose it
/// are left out, it is unavailable elsewhere) and compare the common coefficients:
/// H = (b_r - b_f)' (V_r - V_f)^+ (b_r - b_f), df = rank of V_r - V_f.
pub fn hausman_mcfadden(
    spec: &Spec,
    obs: &Observations,
    full: &Fit,
    drop: usize,
) -> Result<IiaTest> {
    let j = obs.alternatives;
    if !full.family.abilities().iia {
        return Err(Error::Usage(format!(
            "the IIA test (Hausman-McFadden) checks the logit's independence from irrelevant alternatives, which the {} family does not assume; compare it with the logit instead (`sharecast compare`, and the family test in the `fit` report)",
            full.family.name()
        )));
    }
    if j < 3 {
        return Err(Error::Usage(
            "the IIA test needs at least three alternatives".into(),
        ));
    }
    let keep: Vec<bool> = obs.chosen.iter().map(|&c| c as usize != drop).collect();
    let mut sub = obs.subset(&keep);
    for i in 0..sub.situations {
        sub.available[i * j + drop] = false;
    }
    let mut rspec = spec.clone();
    for p in rspec.parameters.iter_mut() {
        if p.alternative == Some(drop) {
            p.fixed = Some(0.0);
            p.start = 0.0;
        }
    }
    let quiet = |_s: Step| {};
    let restricted = estimate::fit(&rspec, Arc::new(sub), &quiet)?;
    let common: Vec<usize> = full
        .free
        .iter()
        .copied()
        .filter(|p| restricted.free.contains(p))
        .collect();
    let m = common.len();
    // Classical covariances: the test rests on the full-set estimator being efficient under IIA.
    let vf = &full.covariance;
    let vr = &restricted.covariance;
    let diff = DVector::from_iterator(m, common.iter().map(|&p| restricted.beta[p] - full.beta[p]));
    let vd = DMatrix::from_fn(m, m, |a, b| {
        vr[(common[a], common[b])] - vf[(common[a], common[b])]
    });
    if vd.iter().any(|v| !v.is_finite()) {
        return Err(Error::Usage(
            "the IIA test needs finite covariances in both fits".into(),
        ));
    }
    let eig = SymmetricEigen::new(vd);
    let lmax = eig.eigenvalues.iter().cloned().fold(0.0, f64::max);
    let mut stat = 0.0;
    let mut rank = 0;
    let mut negative = false;
    for (e, &l) in eig.eigenvalues.iter().enumerate() {
        let v = eig.eigenvectors.column(e);
        let proj = v.dot(&diff);
        if l > 1e-10 * lmax {
            stat += proj * proj / l;
            rank += 1;
        } else if l < -1e-10 * lmax {
            negative = true;
        }
    }
    Ok(IiaTest {
        dropped: spec.alternatives[drop].name.clone(),
        statistic: stat,
        df: rank,
        p_value: chi_p(stat, rank),
        compared: common.iter().map(|&p| full.names[p].clone()).collect(),
        situations_used: restricted.stats.situations,
        note: negative.then(|| {
            "in some directions the coefficients without the dropped alternative are estimated no less precisely than with it, which the test does not expect under IIA; those directions are left out of the statistic and of its degrees of freedom".to_string()
        }),
    })
}
