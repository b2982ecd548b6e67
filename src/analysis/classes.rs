//! Latent classes in the analyses: each class's size (with its
//! delta-method error, from the family's derived figures), its predicted
//! choice shares at the base and after a what-if (the classes' logits
//! weighted by each situation's class shares), and the class shares by the
//! values of a membership column, prior (the membership model's) and
//! posterior (given each decision maker's choices). JSON `classes`.

use serde::Serialize;

use crate::design::on_pieces;
use crate::estimate::Fit;
use crate::model::{Posteriors, WhatIf, SHARES};
use crate::spec::Spec;

/// One class: its size and predicted shares.
#[derive(Clone, Debug, Serialize)]
pub struct ClassRow {
    /// "class1", "class2", ...
    pub class: String,
    /// The average over decision makers of their membership probabilities.
    pub share: f64,
    pub share_std_error: f64,
    /// The class's predicted choice shares (weighted by the situations'
    /// membership probabilities), in alternative order.
    pub predicted: Vec<f64>,
}

/// The class shares among the decision makers with one value (or a band of
/// values) of a membership column.
#[derive(Clone, Debug, Serialize)]
pub struct ColumnBand {
    pub label: String,
    pub decision_makers: usize,
    /// Average membership probabilities (the membership model).
    pub prior: Vec<f64>,
    /// Average posterior probabilities (given the decision makers' choices).
    pub posterior: Vec<f64>,
}

/// The latent class part of an analysis.
#[derive(Clone, Debug, Serialize)]
pub struct Classes {
    pub rows: Vec<ClassRow>,
    /// "panel" (each decision maker one class in all their situations) or "cross-section".
    pub structure: String,
    /// Per membership column, the class shares by its values.
    pub by_column: Vec<(String, Vec<ColumnBand>)>,
}

/// The latent class analysis of a fit (`None`: the family has no classes).
pub fn classes(spec: &Spec, fit: &Fit, derived: &[super::DerivedRow]) -> Option<Classes> {
    let post = fit.family.posterior_classes(&fit.design, &fit.beta)?;
    let prior = fit.family.prior_classes(&fit.design, &fit.beta)?;
    if post.classes < 2 {
        return None;
    }
    let predicted = by_class(fit, None)?;
    let rows = derived
        .iter()
        .filter(|r| r.group == SHARES)
        .zip(predicted.base)
        .map(|(r, predicted)| ClassRow {
            class: r.name.clone(),
            share: r.value,
            share_std_error: r.std_error,
            predicted,
        })
        .collect();
    let columns = spec.characteristics.len();
    let by_column = spec
        .family_columns
        .iter()
        .enumerate()
        .map(|(m, (name, _))| (name.clone(), by_column(fit, (&prior, &post), columns + m)))
        .collect();
    Some(Classes {
        rows,
        structure: if spec.data.group.is_some() {
            "panel"
        } else {
            "cross-section"
        }
        .into(),
        by_column,
    })
}

/// Each class's predicted shares at the base and after a what-if.
#[derive(Clone, Debug, Default)]
pub struct ByClass {
    /// Each class's weighted share of the situations.
    pub size: Vec<f64>,
    /// `[class][alternative]` at the base.
    pub base: Vec<Vec<f64>>,
    /// `[class][alternative]` after the what-if (its alternatives).
    pub after: Vec<Vec<f64>>,
}

/// The classes' predicted shares, each class's logit weighted by every
/// situation's membership probability of it (`None`: no classes).
pub fn by_class(fit: &Fit, what_if: Option<&dyn WhatIf>) -> Option<ByClass> {
    by_class_at(fit, &fit.beta, what_if)
}

/// `by_class` at parameters `beta` (calibrated constants, a parameter draw).
pub fn by_class_at(fit: &Fit, beta: &[f64], what_if: Option<&dyn WhatIf>) -> Option<ByClass> {
    let d = &fit.design;
    if !fit.family.abilities().latent_classes {
        return None;
    }
    let points = fit.family.mixture(d)?;
    let c = points.count();
    let (j, k) = (d.alternatives(), beta.len());
    let m = what_if.map_or(j, |w| w.alternatives(j));
    let after_family = what_if.and_then(|w| w.family()).unwrap_or(&*fit.family);
    let width = c * (1 + j + m);
    let parts = on_pieces(d.situations(), |r| {
        let mut acc = vec![0.0; width];
        let (mut coefs, mut pi) = (vec![0.0; c * k], vec![0.0; c]);
        let (mut v0, mut p0, mut v1, mut p1) =
            (vec![0.0; j], vec![0.0; j], vec![0.0; m], vec![0.0; m]);
        for i in r {
            points.fill(beta, i, &mut coefs);
            points.weights(beta, i, &mut pi);
            let w = d.obs.weight[i];
            for (cc, b) in coefs.chunks(k).enumerate() {
                let f = w * pi[cc];
                d.utilities(b, i, &mut v0);
                fit.family.probabilities(b, &v0, &mut p0);
                acc[cc] += f;
                let base = c + cc * j;
                acc[base..base + j]
                    .iter_mut()
                    .zip(&p0)
                    .for_each(|(a, p)| *a += f * p);
                let after = c + c * j + cc * m;
                match what_if {
                    None => acc[after..after + j]
                        .iter_mut()
                        .zip(&p0)
                        .for_each(|(a, p)| *a += f * p),
                    Some(wi) => {
                        wi.utilities(d, b, i, &v0, &mut v1);
                        if v1.iter().all(|x| !x.is_finite()) {
                            continue;
                        }
                        after_family.probabilities(b, &v1, &mut p1);
                        acc[after..after + m]
                            .iter_mut()
                            .zip(&p1)
                            .for_each(|(a, p)| *a += f * p);
                    }
                }
            }
        }
        acc
    });
    let mut sums = vec![0.0; width];
    for p in parts {
        sums.iter_mut().zip(&p).for_each(|(a, b)| *a += b);
    }
    let total: f64 = sums[..c].iter().sum();
    let per = |at: usize, n: usize, cc: usize| -> Vec<f64> {
        let s = sums[cc].max(f64::MIN_POSITIVE);
        sums[at + cc * n..at + (cc + 1) * n]
            .iter()
            .map(|x| x / s)
            .collect()
    };
    Some(ByClass {
        size: sums[..c]
            .iter()
            .map(|s| s / total.max(f64::MIN_POSITIVE))
            .collect(),
        base: (0..c).map(|cc| per(c, j, cc)).collect(),
        after: (0..c).map(|cc| per(c + c * j, m, cc)).collect(),
    })
}

/// Distinct values of a column up to this many are shown one by one; more
/// are cut into quintiles.
const DISTINCT: usize = 8;

/// The class shares by the values of membership column `col` (its index in
/// the observations' per-situation columns): prior and posterior averages
/// over the decision makers with each value, or in each fifth of them,
/// from the fit's prior (per situation) and posterior (per decision maker)
/// class probabilities.
pub fn by_column(
    fit: &Fit,
    (prior, post): (&Posteriors, &Posteriors),
    col: usize,
) -> Vec<ColumnBand> {
    let d = &fit.design;
    let c = post.classes;
    let mut units: Vec<(f64, usize)> = post
        .first
        .iter()
        .enumerate()
        .map(|(n, &i)| (d.obs.characteristics[col][i], n))
        .collect();
    units.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut distinct: Vec<f64> = units.iter().map(|u| u.0).collect();
    distinct.dedup();
    let bands: Vec<(String, Vec<usize>)> = if distinct.len() <= DISTINCT {
        distinct
            .iter()
            .map(|v| {
                let who = units.iter().filter(|u| u.0 == *v).map(|u| u.1).collect();
                (format!("{v}"), who)
            })
            .collect()
    } else {
        let n = units.len();
        (0..5)
            .map(|q| {
                let part = &units[q * n / 5..(q + 1) * n / 5];
                let (lo, hi) = (
                    part.first().map_or(0.0, |u| u.0),
                    part.last().map_or(0.0, |u| u.0),
                );
                (format!("{lo} … {hi}"), part.iter().map(|u| u.1).collect())
            })
            .collect()
    };
    bands
        .into_iter()
        .filter(|(_, who)| !who.is_empty())
        .map(|(label, who)| {
            let mean = |probs: &[f64], at: &dyn Fn(usize) -> usize| -> Vec<f64> {
                let mut s = vec![0.0; c];
                for &n in &who {
                    let r = at(n);
                    s.iter_mut()
                        .zip(&probs[r * c..(r + 1) * c])
                        .for_each(|(a, b)| *a += b);
                }
                s.iter().map(|x| x / who.len() as f64).collect()
            };
            ColumnBand {
                label,
                decision_makers: who.len(),
                prior: mean(&prior.probabilities, &|n| post.first[n]),
                posterior: mean(&post.probabilities, &|n| n),
            }
        })
        .collect()
}
