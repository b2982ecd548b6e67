//! An `[[attribute]]` of a design file (its levels, a list or a table of
//! lists by alternative; the alternatives it enters) and the priors of
//! attributes and constants, each error naming the key.

use super::file::{name_ok, Attribute, Plan, Prior, RawAttribute, MAX_LEVELS};
use crate::error::Result;

/// The largest magnitude accepted for a level or a prior: far beyond any
/// real attribute, small enough that utilities stay finite.
pub const MAX_MAGNITUDE: f64 = 1e9;

/// A number within ±`MAX_MAGNITUDE`.
fn number(v: &toml::Value) -> Option<f64> {
    let x = match v {
        toml::Value::Integer(i) => *i as f64,
        toml::Value::Float(f) => *f,
        _ => return None,
    };
    (x.abs() <= MAX_MAGNITUDE).then_some(x)
}

/// A prior: a number (fixed) or `{ mean = .., sd = .. }` (normal).
pub(super) fn prior(plan: &Plan, key: &str, v: Option<&toml::Value>) -> Result<Prior> {
    let Some(v) = v else {
        return Ok(Prior { mean: 0.0, sd: 0.0 });
    };
    if let Some(mean) = number(v) {
        return Ok(Prior { mean, sd: 0.0 });
    }
    let wrong = || {
        plan.err(format!(
            "{key}: give a number (a fixed prior) or {{ mean = -0.3, sd = 0.1 }} (a normal prior), each within ±1e9"
        ))
    };
    let toml::Value::Table(t) = v else {
        return Err(wrong());
    };
    if let Some(other) = t.keys().find(|k| *k != "mean" && *k != "sd") {
        return Err(plan.err(format!(
            "{key}: unknown key `{other}` (a prior has `mean` and `sd`)"
        )));
    }
    let mean = t.get("mean").and_then(number).ok_or_else(wrong)?;
    let sd = t.get("sd").and_then(number).ok_or_else(wrong)?;
    if sd < 0.0 {
        return Err(plan.err(format!("{key}: the sd {sd} is negative")));
    }
    Ok(Prior { mean, sd })
}

pub(super) fn attribute(plan: &Plan, i: usize, a: &RawAttribute) -> Result<Attribute> {
    let key = format!(
        "[[attribute]] {} (`{}`)",
        i + 1,
        crate::error::quote(&a.name)
    );
    name_ok(plan, &format!("[[attribute]] {}: name", i + 1), &a.name)?;
    if plan.attributes.iter().any(|b| b.name == a.name) {
        return Err(plan.err(format!("{key}: the name is used twice")));
    }
    let by_alternative = match &a.levels {
        toml::Value::Table(t) => Some(t),
        _ => None,
    };
    let named = match (&a.alternatives, by_alternative) {
        (Some(names), _) => Some(names.clone()),
        (None, Some(t)) => Some(
            plan.alternatives
                .iter()
                .filter(|x| t.contains_key(*x))
                .cloned()
                .collect(),
        ),
        (None, None) => None,
    };
    let enters = enters(plan, &key, named.as_deref())?;
    let levels = match by_alternative {
        None => {
            let list = level_list(plan, &format!("{key}: levels"), &a.levels)?;
            vec![list; enters.len()]
        }
        Some(t) => {
            if let Some(other) = t
                .keys()
                .find(|k| !enters.iter().any(|&j| plan.alternatives[j] == **k))
            {
                return Err(plan.err(format!(
                    "{key}: levels: \"{}\" is not an alternative this attribute enters",
                    crate::error::quote(other)
                )));
            }
            let mut out = Vec::new();
            for &j in &enters {
                let name = &plan.alternatives[j];
                let v = t.get(name).ok_or_else(|| {
                    plan.err(format!(
                        "{key}: levels: no list for \"{name}\", which it enters"
                    ))
                })?;
                out.push(level_list(plan, &format!("{key}: levels.{name}"), v)?);
            }
            out
        }
    };
    let prior = prior(plan, &format!("{key}: prior"), a.prior.as_ref())?;
    Ok(Attribute {
        name: a.name.clone(),
        prior,
        enters,
        levels,
    })
}

/// The alternatives an attribute enters: all, or those named.
fn enters(plan: &Plan, key: &str, names: Option<&[String]>) -> Result<Vec<usize>> {
    let Some(names) = names else {
        return Ok((0..plan.alternatives.len()).collect());
    };
    let mut out = Vec::new();
    for n in names {
        let j = plan
            .alternatives
            .iter()
            .position(|x| x == n)
            .ok_or_else(|| {
                plan.err(format!(
                    "{key}: alternatives: \"{}\" is not in [design].alternatives ({})",
                    crate::error::quote(n),
                    plan.alternatives.join(", ")
                ))
            })?;
        if out.contains(&j) {
            return Err(plan.err(format!("{key}: alternatives: \"{n}\" is listed twice")));
        }
        out.push(j);
    }
    if out.is_empty() {
        return Err(plan.err(format!("{key}: alternatives: the list is empty")));
    }
    out.sort_unstable();
    Ok(out)
}

/// A list of levels: 2 to `MAX_LEVELS` different finite numbers.
fn level_list(plan: &Plan, key: &str, v: &toml::Value) -> Result<Vec<f64>> {
    let toml::Value::Array(items) = v else {
        return Err(plan.err(format!(
            "{key}: give a list of numbers, such as [2, 4, 6], or a table of lists by alternative"
        )));
    };
    let mut levels = Vec::with_capacity(items.len());
    for v in items {
        let x =
            number(v).ok_or_else(|| plan.err(format!("{key}: {v} is not a number within ±1e9")))?;
        if levels.contains(&x) {
            return Err(plan.err(format!("{key}: {x} is listed twice")));
        }
        levels.push(x);
    }
    if levels.len() < 2 || levels.len() > MAX_LEVELS {
        return Err(plan.err(format!(
            "{key}: an attribute needs 2 to {MAX_LEVELS} different levels to vary, not {}",
            levels.len()
        )));
    }
    Ok(levels)
}
