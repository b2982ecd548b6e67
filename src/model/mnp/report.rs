//! What the multinomial probit reports about itself: its implied covariance
//! of the error differences as `derived` figures, its structure lines, and
//! its warnings.

use std::sync::atomic::Ordering;

use super::{rules, Kind, Mnp, Structure, FEW_DRAWS};
use crate::model::{Derived, FamilyWarning};
use crate::spec::Spec;

/// The covariances and correlations of the error differences against the
/// base implied by the Cholesky factor (full covariance only).
pub(super) fn derived(f: &Mnp, spec: &Spec, beta: &[f64]) -> Vec<Derived> {
    if f.kind != Kind::Full {
        return Vec::new();
    }
    let n = f.j - 1;
    let l = f.structure.factor(n, beta);
    let names = rules::non_base(spec.alternatives.iter().map(|a| a.name.as_str()), f.base);
    let base = &spec.alternatives[f.base].name;
    let s = |a: usize, b: usize| -> f64 { (0..n).map(|k| l[a * n + k] * l[b * n + k]).sum() };
    let mut out = Vec::new();
    let cov = format!("covariance of the error differences against {base}");
    let cor = format!("correlation of the error differences against {base}");
    for a in 0..n {
        for b in 0..=a {
            let name = if a == b {
                format!("var({})", names[a])
            } else {
                format!("cov({}, {})", names[a], names[b])
            };
            out.push(Derived {
                group: cov.clone(),
                name,
                value: s(a, b),
            });
        }
    }
    for a in 0..n {
        for b in 0..a {
            out.push(Derived {
                group: cor.clone(),
                name: format!("corr({}, {})", names[a], names[b]),
                value: s(a, b) / (s(a, a) * s(b, b)).sqrt(),
            });
        }
    }
    out
}

/// Lines describing the errors and the simulator, for reports.
pub(super) fn structure(f: &Mnp, spec: &Spec) -> Vec<String> {
    let base = &spec.alternatives[f.base].name;
    let errors = match f.kind {
        Kind::Independent => format!(
            "errors: independent normal (each difference against {base} has variance 1)"
        ),
        Kind::Full => format!(
            "errors: full covariance of the utility differences against {base}, estimated as its Cholesky factor (chol_*; the first difference's variance fixed at 1)"
        ),
    };
    vec![
        errors,
        format!(
            "probabilities: GHK simulator, {} {} draws per situation (seed {})",
            f.simulation.draws,
            f.simulation.sequence.name(),
            f.simulation.seed
        ),
    ]
}

/// The family's warnings at `beta`.
pub(super) fn warnings(f: &Mnp, beta: &[f64]) -> Vec<FamilyWarning> {
    let mut out = Vec::new();
    if f.simulation.draws < FEW_DRAWS {
        out.push(FamilyWarning {
            code: "few_draws",
            parameters: Vec::new(),
            message: format!(
                "only {} draws per situation: simulated probabilities (and so the estimates) carry noticeable simulation error; {FEW_DRAWS} or more are usual",
                f.simulation.draws
            ),
        });
    }
    if f.singular.load(Ordering::Relaxed) {
        out.push(FamilyWarning {
            code: "covariance_singular_in_search",
            parameters: Vec::new(),
            message: "the search met error covariances that were not positive definite; those points were rejected and the search went on".into(),
        });
    }
    if let Structure::Full { .. } = f.structure {
        let n = f.j - 1;
        let l = f.structure.factor(n, beta);
        let diag: Vec<f64> = (0..n).map(|k| l[k * n + k].abs()).collect();
        let (lo, hi) = diag.iter().fold((f64::INFINITY, 0.0f64), |(lo, hi), &x| {
            (lo.min(x), hi.max(x))
        });
        if lo < 1e-3 * hi {
            out.push(FamilyWarning {
                code: "covariance_near_singular",
                parameters: Vec::new(),
                message: format!(
                    "the estimated error covariance is close to singular (smallest Cholesky diagonal {lo:.2e} against largest {hi:.2e}): some utility differences are almost perfectly correlated, and their covariance entries are poorly determined"
                ),
            });
        }
    }
    out
}
