//! The walk's correlated tastes (the spread of each underlying normal, the
//! correlations of the normals and of the coefficients themselves as matrices
//! with named axes, the test that they are independent) and the words of a
//! model written in willingness-to-pay space: which parameter is the price
//! scale and in what unit each value is. Figures as the analysis returned
//! them; nothing computed here.

use super::build::labelled;
use super::{Axis, Cell, Holds, Labelled, Matrix, Measure, Test, TestKind};
use crate::analysis::correlation::Correlations;
use crate::analysis::random::Figure;
use crate::estimate::Fit;
use crate::model::correlated_group;
use crate::spec::{Spec, Term};

/// Random coefficients that move together.
#[derive(Clone, Debug)]
pub struct Correlated {
    /// The coefficients, in the order of their Cholesky factor.
    pub coefficients: Vec<String>,
    /// Each one's distribution, in the same order.
    pub distributions: Vec<String>,
    /// The standard deviation of each underlying normal (of the logarithm,
    /// for a lognormal coefficient), labelled by its coefficient.
    pub spreads: Vec<Labelled>,
    /// Correlations of the underlying normals (a dash on the diagonal).
    pub normals: Matrix,
    /// Correlations of the coefficients themselves, when some coefficient is
    /// lognormal (otherwise they equal `normals`).
    pub own: Option<Matrix>,
    /// The Wald test that every correlation is 0.
    pub independence: Option<Test>,
}

/// A square matrix of correlations with a dash on its diagonal.
fn square(measure: Measure, holds: Holds, names: &[String], rows: &[Vec<Figure>]) -> Matrix {
    let n = names.len();
    let cells = (0..n * n)
        .map(|x| {
            let (i, j) = (x / n, x % n);
            match rows.get(i).and_then(|r| r.get(j)) {
                _ if i == j => Cell::Same,
                Some(f) => Cell::Value(*f),
                None => Cell::Missing,
            }
        })
        .collect();
    let axis = Axis {
        holds,
        labels: names.to_vec(),
    };
    Matrix {
        measure,
        rows: axis.clone(),
        columns: axis,
        cells,
    }
}

/// The analysis's correlated tastes walked (none when the coefficients are independent).
pub(super) fn correlated(fit: &Fit, c: Option<&Correlations>) -> Option<Correlated> {
    let c = c?;
    let terms = fit.family.random_coefficients();
    let any_log = correlated_group(&terms)
        .iter()
        .any(|&i| terms[i].distribution.is_log());
    let names = &c.coefficients;
    Some(Correlated {
        coefficients: names.clone(),
        distributions: c.distributions.clone(),
        spreads: names
            .iter()
            .zip(&c.std_devs)
            .map(|(n, f)| labelled(n, f.value, f.std_error))
            .collect(),
        normals: square(Measure::Correlation, Holds::Normal, names, &c.correlations),
        own: any_log.then(|| {
            square(
                Measure::CoefficientCorrelation,
                Holds::Coefficient,
                names,
                &c.coefficient_correlations,
            )
        }),
        independence: c.independence.as_ref().map(|t| Test {
            name: t.name.clone(),
            statistic: t.statistic,
            df: t.df,
            p_value: t.p_value,
            kind: TestKind::Wald,
        }),
    })
}

/// What the parameters of a model in willingness-to-pay space are.
#[derive(Clone, Debug, PartialEq)]
pub struct Space {
    /// The price's parameter: the price scale.
    pub price: String,
    /// Per parameter (fit order): what its value is in ("price scale",
    /// "cost per unit of time", ...), none for a parameter without one.
    pub units: Vec<Option<String>>,
}

impl Space {
    /// The space of a fit written in willingness to pay, none in preference space.
    pub fn of(spec: &Spec, fit: &Fit) -> Option<Space> {
        let w = fit.family.willingness()?;
        let price = fit.names.get(w.price)?.clone();
        let mut units: Vec<Option<String>> = (0..fit.names.len())
            .map(|k| {
                if k == w.price {
                    Some(PRICE_SCALE.to_string())
                } else if w.values.contains(&k) {
                    Some(format!("{price} {}", value_unit(spec, k)))
                } else {
                    None
                }
            })
            .collect();
        // A random value's spread is in its location's unit.
        for t in fit.family.random_coefficients() {
            if t.spread < units.len() && t.spread != t.location {
                units[t.spread] = match units.get(t.location).cloned().flatten() {
                    Some(u) if u == PRICE_SCALE => Some(format!("spread of the {PRICE_SCALE}")),
                    other => other,
                };
            }
        }
        Some(Space { price, units })
    }

    /// The sentence under an estimates heading.
    pub fn line(&self) -> String {
        format!(
            "willingness-to-pay space: `{p}` is the price scale (how strongly price weighs in the utility); every other estimate is a value, in units of `{p}` per unit of its variable (a constant's: for choosing its alternative rather than the base)",
            p = self.price
        )
    }

    /// The same in one short line (the workbench).
    pub fn brief(&self) -> String {
        format!(
            "willingness-to-pay space: `{p}` is the price scale; the other estimates are values in `{p}` per unit of their variable",
            p = self.price
        )
    }

    /// What parameter `k` is in, if anything.
    pub fn unit(&self, k: usize) -> Option<&str> {
        self.units.get(k).and_then(|u| u.as_deref())
    }

    /// How a random coefficient located at parameter `k` reads: "the price
    /// scale" or "a value in cost per unit of time".
    pub fn reads(&self, k: usize) -> Option<String> {
        self.unit(k).map(|u| {
            if u == PRICE_SCALE {
                format!("the {PRICE_SCALE}")
            } else {
                format!("a value in {u}")
            }
        })
    }
}

/// The price's parameter's words.
const PRICE_SCALE: &str = "price scale";

/// What a value parameter is per: "per unit of time", "for choosing rail
/// rather than car", "per unit of income, for bike".
fn value_unit(spec: &Spec, k: usize) -> String {
    let Some(p) = spec.parameters.get(k) else {
        return String::new();
    };
    let alt = |a: usize| {
        spec.alternatives
            .get(a)
            .map_or_else(String::new, |x| x.name.clone())
    };
    let of_alternative = p.alternative.map(|a| format!(", for {}", alt(a)));
    match &p.term {
        Term::Constant => format!(
            "for choosing {} rather than {}",
            p.alternative.map(alt).unwrap_or_default(),
            alt(spec.base)
        ),
        Term::Attribute(i) => format!(
            "per unit of {}{}",
            spec.attributes.get(*i).map_or("", |a| a.name.as_str()),
            of_alternative.unwrap_or_default()
        ),
        Term::Characteristic(i) => format!(
            "per unit of {}{}",
            spec.characteristics.get(*i).map_or("", |c| c.name.as_str()),
            of_alternative.unwrap_or_default()
        ),
        Term::Family(_) => String::new(),
    }
}
