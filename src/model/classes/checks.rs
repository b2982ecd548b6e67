//! What the latent class family checks of its data and fit, and its lines
//! for the reports: membership columns constant within a decision maker, a
//! panel's weight too, enough decision makers for the classes' parameters;
//! a class that emptied; the model's structure.

use super::LatentClass;
use crate::data::Observations;
use crate::design::Design;
use crate::model::FamilyWarning;
use crate::spec::Spec;

/// Decision makers each situation belongs to, and how many.
fn units_of(obs: &Observations) -> (Vec<u32>, usize) {
    match &obs.group {
        Some(g) => (g.clone(), obs.groups),
        None => ((0..obs.situations as u32).collect(), obs.situations),
    }
}

pub(super) fn observations(
    lc: &LatentClass,
    spec: &Spec,
    obs: &Observations,
) -> Result<(), String> {
    let (unit_of, units) = units_of(obs);
    let row = |i: usize| obs.first_row.get(i).copied().unwrap_or(i + 1);
    let mut first = vec![usize::MAX; units];
    for (i, &u) in unit_of.iter().enumerate() {
        let f = &mut first[u as usize];
        if *f == usize::MAX {
            *f = i;
            continue;
        }
        for (m, &col) in lc.lay.columns.iter().enumerate() {
            let x = &obs.characteristics[col];
            if x[i] != x[*f] {
                return Err(format!(
                    "[model].membership: column `{}` varies within a decision maker: rows {} and {} of the data have the same [data].group but values {} and {}; a membership column describes the decision maker, so it must be the same in all of their situations",
                    lc.settings.membership[m],
                    row(*f),
                    row(i),
                    x[*f],
                    x[i]
                ));
            }
        }
        if let Some(col) = &spec.data.weight {
            if obs.weight[i] != obs.weight[*f] {
                return Err(format!(
                    "[data].weight `{col}`: the weight changes within a decision maker (rows {} and {} of the data); a latent class model weighs each decision maker once, so the weight must be the same in all of their situations",
                    row(*f),
                    row(i)
                ));
            }
        }
    }
    identifiable(lc, spec, units)
}

/// Decision makers needed per estimated parameter (common practice: a
/// mixture's classes are identified only by enough decision makers in each).
const PER_PARAMETER: usize = 5;

/// Refuses more classes than the decision makers can identify.
fn identifiable(lc: &LatentClass, spec: &Spec, units: usize) -> Result<(), String> {
    let k = lc.lay.classes;
    if k == 1 {
        return Ok(());
    }
    let free = spec.parameters.iter().filter(|p| p.fixed.is_none()).count();
    if units < PER_PARAMETER * free {
        return Err(format!(
            "[model].classes: {k} classes have {free} parameters to estimate but the data have only {units} decision makers; each class needs enough decision makers of its own to identify its copy of the utility (here at least {PER_PARAMETER} per parameter overall, {} in all): fit fewer classes, make some parameters common to all classes ([model].common), or collect more data",
            PER_PARAMETER * free
        ));
    }
    Ok(())
}

pub(super) fn warnings(
    lc: &LatentClass,
    spec: &Spec,
    d: &Design,
    beta: &[f64],
) -> Vec<FamilyWarning> {
    if lc.lay.classes == 1 {
        return Vec::new();
    }
    let units = lc.units(d).units.max(1) as f64;
    let shares = super::order::sample_shares(lc, d, beta);
    let mut out = unbounded(lc, spec, d, beta);
    for (c, &s) in shares.iter().enumerate() {
        if s * units < 1.0 {
            let names: Vec<String> = lc.lay.index[c]
                .iter()
                .map(|&p| spec.parameters[p].name.clone())
                .collect();
            out.push(FamilyWarning {
                code: "class_empty",
                parameters: names,
                message: format!(
                    "class {} emptied during the search: its share is {:.2e}, less than one decision maker, so its parameters are not identified (their values and errors mean nothing); the fit was kept as found: fit {} classes instead",
                    c + 1,
                    s,
                    lc.lay.classes - 1
                ),
            });
        }
    }
    out
}

pub(super) fn structure(lc: &LatentClass, spec: &Spec) -> Vec<String> {
    let k = lc.lay.classes;
    let mut lines = vec![format!(
        "{k} latent class{}{}",
        if k == 1 { " (the logit)" } else { "es" },
        match (k, lc.settings.membership.is_empty()) {
            (1, _) => String::new(),
            (_, true) => ": shares constant across decision makers".to_string(),
            (_, false) => format!(
                ": shares depend on {} (class 1 the reference)",
                lc.settings.membership.join(", ")
            ),
        }
    )];
    if k > 1 {
        lines.push(match &spec.data.group {
            Some(g) => format!(
                "a panel: each decision maker ([data].group `{g}`) belongs to one class in all of their situations"
            ),
            None => "a cross-section: each situation is its own decision maker".to_string(),
        });
        if !lc.settings.common.is_empty() {
            lines.push(format!(
                "common to all classes: {}",
                lc.settings.common.join(", ")
            ));
        }
    }
    lines
}

/// A class whose coefficient moves utility by more than this many of its
/// variable's standard deviations predicts some choices all but perfectly.
pub(super) const UNBOUNDED: f64 = 40.0;

/// The first class with a coefficient past `UNBOUNDED` (in its variable's
/// standard deviations), with that parameter and its size.
pub(super) fn runs_off(
    lc: &LatentClass,
    beta: &[f64],
    scales: &[f64],
) -> Option<(usize, usize, f64)> {
    (0..lc.lay.classes).find_map(|c| {
        lc.lay.index[c]
            .iter()
            .map(|&p| (c, p, (beta[p] * scales[p]).abs()))
            .max_by(|a, b| a.2.total_cmp(&b.2))
            .filter(|w| w.2 > UNBOUNDED)
    })
}

/// Warns of classes whose coefficients grew without bound: a maximum at
/// infinity, where the class takes a few situations it predicts perfectly.
fn unbounded(lc: &LatentClass, spec: &Spec, d: &Design, beta: &[f64]) -> Vec<FamilyWarning> {
    let scales = crate::model::hessian::scales(lc, d);
    let Some((c, p, size)) = runs_off(lc, beta, &scales) else {
        return Vec::new();
    };
    vec![FamilyWarning {
        code: "class_unbounded",
        parameters: lc.lay.index[c]
            .iter()
            .map(|&q| spec.parameters[q].name.clone())
            .collect(),
        message: format!(
            "class {}'s coefficients grew without bound (`{}` = {:.4e}, {size:.0} standard deviations of its variable in utility): the class predicts some choices all but perfectly, a maximum at infinity, so its estimates and errors mean nothing; the fit was kept as found: fit fewer classes, make some parameters common to all classes ([model].common), or give each decision maker several situations ([data].group)",
            c + 1,
            spec.parameters[p].name,
            beta[p]
        ),
    }]
}
