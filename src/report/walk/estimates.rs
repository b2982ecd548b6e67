//! The estimates walked once: grouped by the spec term they come from, each
//! with the errors the fit's inference uses, its odds ratio where the family
//! reads coefficients as odds, and — where the value is the mean of the
//! logarithm of a (negative-)lognormal coefficient, as the family's random
//! coefficients say — that label and the coefficient's median; in
//! willingness-to-pay space, which parameter is the price scale and what
//! unit each value is in.

use crate::analysis::random::Figure;
use crate::estimate::Fit;
use crate::spec::Spec;

/// What a (negative-)lognormal coefficient's location parameter is.
pub const MEAN_OF_LOG: &str = "mean of log";

/// One parameter's row.
#[derive(Clone, Debug, PartialEq)]
pub struct Estimate {
    pub name: String,
    /// What the value is when it is not the coefficient itself ("mean of log").
    pub what: Option<&'static str>,
    pub value: f64,
    pub fixed: bool,
    /// The error t, p and the interval use (clustered or the Hessian's).
    pub std_error: f64,
    /// The Hessian's error (shown beside clustered errors).
    pub hessian_std_error: f64,
    pub t: f64,
    pub p: f64,
    pub interval: (f64, f64),
    /// exp(value) for a characteristic where the family reads odds ratios.
    pub odds_ratio: Option<f64>,
    /// The coefficient's median across decision makers when the value is the
    /// mean of its logarithm, with its delta-method error.
    pub median: Option<Figure>,
    /// In willingness-to-pay space: "price scale", or the unit of a value
    /// ("cost per unit of time").
    pub unit: Option<String>,
}

impl Estimate {
    /// The name, with what the value is when it is not the coefficient: "cost (mean of log)".
    pub fn label(&self) -> String {
        match self.what {
            Some(w) => format!("{} ({w})", self.name),
            None => self.name.clone(),
        }
    }
}

/// The parameters of one spec term.
#[derive(Clone, Debug, PartialEq)]
pub struct Term {
    pub term: String,
    pub rows: Vec<Estimate>,
}

/// The estimates grouped by term.
#[derive(Clone, Debug, PartialEq)]
pub struct Estimates {
    pub terms: Vec<Term>,
    /// Errors clustered by decision maker (the Hessian's beside).
    pub robust: bool,
    /// The family reads characteristics' coefficients as odds ratios.
    pub odds: bool,
    /// Estimated parameters tested against a value other than 0 (name, value).
    pub against: Vec<(String, f64)>,
    /// The model is written in willingness-to-pay space.
    pub space: Option<super::Space>,
}

impl Estimates {
    /// Whether some value is the mean of a logarithm (its median is then shown).
    pub fn has_medians(&self) -> bool {
        self.terms
            .iter()
            .any(|t| t.rows.iter().any(|r| r.median.is_some()))
    }
}

pub fn estimates(spec: &Spec, fit: &Fit) -> Estimates {
    let odds = fit.family.abilities().odds_ratios;
    let logs = fit.family.random_coefficients();
    let space = super::Space::of(spec, fit);
    let mut terms: Vec<Term> = Vec::new();
    for (k, row) in fit.parameters.iter().enumerate() {
        let log = logs.iter().find(|t| t.location == k);
        let std_error = crate::report::shown_error(fit, row);
        let characteristic = matches!(
            spec.parameters.get(k).map(|p| &p.term),
            Some(crate::spec::Term::Characteristic(_))
        );
        let e = Estimate {
            name: row.name.clone(),
            what: log.filter(|t| t.distribution.is_log()).map(|_| MEAN_OF_LOG),
            value: row.estimate,
            fixed: row.fixed,
            std_error,
            hessian_std_error: row.std_error,
            t: row.t_stat,
            p: row.p_value,
            interval: (row.ci_low, row.ci_high),
            odds_ratio: (odds && characteristic).then(|| row.estimate.exp()),
            median: log
                .and_then(|t| crate::analysis::random::log_median(t, row.estimate, std_error)),
            unit: space.as_ref().and_then(|s| s.unit(k)).map(str::to_string),
        };
        match terms.last_mut() {
            Some(t) if t.term == row.term => t.rows.push(e),
            _ => terms.push(Term {
                term: row.term.clone(),
                rows: vec![e],
            }),
        }
    }
    Estimates {
        terms,
        robust: fit.stats.inference == "robust",
        odds,
        against: fit
            .parameters
            .iter()
            .filter(|r| r.null != 0.0 && !r.fixed)
            .map(|r| (r.name.clone(), r.null))
            .collect(),
        space,
    }
}
