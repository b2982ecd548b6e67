//! Constant calibration: adjust the alternative-specific constants so that
//! predicted base shares match known market shares, iterating
//! asc_j += ln(target_j / predicted_j) with the base alternative held at 0.

use serde::Serialize;

use crate::analysis::simulate::shares;
use crate::design::Design;
use crate::error::{Error, Result};
use crate::model::Family;
use crate::progress::{Phase, Sink, QUIET};
use crate::spec::{Spec, Term};

#[derive(Clone, Debug, Serialize)]
pub struct CalibrationRow {
    pub alternative: String,
    pub parameter: String,
    pub target: f64,
    pub estimated: f64,
    pub calibrated: f64,
    pub share_before: f64,
    pub share_after: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct Calibrated {
    pub iterations: usize,
    pub max_error: f64,
    pub rows: Vec<CalibrationRow>,
    #[serde(skip)]
    pub beta: Vec<f64>,
}

pub fn calibrate(
    spec: &Spec,
    d: &Design,
    family: &dyn Family,
    beta: &[f64],
    targets: &[(usize, f64)],
    tol: f64,
    max_iterations: usize,
) -> Result<Calibrated> {
    let limits = (tol, max_iterations);
    calibrate_with(spec, d, family, beta, targets, limits, QUIET)
}

/// `calibrate` within `(tol, max_iterations)`, reporting the phase
/// `calibration` (one step per iteration, of at most `max_iterations`) to `sink`.
pub fn calibrate_with(
    spec: &Spec,
    d: &Design,
    family: &dyn Family,
    beta: &[f64],
    targets: &[(usize, f64)],
    (tol, max_iterations): (f64, usize),
    sink: Sink,
) -> Result<Calibrated> {
    let mut b = beta.to_vec();
    let params = constants(spec, targets)?;
    let before = shares(family, d, &b);
    for &(j, _, _) in &params {
        if before[j] <= 0.0 {
            return Err(Error::Usage(format!(
                "calibration: `{}` is never available, so its share cannot be matched",
                spec.alternatives[j].name
            )));
        }
    }
    let phase = Phase::start(sink, "calibration", max_iterations);
    let mut iterations = 0;
    let mut s = before.clone();
    let err = |s: &[f64]| {
        targets
            .iter()
            .map(|&(j, t)| (s[j] - t).abs())
            .fold(0.0, f64::max)
    };
    while err(&s) > tol {
        if iterations >= max_iterations {
            return Err(Error::Usage(format!(
                "calibration did not reach the targets within {max_iterations} iterations (largest gap {:.2e}); are the targets attainable with the availabilities in the data?",
                err(&s)
            )));
        }
        // In willingness space a constant moves utility by the price scale
        // times itself: the step is divided by it.
        let per = 1.0 / crate::model::space::price_scale(family, &b).unwrap_or(1.0);
        for &(j, p, t) in &params {
            b[p] += per * (t / s[j]).ln();
        }
        s = shares(family, d, &b);
        iterations += 1;
        phase.step();
    }
    phase.finish();
    let rows = targets
        .iter()
        .map(|&(j, t)| {
            let p = params.iter().find(|x| x.0 == j).map(|x| x.1);
            let named: Vec<&str> = params
                .iter()
                .filter(|x| x.0 == j)
                .map(|x| spec.parameters[x.1].name.as_str())
                .collect();
            CalibrationRow {
                alternative: spec.alternatives[j].name.clone(),
                parameter: match named.is_empty() {
                    true => "(base, held at 0)".into(),
                    false => named.join(", "),
                },
                target: t,
                estimated: p.map(|p| beta[p]).unwrap_or(0.0),
                calibrated: p.map(|p| b[p]).unwrap_or(0.0),
                share_before: before[j],
                share_after: s[j],
            }
        })
        .collect();
    Ok(Calibrated {
        iterations,
        max_error: err(&s),
        rows,
        beta: b,
    })
}

/// The constant of each target's alternative (the base's is held at 0):
/// (alternative, parameter, target); in a latent class model each class's
/// constant of the alternative, all moved by the same step.
fn constants(spec: &Spec, targets: &[(usize, f64)]) -> Result<Vec<(usize, usize, f64)>> {
    let mut params = Vec::new();
    for &(j, t) in targets {
        if j == spec.base {
            continue;
        }
        let before = params.len();
        for (p, q) in spec.parameters.iter().enumerate() {
            if q.term == Term::Constant && q.alternative == Some(j) {
                params.push((j, p, t));
            }
        }
        if params.len() == before {
            return Err(Error::Usage(format!(
                "calibration: `{}` has no constant to adjust",
                spec.alternatives[j].name
            )));
        }
    }
    Ok(params)
}
