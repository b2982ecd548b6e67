//! Diversion: where an alternative's demand goes when it is withdrawn (by
//! re-simulating every situation without it), and attribute (price)
//! diversion ratios -(dQ_j/dx_k) / (dQ_k/dx_k).

use serde::Serialize;

use super::sensitivity::Sens;
use super::simulate::{shares, shares_many, shares_with, EditFn};
use crate::design::Design;
use crate::model::{Baseline, Family};

#[derive(Clone, Debug, Serialize)]
pub struct DiversionRow {
    pub removed: String,
    pub to: String,
    /// Share of the removed alternative's predicted demand that moves to `to`.
    pub share: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct PriceDiversionRow {
    pub attribute: String,
    pub changed: String,
    pub to: String,
    pub ratio: f64,
}

/// Removal diversion for every alternative with positive predicted share.
/// Demand of situations where the removed alternative was the only one is lost
/// (it appears as the shortfall of the row sum from 1).
/// Under each family's own model: the withdrawn alternative's utility becomes -inf.
pub fn removal(
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    baseline: Option<&Baseline>,
    (names, focus): (&[String], &[usize]),
) -> Vec<DiversionRow> {
    // With the cached base, every withdrawal in one pass over it.
    let (base, withdrawn) = match baseline {
        Some(b) => {
            let edits: Vec<Box<EditFn>> = focus
                .iter()
                .map(|&k| {
                    Box::new(move |_: usize, _: &[f64], v: &mut [f64]| v[k] = f64::NEG_INFINITY)
                        as Box<EditFn>
                })
                .collect();
            let refs: Vec<&EditFn> = edits.iter().map(|e| &**e).collect();
            let (base, after) = shares_many(family, d, beta, b, &refs);
            (base, Some(after))
        }
        None => (shares(family, d, beta), None),
    };
    let mut out = Vec::new();
    for (kf, &k) in focus.iter().enumerate() {
        if base[k] <= 0.0 {
            continue;
        }
        let after = match &withdrawn {
            Some(w) => w[kf].clone(),
            None => shares_with(family, d, beta, baseline, |_, _, v| {
                v[k] = f64::NEG_INFINITY
            }),
        };
        for &to in focus {
            if to != k {
                out.push(DiversionRow {
                    removed: names[k].clone(),
                    to: names[to].clone(),
                    share: (after[to] - base[to]) / base[k],
                });
            }
        }
    }
    out
}

/// Attribute diversion ratios for attribute `a` from the marginal effects in `sens`.
pub fn price(
    sens: &Sens,
    a: usize,
    attribute: &str,
    present: &[bool],
    (names, focus): (&[String], &[usize]),
) -> Vec<PriceDiversionRow> {
    let j = sens.alternatives;
    let mut out = Vec::new();
    for (kf, &k) in focus.iter().enumerate() {
        if !present[k] {
            continue;
        }
        let own = sens.attr_me[(a * j + kf) * j + kf];
        if own == 0.0 {
            continue;
        }
        for (tf, &to) in focus.iter().enumerate() {
            if to != k {
                out.push(PriceDiversionRow {
                    attribute: attribute.to_string(),
                    changed: names[k].clone(),
                    to: names[to].clone(),
                    ratio: -sens.attr_me[(a * j + kf) * j + tf] / own,
                });
            }
        }
    }
    out
}
