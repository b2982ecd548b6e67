//! One typed walk of a fit's analysis, read by the text report, the HTML
//! report and the workbench: elasticity, marginal-effect and diversion
//! matrices with their axes named, value ratios with their units, random
//! coefficients, latent classes side by side, the family's derived figures
//! grouped, validation and tests;
//! and the estimates grouped by term (`estimates`). Pure data with plain-text
//! words: no markup, no colour, no statistic computed here.

mod build;
mod classes;
mod estimates;
mod matrix;
mod tastes;

pub use classes::{
    count as class_count, Across, Block, ByColumn, Class, Estimated, LatentClasses, Row,
};
pub use estimates::{estimates, Estimate, Estimates, Term, MEAN_OF_LOG};
pub use matrix::{Axis, Cell, Holds, Matrix, Measure};
pub use tastes::{Correlated, Space};

use crate::analysis::random::{Figure, RandomRow};
use crate::analysis::{Analysis, SegmentShareRow, Validation};
use crate::estimate::Fit;
use crate::spec::Spec;
use build::{
    derived, labelled, price_diversion, random, ratio, shares, tests, variables, withdrawal,
};

/// Where a variable's value lives.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Role {
    /// An attribute of each alternative (rows: the alternative whose value changes).
    Attribute,
    /// A characteristic of the decision maker (one row: the variable).
    Characteristic,
}

/// One variable's figures.
#[derive(Clone, Debug, PartialEq)]
pub struct Variable {
    pub name: String,
    pub role: Role,
    /// A 0/1 variable: `figures` are the changes in shares from 0 to 1 and
    /// there is no arc elasticity or marginal effect.
    pub flag: bool,
    /// Point elasticities ± s.e. (a flag: the switch from 0 to 1 ± s.e.).
    pub figures: Matrix,
    /// Arc elasticities (none for a flag).
    pub arc: Option<Matrix>,
    /// Average marginal effects ± s.e., where the analysis gives them.
    pub marginal: Option<Matrix>,
}

/// An own elasticity, point and arc.
#[derive(Clone, Debug, PartialEq)]
pub struct Own {
    pub variable: String,
    pub alternative: String,
    pub point: f64,
    pub arc: f64,
}

/// A labelled figure (a derived figure, an effect on the expected category).
#[derive(Clone, Debug, PartialEq)]
pub struct Labelled {
    pub label: String,
    pub figure: Figure,
}

/// Figures the family derives from its parameters, one table per group.
#[derive(Clone, Debug, PartialEq)]
pub struct Group {
    pub name: String,
    pub rows: Vec<Labelled>,
}

/// A Krinsky-Robb interval and the draws it came from.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Simulated {
    pub low: f64,
    pub high: f64,
    pub draws: usize,
    pub seed: u64,
}

/// A value ratio (willingness to pay) with its unit and what it is for.
#[derive(Clone, Debug)]
pub struct Ratio {
    pub name: String,
    pub value: Figure,
    /// The unit the spec gives (`[[ratio]].unit`).
    pub unit: Option<String>,
    /// "one unit more", "60 units less".
    pub per: String,
    pub numerator: String,
    pub denominator: String,
    /// The 95% delta-method interval.
    pub delta: (f64, f64),
    /// The 95% Krinsky-Robb interval (none without draws).
    pub krinsky_robb: Option<Simulated>,
    /// When a term varies across decision makers: the ratio's distribution
    /// (`value` is then its median).
    pub distribution: Option<crate::analysis::ratios::RatioDistribution>,
    /// What the ratio is, when that needs saying (a value over the price of
    /// a model in willingness-to-pay space).
    pub note: Option<String>,
}

impl Ratio {
    /// "one unit more of `time` against `cost`".
    pub fn for_what(&self) -> String {
        format!(
            "{} of `{}` against `{}`",
            self.per, self.numerator, self.denominator
        )
    }
}

/// A random coefficient's implied distribution and what its location is.
#[derive(Clone, Debug)]
pub struct Random {
    pub row: RandomRow,
    /// "mean of log" for a (negative-)lognormal coefficient, else "location".
    pub location_label: &'static str,
    /// In willingness-to-pay space, what the coefficient is: "the price
    /// scale" or "a value in cost per unit of time".
    pub reads: Option<String>,
}

/// What a test is beyond its statistic.
#[derive(Clone, Debug, PartialEq)]
pub enum TestKind {
    /// A Wald test (the family's own reduction, the spec's restrictions).
    Wald,
    /// Ordered families: likelihood ratio against the unordered logit (a guide).
    SingleIndex {
        unordered_log_likelihood: f64,
        note: String,
    },
    /// Hausman-McFadden: the alternative dropped and the coefficients compared.
    Iia {
        dropped: String,
        compared: Vec<String>,
        note: Option<String>,
    },
}

/// A test with its statistic, degrees of freedom and p-value.
#[derive(Clone, Debug, PartialEq)]
pub struct Test {
    pub name: String,
    pub statistic: f64,
    pub df: usize,
    pub p_value: f64,
    pub kind: TestKind,
}

/// The analysis walked once.
#[derive(Clone, Debug)]
pub struct Walk {
    /// The alternatives (or ordered categories) in spec order: every matrix's columns.
    pub alternatives: Vec<String>,
    /// The change of the arc elasticities, as a fraction (0.10 = +10%).
    pub arc_change: f64,
    /// Each variable with figures, in spec order: attributes, then characteristics.
    pub variables: Vec<Variable>,
    /// Own elasticities (point and arc), in the analysis's order.
    pub own: Vec<Own>,
    /// Ordered families: each characteristic's effect on the expected category.
    pub expected_category: Vec<Labelled>,
    /// Diversion on withdrawal.
    pub withdrawal: Option<Matrix>,
    /// Diversion ratios for a change in an attribute (named by the rows' axis).
    pub price_diversion: Option<Matrix>,
    pub ratios: Vec<Ratio>,
    pub random: Vec<Random>,
    /// Random coefficients that move together (none when independent).
    pub correlated: Option<Correlated>,
    /// Latent classes side by side (none without classes).
    pub classes: Option<LatentClasses>,
    pub derived: Vec<Group>,
    pub validation: Validation,
    pub segments: Vec<SegmentShareRow>,
    /// Tests in the order reported: single index, the family's, Wald, IIA.
    pub tests: Vec<Test>,
    pub warnings: Vec<String>,
}

impl Walk {
    pub fn new(spec: &Spec, fit: &Fit, a: &Analysis) -> Walk {
        // A model with many alternatives: the tables cover the top ones.
        let names = a.top.clone().unwrap_or_else(|| spec.alternative_names());
        Walk {
            variables: variables(spec, a, &names),
            own: a
                .elasticities
                .iter()
                .filter(|e| e.changed.as_deref() == Some(e.affected.as_str()))
                .map(|e| Own {
                    variable: e.variable.clone(),
                    alternative: e.affected.clone(),
                    point: e.value,
                    arc: e.arc,
                })
                .collect(),
            expected_category: a
                .expected_category
                .iter()
                .map(|e| labelled(&e.variable, e.value, e.std_error))
                .collect(),
            withdrawal: withdrawal(a, &names),
            price_diversion: price_diversion(a, &names),
            ratios: a.ratios.iter().map(ratio).collect(),
            random: random(spec, fit, a),
            correlated: tastes::correlated(fit, a.correlations.as_ref()),
            classes: a.classes.as_ref().map(|c| LatentClasses::of(spec, fit, c)),
            derived: derived(a),
            validation: a.validation.clone(),
            segments: a.segments.clone(),
            tests: tests(a),
            warnings: a.warnings.clone(),
            arc_change: a.arc_change,
            alternatives: names,
        }
    }

    /// The elastic (not 0/1) characteristics' elasticities in one matrix.
    pub fn characteristic_elasticities(&self) -> Option<Matrix> {
        Matrix::stack(
            Measure::PointElasticity,
            Holds::Variable,
            &self.alternatives,
            self.elastic_characteristics()
                .map(|v| (&v.figures, String::new())),
        )
    }

    /// The same characteristics' average marginal effects in one matrix
    /// (cells missing where the analysis gives none).
    pub fn characteristic_marginal_effects(&self) -> Option<Matrix> {
        let vars: Vec<&Variable> = self.elastic_characteristics().collect();
        if vars.is_empty() {
            return None;
        }
        let n = self.alternatives.len();
        let cells = vars
            .iter()
            .flat_map(|v| {
                (0..n).map(move |c| v.marginal.as_ref().map_or(Cell::Missing, |m| m.cell(0, c)))
            })
            .collect();
        Some(Matrix {
            measure: Measure::MarginalEffect,
            rows: Axis {
                holds: Holds::Variable,
                labels: vars.iter().map(|v| v.name.clone()).collect(),
            },
            columns: shares(&self.alternatives),
            cells,
        })
    }

    /// Every 0/1 variable's switch in one matrix ("promo of own_label" rows).
    pub fn flags(&self) -> Option<Matrix> {
        Matrix::stack(
            Measure::FlagSwitch,
            Holds::Flag,
            &self.alternatives,
            self.variables.iter().filter(|v| v.flag).map(|v| {
                let prefix = match v.role {
                    Role::Attribute => v.name.clone(),
                    Role::Characteristic => String::new(),
                };
                (&v.figures, prefix)
            }),
        )
    }

    fn elastic_characteristics(&self) -> impl Iterator<Item = &Variable> {
        self.variables
            .iter()
            .filter(|v| v.role == Role::Characteristic && !v.flag)
    }
}
