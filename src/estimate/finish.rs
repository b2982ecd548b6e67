//! Everything after the search: the Hessian at the estimates and the
//! covariances, diagnostics, parameter rows and fit statistics, while the
//! constants-only reference model is fitted beside them.

use std::sync::Arc;
use std::time::Instant;

use nalgebra::DMatrix;

use super::{
    diagnose, inference, normal_p, null_log_likelihood, optimise, reference, shares_from,
    Diagnostic, DiagnosticKind, Fit, FitStats, ParameterRow, Z95,
};
use crate::data::Observations;
use crate::design::Design;
use crate::error::{Error, Result};
use crate::model::{self, Baseline, Family, FamilyRef};
use crate::spec::Spec;

/// Everything after the search: covariance, diagnostics, parameter rows and statistics.
#[allow(clippy::too_many_arguments)]
pub(super) fn finish(
    spec: &Spec,
    obs: Arc<Observations>,
    design: Design,
    family: FamilyRef,
    free: Vec<usize>,
    out: optimise::Outcome,
    started: Instant,
    saved_constants_ll: Option<f64>,
) -> Result<Fit> {
    let reference_needed = saved_constants_ll.is_none()
        && (spec.constants || spec.parameters.iter().any(|p| p.in_reference))
        && spec.attributes.len() + spec.characteristics.len() > 0;
    // The constants-only reference model is fitted on another thread while
    // this one computes the covariance and the diagnostics (both deterministic
    // whatever runs beside them).
    std::thread::scope(|scope| {
        let reference = reference_needed.then(|| {
            let obs = obs.clone();
            scope.spawn(move || reference::constants_log_likelihood(spec, obs))
        });
        let parts = (design, family, free, out, started);
        finish_with(spec, obs, parts, saved_constants_ll, reference)
    })
}

/// `finish` once the reference model is under way.
fn finish_with(
    spec: &Spec,
    obs: Arc<Observations>,
    (design, family, free, out, started): (
        Design,
        FamilyRef,
        Vec<usize>,
        optimise::Outcome,
        Instant,
    ),
    saved_constants_ll: Option<f64>,
    reference: Option<std::thread::ScopedJoinHandle<'_, Result<f64>>>,
) -> Result<Fit> {
    let names: Vec<String> = spec.parameters.iter().map(|p| p.name.clone()).collect();
    let a = free_hessian(&design, &*family, &out, &free);
    let scales = model::hessian::scales_at(&*family, &design, &out.beta);
    let free_scales: Vec<f64> = free.iter().map(|&p| scales[p]).collect();
    let flats = inference::flat_directions(&a, &free_scales);
    let found = diagnose::Found {
        free: &free,
        names: &names,
        out: &out,
        flats: &flats,
        scales: &scales,
    };
    let mut diagnostics = diagnose::diagnose(spec, &design, &obs, &*family, &found);
    diagnostics.extend(family_diagnostics(spec, &design, &*family, &out));
    let (covariance, robust_covariance) =
        covariances_held(&design, &*family, &out.beta, (&free, &a, &flats), &scales);
    let robust_inference = obs.group.is_some();
    let covariances = (&covariance, &robust_covariance);
    let parameters = parameter_rows(spec, &names, &out.beta, covariances, robust_inference);

    // Fit statistics.
    let null_ll = null_log_likelihood(&obs);
    let constants_ll = match (saved_constants_ll, reference) {
        (Some(c), _) => c,
        (None, Some(h)) => h.join().map_err(|_| {
            Error::Estimate("the search of the constants-only reference model failed".into())
        })??,
        (None, None) if spec.constants => out.ll,
        (None, None) => null_ll,
    };
    let stats = statistics(
        &design,
        &obs,
        &out,
        free.len(),
        (null_ll, constants_ll),
        started,
    );
    // The base utilities and probabilities at the estimates, which the shares
    // below and every analysis read (kept with the fit).
    // Sampled sets (slots, not alternatives) have no shares of their own:
    // the fit moved onto the full sets computes them, or none are made.
    let sampled = design.alternatives() != spec.alternatives.len();
    let baseline = std::sync::OnceLock::new();
    if !sampled {
        let _ = baseline.set(Baseline::new(&*family, &design, &out.beta));
    }
    let shares = shares_from(spec, &design, &*family, &out.beta, baseline.get());
    Ok(Fit {
        design,
        family,
        names,
        beta: out.beta,
        free,
        covariance,
        robust_covariance,
        parameters,
        stats,
        shares,
        diagnostics,
        baseline,
    })
}

/// The covariances, leaving out a (negative-)lognormal coefficient that went
/// to 0: it has no errors, and the others' come from the rest of the Hessian.
fn covariances_held(
    design: &Design,
    family: &dyn Family,
    beta: &[f64],
    (free, a, flats): (&[usize], &DMatrix<f64>, &[Vec<usize>]),
    scales: &[f64],
) -> (DMatrix<f64>, DMatrix<f64>) {
    let held: Vec<usize> = diagnose::opposite_sign(family, design, beta)
        .into_iter()
        .flat_map(|(l, s)| [l, s])
        .collect();
    if held.is_empty() {
        return covariances(design, family, beta, free, a, flats.is_empty());
    }
    let kept: Vec<usize> = (0..free.len())
        .filter(|&x| !held.contains(&free[x]))
        .collect();
    let cov_free: Vec<usize> = kept.iter().map(|&x| free[x]).collect();
    let a_kept = DMatrix::from_fn(kept.len(), kept.len(), |r, c| a[(kept[r], kept[c])]);
    let kept_scales: Vec<f64> = cov_free.iter().map(|&p| scales[p]).collect();
    let identified = inference::flat_directions(&a_kept, &kept_scales).is_empty();
    let (mut c, mut rc) = covariances(design, family, beta, &cov_free, &a_kept, identified);
    for &p in &held {
        c[(p, p)] = f64::NAN;
        rc[(p, p)] = f64::NAN;
    }
    (c, rc)
}

/// The negated Hessian's free block at the estimates. The Hessian the search
/// ended with is reused: an analytic one is at the estimates; a differenced
/// one that confirmed convergence sits there up to the last tiny Newton step.
/// Else one is computed here.
fn free_hessian(
    design: &Design,
    family: &dyn Family,
    out: &optimise::Outcome,
    free: &[usize],
) -> DMatrix<f64> {
    let k = design.params;
    let final_hess = match &out.hessian {
        Some(h) if h.len() == k * k => h.clone(),
        _ => model::hessian::with_hessian(family, design, &out.beta, free)
            .hess
            .unwrap_or_default(),
    };
    optimise::negative_free_hessian(&final_hess, k, free)
}

/// The classical and robust covariances (K x K, zero rows for fixed
/// parameters) from the negated Hessian's free block `a`; NaN throughout when
/// a direction is flat (`identified` false) or `a` cannot be inverted.
fn covariances(
    design: &Design,
    family: &dyn Family,
    beta: &[f64],
    free: &[usize],
    a: &DMatrix<f64>,
    identified: bool,
) -> (DMatrix<f64>, DMatrix<f64>) {
    let k = design.params;
    let m = free.len();
    let nan = || DMatrix::from_element(k, k, f64::NAN);
    match (identified, inference::invert(a)) {
        (true, Some(a_inv)) => {
            let r = inference::robust(design, family, beta, free, &a_inv);
            let mut c = DMatrix::zeros(k, k);
            let mut rc = DMatrix::zeros(k, k);
            for x in 0..m {
                for y in 0..m {
                    c[(free[x], free[y])] = a_inv[(x, y)];
                    rc[(free[x], free[y])] = r[(x, y)];
                }
            }
            (c, rc)
        }
        _ => (nan(), nan()),
    }
}

/// One row per parameter: estimate, errors, and the test and interval under
/// the errors inference uses (robust when the data have groups).
fn parameter_rows(
    spec: &Spec,
    names: &[String],
    beta: &[f64],
    (covariance, robust_covariance): (&DMatrix<f64>, &DMatrix<f64>),
    robust_inference: bool,
) -> Vec<ParameterRow> {
    (0..beta.len())
        .map(|p| {
            let fixed = spec.parameters[p].fixed.is_some();
            let se = if fixed {
                f64::NAN
            } else {
                covariance[(p, p)].sqrt()
            };
            let rse = if fixed {
                f64::NAN
            } else {
                robust_covariance[(p, p)].sqrt()
            };
            let use_se = if robust_inference { rse } else { se };
            let est = beta[p];
            let t = (est - spec.parameters[p].null) / use_se;
            ParameterRow {
                name: names[p].clone(),
                term: spec.term_label(&spec.parameters[p].term),
                estimate: est,
                std_error: se,
                robust_std_error: rse,
                t_stat: t,
                p_value: normal_p(t),
                ci_low: est - Z95 * use_se,
                ci_high: est + Z95 * use_se,
                fixed,
                null: spec.parameters[p].null,
            }
        })
        .collect()
}

/// The fit statistics from the search's outcome and the two reference
/// log-likelihoods (equal shares, constants only).
fn statistics(
    design: &Design,
    obs: &Observations,
    out: &optimise::Outcome,
    estimated: usize,
    (null_ll, constants_ll): (f64, f64),
    started: Instant,
) -> FitStats {
    let kf = estimated as f64;
    let n = design.situations() as f64;
    let ll = out.ll;
    FitStats {
        situations: design.situations(),
        groups: obs.groups,
        log_likelihood: ll,
        null_log_likelihood: null_ll,
        constants_log_likelihood: constants_ll,
        rho_squared: 1.0 - ll / null_ll,
        rho_squared_constants: 1.0 - ll / constants_ll,
        adjusted_rho_squared: 1.0 - (ll - kf) / null_ll,
        aic: 2.0 * kf - 2.0 * ll,
        bic: kf * n.ln() - 2.0 * ll,
        iterations: out.bfgs_iterations,
        newton_steps: out.newton_steps,
        passes: out.passes,
        gradient_norm: out.gradient_norm,
        newton_decrement: out.criterion,
        converged: out.converged,
        seconds: started.elapsed().as_secs_f64(),
        estimated_parameters: estimated,
        inference: if obs.group.is_some() {
            "robust"
        } else {
            "classical"
        }
        .to_string(),
        starts: out.starts.clone(),
        sampled: None,
    }
}

/// The family's warnings at the estimates and those on its own starts.
fn family_diagnostics(
    spec: &Spec,
    design: &Design,
    family: &dyn Family,
    out: &optimise::Outcome,
) -> Vec<Diagnostic> {
    let mut d: Vec<Diagnostic> = family
        .warnings(spec, design, &out.beta)
        .into_iter()
        .map(|w| Diagnostic {
            kind: DiagnosticKind::Family,
            code: Some(w.code.to_string()),
            parameters: w.parameters,
            message: w.message,
        })
        .collect();
    d.extend(diagnose::starts(out.starts.as_ref()));
    d
}
