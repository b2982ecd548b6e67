//! A check of the ordered families' single-index assumption: the likelihood
//! ratio against the unordered multinomial logit with the same characteristics
//! on the same data (one coefficient per category but the first, and
//! constants). The ordered model is not a special case of the unordered one,
//! so the statistic is a guide, not an exact test, and it is labelled so.

use std::sync::Arc;

use serde::Serialize;

use super::hypothesis::chi_p;
use crate::estimate::{self, Fit, Step};
use crate::spec::{Parameter, Spec, Term};

#[derive(Clone, Debug, Serialize)]
pub struct SingleIndexCheck {
    pub name: String,
    /// 2 (LL of the unordered logit - LL of the ordered model).
    pub statistic: f64,
    pub df: usize,
    pub p_value: f64,
    pub unordered_log_likelihood: f64,
    pub note: String,
}

/// The unordered logit of the same characteristics: the first category is the base.
fn unordered(spec: &Spec) -> Spec {
    let mut s = spec.clone();
    s.family = "logit".into();
    s.family_keys = toml::Table::new();
    s.constants = true;
    s.base = 0;
    let j = s.alternatives.len();
    let mut parameters = Vec::new();
    let param = |name: String, term: Term, alternative: usize| Parameter {
        name,
        term,
        alternative: Some(alternative),
        start: 0.0,
        fixed: None,
        null: 0.0,
        in_reference: false,
        class: 0,
    };
    for a in 1..j {
        parameters.push(param(
            format!("asc_{}", s.alternatives[a].name),
            Term::Constant,
            a,
        ));
    }
    for (c, ch) in s.characteristics.iter_mut().enumerate() {
        ch.alternatives = (1..j).collect();
        for a in 1..j {
            let name = format!("{}_{}", ch.name, spec.alternatives[a].name);
            parameters.push(param(name, Term::Characteristic(c), a));
        }
    }
    s.parameters = parameters;
    s.ratios.clear();
    s.restrictions.clear();
    s.calibration = None;
    s.holdout = None;
    s
}

/// For an ordered family: the check above; None for other families.
pub fn check(spec: &Spec, fit: &Fit) -> crate::error::Result<Option<SingleIndexCheck>> {
    if !fit.family.abilities().ordered || spec.characteristics.is_empty() {
        return Ok(None);
    }
    let mnl = unordered(spec);
    let quiet = |_s: Step| {};
    let other = estimate::fit(&mnl, Arc::clone(&fit.design.obs), &quiet)?;
    let statistic = 2.0 * (other.stats.log_likelihood - fit.stats.log_likelihood);
    let df = other.free.len().saturating_sub(fit.free.len());
    Ok(Some(SingleIndexCheck {
        name: format!("single index: {} against the unordered logit", fit.family.name()),
        statistic,
        df,
        p_value: chi_p(statistic.max(0.0), df),
        unordered_log_likelihood: other.stats.log_likelihood,
        note: "the ordered model is not a special case of the unordered logit, so this likelihood ratio is a guide rather than an exact test: a large statistic says the categories respond to the characteristics in ways one index with cut-points cannot follow".into(),
    }))
}
