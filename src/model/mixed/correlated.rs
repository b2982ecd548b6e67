//! `[model].correlated`: random coefficients whose underlying normals are
//! jointly normal with covariance L L', L lower-triangular in the order of
//! the list. L's diagonal is the coefficients' `<name>_spread` parameters (so
//! the independent model is the case with every off-diagonal at 0); the entry
//! in row i, column j (i > j) is the parameter `chol_<name_i>_<name_j>`.
//! Only normal and (negative-)lognormal coefficients can be listed: their
//! draws are standard normal, which L mixes.

use toml::Value;

use crate::model::distribution::Distribution;
use crate::spec::{FamilyParameter, Spec};

/// The key's name in `[model]`.
pub const KEY: &str = "correlated";

/// The correlated coefficients' names in list order, checked against the
/// random coefficients (name, distribution) of the spec; empty without the key.
pub fn listed(
    value: Option<&Value>,
    random: &[(String, Distribution)],
) -> Result<Vec<String>, String> {
    let names: Vec<String> = match value {
        None | Some(Value::Boolean(false)) => return Ok(Vec::new()),
        Some(Value::Boolean(true)) => random.iter().map(|r| r.0.clone()).collect(),
        Some(Value::Array(items)) => items
            .iter()
            .map(|v| match v {
                Value::String(s) => Ok(s.clone()),
                _ => Err(format!("[model].{KEY}: give the random coefficients by name (strings), or `true` for all of them")),
            })
            .collect::<Result<_, _>>()?,
        Some(_) => {
            return Err(format!(
                "[model].{KEY}: give a list of random coefficients' names, or `true` for all of them"
            ))
        }
    };
    let known = || {
        random
            .iter()
            .map(|r| r.0.as_str())
            .collect::<Vec<_>>()
            .join(", ")
    };
    for (i, n) in names.iter().enumerate() {
        let Some((_, dist)) = random.iter().find(|r| &r.0 == n) else {
            return Err(format!(
                "[model].{KEY}: `{n}` is not a random coefficient (the random coefficients are: {})",
                known()
            ));
        };
        if names[..i].contains(n) {
            return Err(format!("[model].{KEY}: `{n}` is listed twice"));
        }
        if !matches!(
            dist,
            Distribution::Normal | Distribution::Lognormal | Distribution::NegativeLognormal
        ) {
            return Err(format!(
                "[model].{KEY}: `{n}` is {}; only normal, lognormal and negative-lognormal coefficients can be correlated (their draws are normal)",
                dist.name()
            ));
        }
    }
    if names.len() < 2 {
        return Err(format!(
            "[model].{KEY}: correlation needs at least two random coefficients; {} listed (the random coefficients are: {})",
            names.len(),
            known()
        ));
    }
    Ok(names)
}

/// The parameters the list adds: `chol_<i>_<j>` row by row.
pub fn parameters(names: &[String]) -> Vec<FamilyParameter> {
    let mut out = Vec::new();
    for (i, a) in names.iter().enumerate() {
        for b in &names[..i] {
            out.push(FamilyParameter {
                name: chol_name(a, b),
                label: "Cholesky factor of the correlated coefficients".to_string(),
                start: 0.0,
                null: 0.0,
                in_reference: false,
            });
        }
    }
    out
}

/// The Cholesky entry's parameter name.
pub fn chol_name(row: &str, column: &str) -> String {
    format!("chol_{row}_{column}")
}

/// The list of a validated spec (names that are not random coefficients of
/// this spec are left out: a spec reduced to its constants keeps the key).
pub fn of(spec: &Spec) -> Vec<String> {
    let value = spec.family_keys.get("model").and_then(|m| m.get(KEY));
    match value {
        Some(Value::Array(items)) => items
            .iter()
            .filter_map(|v| v.as_str().map(str::to_string))
            .collect(),
        Some(Value::Boolean(true)) => vec!["*".to_string()],
        _ => Vec::new(),
    }
}
