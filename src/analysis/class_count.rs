//! Fit by number of latent classes: the spec fitted again with 1, 2, ...
//! classes on the same data (one class is the logit), with what a user
//! weighs to choose the number: log-likelihood, parameters, AIC, BIC (by
//! situations and by decision makers) and the smallest class's share.

use std::ops::RangeInclusive;
use std::path::Path;
use std::sync::Arc;

use serde::Serialize;

use crate::data::Observations;
use crate::error::{Error, Result};
use crate::estimate::{self, Progress};
use crate::model::SHARES;
use crate::spec::Spec;

/// One number of classes.
#[derive(Clone, Debug, Serialize)]
pub struct CountRow {
    pub classes: usize,
    pub log_likelihood: f64,
    pub estimated_parameters: usize,
    pub aic: f64,
    /// BIC with n the number of situations (as the fit statistics).
    pub bic: f64,
    /// BIC with n the number of decision makers (the panel's independent units).
    pub bic_decision_makers: f64,
    /// The smallest class's share (1 with one class).
    pub smallest_share: f64,
    /// Starts that reached the best log-likelihood, of those run.
    pub reached_best: usize,
    pub starts: usize,
    pub converged: bool,
}

/// Parses `1..4`, `1-4` or `3` into a range of class counts (1 to 20).
pub fn parse_counts(text: &str) -> Result<RangeInclusive<usize>> {
    let bad = || {
        Error::Usage(format!(
            "--classes `{text}`: give a number of classes or a range such as 1..4 (from 1 to 20)"
        ))
    };
    let (a, b) = match text.split_once("..").or_else(|| text.split_once('-')) {
        Some((a, b)) => (a.trim(), b.trim_start_matches('=').trim()),
        None => (text.trim(), text.trim()),
    };
    let (a, b): (usize, usize) = (a.parse().map_err(|_| bad())?, b.parse().map_err(|_| bad())?);
    if a < 1 || b < a || b > 20 {
        return Err(bad());
    }
    Ok(a..=b)
}

/// The spec with `k` classes (and without membership columns for one).
pub fn with_classes(spec: &Spec, k: usize) -> Result<Spec> {
    let text = std::fs::read_to_string(&spec.path).map_err(|e| Error::io(&spec.path, e))?;
    let mut table: toml::Table = toml::from_str(&text)
        .map_err(|e| Error::spec(&spec.path, format!("not a valid spec: {e}")))?;
    let model = table
        .entry("model")
        .or_insert_with(|| toml::Value::Table(toml::Table::new()));
    if let toml::Value::Table(m) = model {
        m.insert("classes".into(), toml::Value::Integer(k as i64));
        if k == 1 {
            m.remove("membership");
        }
    }
    let text = toml::to_string(&table)
        .map_err(|e| Error::spec(&spec.path, format!("cannot rewrite the spec: {e}")))?;
    crate::model::parse_spec(&text, Path::new(&spec.path))
}

/// Fits `spec` with each number of classes in `counts` on `obs`.
pub fn by_count(
    spec: &Spec,
    obs: Arc<Observations>,
    counts: RangeInclusive<usize>,
    progress: Progress,
) -> Result<Vec<CountRow>> {
    if spec.family != "latent-class" {
        return Err(Error::Usage(format!(
            "--classes: the spec's family is \"{}\"; the fit by number of classes needs [model].family = \"latent-class\"",
            spec.family
        )));
    }
    let units = match &obs.group {
        Some(_) => obs.groups,
        None => obs.situations,
    } as f64;
    let mut rows = Vec::new();
    for k in counts {
        let s = with_classes(spec, k)?;
        let fit = estimate::fit(&s, obs.clone(), progress)?;
        let shares: Vec<f64> = fit
            .family
            .derived(&s, &fit.design, &fit.beta)
            .into_iter()
            .filter(|r| r.group == SHARES)
            .map(|r| r.value)
            .collect();
        let st = &fit.stats;
        let kf = st.estimated_parameters as f64;
        rows.push(CountRow {
            classes: k,
            log_likelihood: st.log_likelihood,
            estimated_parameters: st.estimated_parameters,
            aic: st.aic,
            bic: st.bic,
            bic_decision_makers: kf * units.ln() - 2.0 * st.log_likelihood,
            smallest_share: shares.iter().copied().fold(1.0, f64::min),
            reached_best: st.starts.as_ref().map_or(1, |s| s.reached_best),
            starts: st.starts.as_ref().map_or(1, |s| s.tried),
            converged: st.converged,
        });
    }
    Ok(rows)
}
