//! Validation: observed against predicted shares (overall and by segment),
//! hit rate, mean probability of the chosen alternative, and a hold-out fit.

use std::sync::Arc;

use serde::Serialize;

use crate::data::{Observations, Table};
use crate::design::Design;
use crate::error::{Error, Result};
use crate::estimate::{self, Fit, Step};
use crate::model::enumerate::{Baseline, Enumeration};
use crate::model::Family;
use crate::rng::Rng;
use crate::spec::{Holdout, Spec};

#[derive(Clone, Debug, Serialize)]
pub struct SegmentShareRow {
    pub segment: String,
    pub alternative: String,
    pub situations: usize,
    pub observed: f64,
    pub predicted: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct HoldoutReport {
    pub situations: usize,
    pub estimation_situations: usize,
    pub log_likelihood: f64,
    pub null_log_likelihood: f64,
    pub shares: Vec<estimate::ShareRow>,
}

#[derive(Clone, Debug, Serialize)]
pub struct Validation {
    pub hit_rate: f64,
    pub mean_chosen_probability: f64,
    pub holdout: Option<HoldoutReport>,
}

/// Weighted hit rate (the most probable alternative was chosen) and mean probability of the choice
/// (`baseline`, when given, holds the probabilities at `beta`).
pub fn hits(
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    baseline: Option<&Baseline>,
) -> (f64, f64) {
    let obs = &d.obs;
    let sums = Enumeration::new(family, d, beta)
        .baseline(baseline)
        .fold(2, |acc, s| {
            let (i, p) = (s.i, s.p0);
            let c = obs.chosen[i] as usize;
            let best = (0..p.len()).fold(0, |b, j| if p[j] > p[b] { j } else { b });
            acc[0] += obs.weight[i] * (best == c) as u8 as f64;
            acc[1] += obs.weight[i] * p[c];
        });
    let tw = d.total_weight();
    (sums[0] / tw, sums[1] / tw)
}

/// Observed and predicted shares by the labels of a situation-level column.
pub fn by_segment(
    spec: &Spec,
    fit: &Fit,
    table: &Table,
    column: &str,
) -> Result<Vec<SegmentShareRow>> {
    let (index, order) = table.segments(column, "--by segment column")?;
    let d = &fit.design;
    let j = d.alternatives();
    let p = &fit.baseline().probabilities;
    let s_count = order.len();
    let mut w = vec![0.0; s_count];
    let mut n = vec![0usize; s_count];
    let mut obs = vec![0.0; s_count * j];
    let mut pred = vec![0.0; s_count * j];
    for (i, &s) in index.iter().enumerate().take(d.situations()) {
        let s = s as usize;
        let wi = d.obs.weight[i];
        w[s] += wi;
        n[s] += 1;
        obs[s * j + d.obs.chosen[i] as usize] += wi;
        for a in 0..j {
            pred[s * j + a] += wi * p[i * j + a];
        }
    }
    let mut out = Vec::new();
    for (s, seg) in order.iter().enumerate() {
        for (a, alt) in spec.alternatives.iter().enumerate() {
            out.push(SegmentShareRow {
                segment: seg.clone(),
                alternative: alt.name.clone(),
                situations: n[s],
                observed: obs[s * j + a] / w[s],
                predicted: pred[s * j + a] / w[s],
            });
        }
    }
    Ok(out)
}

/// Which situations are held out, from the spec's `[validation]`.
pub fn holdout_mask(spec: &Spec, obs: &Observations, table: &Table) -> Result<Option<Vec<bool>>> {
    match &spec.holdout {
        None => Ok(None),
        Some(Holdout::Fraction { fraction, seed }) => {
            let mut rng = Rng::new(*seed);
            Ok(Some(
                (0..obs.situations)
                    .map(|_| rng.uniform() < *fraction)
                    .collect(),
            ))
        }
        Some(Holdout::Column(c)) => {
            let v = table.numbers(c, "[validation].holdout")?;
            if let Some(r) = v.iter().position(|x| *x != 0.0 && *x != 1.0) {
                return Err(Error::data(
                    &table.file,
                    format!(
                        "column `{c}` ([validation].holdout), row {}: must be 0 or 1",
                        r + 1
                    ),
                ));
            }
            Ok(Some(v.iter().map(|x| *x == 1.0).collect()))
        }
    }
}

/// Fits on the situations not held out and scores the held-out ones.
pub fn holdout(spec: &Spec, obs: &Observations, mask: &[bool]) -> Result<HoldoutReport> {
    let held = mask.iter().filter(|m| **m).count();
    if held == 0 || held == obs.situations {
        return Err(Error::Usage(
            "[validation].holdout leaves no situations on one side of the split".into(),
        ));
    }
    let train = obs.subset(&mask.iter().map(|m| !m).collect::<Vec<_>>());
    let test = Arc::new(obs.subset(mask));
    let quiet = |_s: Step| {};
    let fit = estimate::fit(spec, Arc::new(train), &quiet)?;
    let d = Design::build(spec, test.clone());
    let e = fit.family.evaluate(&d, &fit.beta, false, false);
    Ok(HoldoutReport {
        situations: held,
        estimation_situations: obs.situations - held,
        log_likelihood: e.ll,
        null_log_likelihood: estimate::null_log_likelihood(&test),
        shares: estimate::shares(spec, &d, &*fit.family, &fit.beta),
    })
}
