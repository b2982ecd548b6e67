//! Alternatives grouped by a column of their table (layout "tables";
//! `--by-alternative district`): observed and predicted shares of each group,
//! and diversion between groups when every alternative of one is withdrawn.

use serde::Serialize;

use super::simulate::{shares_many, EditFn};
use crate::data::Tables;
use crate::error::{Error, Result};
use crate::estimate::Fit;

/// The groups of alternatives by one column (JSON `by_alternative`).
#[derive(Clone, Debug, Serialize)]
pub struct Grouped {
    pub column: String,
    pub groups: Vec<GroupRow>,
    /// `{removed, to, share}`: the share of the removed group's predicted
    /// demand that moves to `to` when all of its alternatives are withdrawn.
    pub diversion: Vec<super::DiversionRow>,
}

#[derive(Clone, Debug, Serialize)]
pub struct GroupRow {
    pub group: String,
    pub alternatives: usize,
    pub observed: f64,
    pub predicted: f64,
}

/// Each alternative's group by `column` of the table of alternatives, and
/// the groups' labels (in order of first appearance); refused naming the
/// column when the fit is not over a table of alternatives.
pub fn groups_of(fit: &Fit, column: &str) -> Result<(Vec<usize>, Vec<String>)> {
    let Some(t) = fit.design.obs.tables.as_deref() else {
        return Err(Error::Usage(format!(
            "--by-alternative {column}: groups alternatives by a column of their table, which needs [data].layout = \"tables\""
        )));
    };
    let labels = labels(t, column)?;
    let mut names: Vec<String> = Vec::new();
    let mut of = Vec::with_capacity(labels.len());
    for l in labels {
        let g = match names.iter().position(|n| *n == l) {
            Some(g) => g,
            None => {
                names.push(l);
                names.len() - 1
            }
        };
        of.push(g);
    }
    if names.len() > 1_000 {
        return Err(Error::Usage(format!(
            "--by-alternative {column}: {} groups; a column with at most 1,000 values groups alternatives",
            names.len()
        )));
    }
    Ok((of, names))
}

fn labels(t: &Tables, column: &str) -> Result<Vec<String>> {
    if !t.table.has(column) {
        return Err(Error::Usage(format!(
            "--by-alternative {column}: not a column of the table of alternatives ({}; it has {})",
            t.table.file.display(),
            t.table.names.join(", ")
        )));
    }
    t.table.keys(column, "--by-alternative")
}

/// Shares by group and diversion between groups at the estimates.
pub fn by_alternative(fit: &Fit, column: &str) -> Result<Grouped> {
    let (of, names) = groups_of(fit, column)?;
    let ng = names.len();
    let mut groups: Vec<GroupRow> = names
        .iter()
        .map(|g| GroupRow {
            group: g.clone(),
            alternatives: 0,
            observed: 0.0,
            predicted: 0.0,
        })
        .collect();
    for (k, r) in fit.shares.iter().enumerate() {
        let g = &mut groups[of[k]];
        g.alternatives += 1;
        g.observed += r.observed;
        g.predicted += r.predicted;
    }
    let d = &fit.design;
    let edits: Vec<Box<EditFn>> = (0..ng)
        .map(|g| {
            let of = &of;
            Box::new(move |_: usize, _: &[f64], v: &mut [f64]| {
                for (x, &h) in v.iter_mut().zip(of) {
                    if h == g {
                        *x = f64::NEG_INFINITY;
                    }
                }
            }) as Box<EditFn>
        })
        .collect();
    let refs: Vec<&EditFn> = edits.iter().map(|e| &**e).collect();
    let (base, after) = shares_many(&*fit.family, d, &fit.beta, fit.baseline(), &refs);
    let sum = |s: &[f64], g: usize| -> f64 {
        s.iter()
            .zip(&of)
            .filter(|(_, &h)| h == g)
            .map(|(x, _)| x)
            .sum()
    };
    let mut diversion = Vec::new();
    for (g, a) in after.iter().enumerate() {
        let lost = sum(&base, g);
        if lost <= 0.0 {
            continue;
        }
        for (h, to) in names.iter().enumerate() {
            if h != g {
                diversion.push(super::DiversionRow {
                    removed: names[g].clone(),
                    to: to.clone(),
                    share: (sum(a, h) - sum(&base, h)) / lost,
                });
            }
        }
    }
    Ok(Grouped {
        column: column.to_string(),
        groups,
        diversion,
    })
}
