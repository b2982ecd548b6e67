//! The walk's latent classes: each class's share ± s.e. and predicted
//! shares, the utility's parameters side by side (one column per class, a
//! parameter every class shares as one figure across), the membership
//! model's parameters (each class against class 1), how the random starts
//! fared with the warnings they call for, and the class shares by the values
//! of each membership column. Figures as the fit and the analysis returned
//! them; nothing computed here.

use crate::analysis::classes::{Classes, ColumnBand};
use crate::analysis::random::Figure;
use crate::estimate::Fit;
use crate::model::Starts;
use crate::spec::{Spec, Term};

/// One class: its name, its share of the decision makers and its predicted
/// choice shares.
#[derive(Clone, Debug, PartialEq)]
pub struct Class {
    /// "class 1", "class 2", ...
    pub name: String,
    /// The average membership probability ± delta-method s.e.
    pub share: Figure,
    /// Predicted choice shares, in alternative order.
    pub predicted: Vec<f64>,
}

/// One parameter's figure in a class's column.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Estimated {
    /// Its position in the fit's parameters.
    pub parameter: usize,
    pub value: f64,
    /// The error the fit's inference uses (clustered with a panel).
    pub std_error: f64,
    pub fixed: bool,
}

/// A row's figures across the classes.
#[derive(Clone, Debug, PartialEq)]
pub enum Across {
    /// One parameter every class shares.
    Shared(Estimated),
    /// One figure per column (none where the class has no such parameter).
    PerClass(Vec<Option<Estimated>>),
}

/// One row of a side-by-side table.
#[derive(Clone, Debug, PartialEq)]
pub struct Row {
    /// The parameter's name without its class (`price`, not `price_class2`),
    /// or the membership row's ("constant", a column).
    pub name: String,
    pub across: Across,
}

/// The rows of one spec term.
#[derive(Clone, Debug, PartialEq)]
pub struct Block {
    pub term: String,
    pub rows: Vec<Row>,
}

/// The class shares by one membership column's values.
#[derive(Clone, Debug)]
pub struct ByColumn {
    pub column: String,
    pub bands: Vec<ColumnBand>,
}

/// A latent class model walked.
#[derive(Clone, Debug)]
pub struct LatentClasses {
    /// Each decision maker belongs to one class in all of their situations
    /// (else each situation is its own decision maker).
    pub panel: bool,
    /// Errors clustered by decision maker (else the Hessian's).
    pub robust: bool,
    pub classes: Vec<Class>,
    /// The utility's parameters, grouped by spec term.
    pub tastes: Vec<Block>,
    /// The membership model: "constant", then each column; its columns are
    /// classes 2..K, each against class 1.
    pub membership: Vec<Row>,
    pub starts: Option<Starts>,
    /// What the starts and the classes call for: few starts at the best,
    /// starts that ran off, the family's class warnings.
    pub warnings: Vec<String>,
    pub by_column: Vec<ByColumn>,
}

/// The number of latent classes a spec's parameters are copied into (0 for
/// a model without copies).
pub fn count(spec: &Spec) -> usize {
    spec.parameters.iter().map(|p| p.class).max().unwrap_or(0)
}

/// The figure of the parameter named `name`, with the fit's inference errors.
fn estimated(fit: &Fit, name: &str) -> Option<Estimated> {
    let k = fit.names.iter().position(|n| n == name)?;
    let row = fit.parameters.get(k)?;
    Some(Estimated {
        parameter: k,
        value: row.estimate,
        std_error: crate::report::shown_error(fit, row),
        fixed: row.fixed,
    })
}

/// `price_class1` → `price`.
fn base_name(name: &str) -> &str {
    name.strip_suffix("_class1").unwrap_or(name)
}

/// The utility's rows in parameter order, grouped by term.
fn tastes(spec: &Spec, fit: &Fit, k: usize) -> Vec<Block> {
    let mut blocks: Vec<Block> = Vec::new();
    for (p, q) in spec.parameters.iter().enumerate() {
        if q.class > 1 || matches!(q.term, Term::Family(_)) {
            continue;
        }
        let Some(row) = fit.parameters.get(p) else {
            continue;
        };
        let name = base_name(&q.name).to_string();
        let across = if q.class == 0 {
            match estimated(fit, &q.name) {
                Some(e) => Across::Shared(e),
                None => continue,
            }
        } else {
            Across::PerClass(
                (1..=k)
                    .map(|c| estimated(fit, &format!("{name}_class{c}")))
                    .collect(),
            )
        };
        let r = Row { name, across };
        match blocks.last_mut() {
            Some(b) if b.term == row.term => b.rows.push(r),
            _ => blocks.push(Block {
                term: row.term.clone(),
                rows: vec![r],
            }),
        }
    }
    blocks
}

/// The membership rows: the constant, then each membership column.
fn membership(spec: &Spec, fit: &Fit, k: usize) -> Vec<Row> {
    let row = |name: &str, suffix: &str| Row {
        name: name.to_string(),
        across: Across::PerClass(
            (2..=k)
                .map(|c| estimated(fit, &format!("member_class{c}{suffix}")))
                .collect(),
        ),
    };
    let mut rows = vec![row("constant", "")];
    rows.extend(
        spec.family_columns
            .iter()
            .map(|(col, _)| row(col, &format!("_{col}"))),
    );
    rows
}

/// The warnings the starts call for.
fn start_warnings(s: &Starts) -> Vec<String> {
    let mut out = Vec::new();
    if s.tried == 1 {
        out.push("only one start was run: nothing shows whether another would reach a higher log-likelihood; set [model].starts to 10 or more".into());
    } else if s.reached_best <= 1 {
        out.push(format!(
            "only one of the {} starts reached the best log-likelihood: a higher one may exist that no start found; fit again with more starts ([model].starts) or another seed",
            s.tried
        ));
    } else if s.reached_best * 4 < s.tried {
        out.push(format!(
            "only {} of the {} starts (fewer than a quarter) reached the best log-likelihood: the likelihood has several maxima here; fit again with more starts ([model].starts) or another seed",
            s.reached_best, s.tried
        ));
    }
    if s.ran_off > 0 {
        out.push(format!(
            "{} of the {} starts stopped when a class ran off towards a maximum at infinity (a coefficient growing without bound); they count only when no other start stayed inside",
            s.ran_off, s.tried
        ));
    }
    out
}

impl LatentClasses {
    /// The classes of a fit whose analysis has them.
    pub fn of(spec: &Spec, fit: &Fit, a: &Classes) -> LatentClasses {
        let k = a.rows.len();
        let starts = fit.stats.starts.clone();
        let mut warnings = starts.as_ref().map(start_warnings).unwrap_or_default();
        warnings.extend(
            fit.diagnostics
                .iter()
                .filter(|d| d.code.as_deref().is_some_and(|c| c.starts_with("class_")))
                .map(|d| d.message.clone()),
        );
        LatentClasses {
            panel: a.structure == "panel",
            robust: fit.stats.inference == "robust",
            classes: a
                .rows
                .iter()
                .enumerate()
                .map(|(c, r)| Class {
                    name: format!("class {}", c + 1),
                    share: Figure {
                        value: r.share,
                        std_error: r.share_std_error,
                    },
                    predicted: r.predicted.clone(),
                })
                .collect(),
            tastes: tastes(spec, fit, k),
            membership: membership(spec, fit, k),
            starts,
            warnings,
            by_column: a
                .by_column
                .iter()
                .map(|(column, bands)| ByColumn {
                    column: column.clone(),
                    bands: bands.clone(),
                })
                .collect(),
        }
    }

    /// Whether the decision makers are a panel, in words.
    pub fn structure_line(&self) -> &'static str {
        if self.panel {
            "a panel: each decision maker is in one class for all of their situations"
        } else {
            "a cross-section: each situation is its own decision maker, with a class of its own (no [data].group)"
        }
    }

    /// How the random starts fared, in one line.
    pub fn starts_line(&self) -> Option<String> {
        let s = self.starts.as_ref()?;
        Some(format!(
            "{} of {} random starts reached the best log-likelihood (within {} of it; seed {})",
            s.reached_best,
            s.tried,
            crate::report::num(s.tolerance, 0).trim(),
            s.seed
        ))
    }

    /// The class names of the membership columns (classes 2..K).
    pub fn against_first(&self) -> Vec<String> {
        self.classes
            .iter()
            .skip(1)
            .map(|c| c.name.clone())
            .collect()
    }
}
