//! The nested family's spec keys: `[[nest]]` tables with a `name` and two or
//! more `alternatives`; each nest adds a scale parameter `lambda_<name>`
//! (start 1, tested against 1).

use toml::{Table, Value};

use crate::spec::{Alternative, FamilyParameter, FamilyRules, SpecView};

/// The spec rules of the nested family.
pub struct Rules;

impl FamilyRules for Rules {
    fn sections(&self) -> &'static [&'static str] {
        &["nest"]
    }

    fn check_parameters(&self, parameters: &[crate::spec::Parameter]) -> Result<(), String> {
        for p in parameters {
            if matches!(p.term, crate::spec::Term::Family(_)) && p.start <= 0.0 {
                return Err(format!(
                    "[parameters].{}: a nest scale must be positive (1 is the logit), found {}",
                    p.name, p.start
                ));
            }
        }
        Ok(())
    }

    fn check(&self, spec: &SpecView) -> Result<Vec<FamilyParameter>, String> {
        let nests = nests_of(spec.keys, spec.alternatives)?;
        if nests.is_empty() {
            return Err("[model].family \"nested\" needs at least one [[nest]] (with none, the model is the logit: use family \"logit\")".into());
        }
        let mut out = Vec::new();
        for (name, _) in &nests {
            let param = format!("lambda_{name}");
            if spec
                .parameters
                .iter()
                .any(|p| p.name == param || p.name == *name)
            {
                return Err(format!(
                    "[[nest]] {name}: its scale parameter `{param}` would clash with a parameter of the same name; rename the nest"
                ));
            }
            out.push(FamilyParameter {
                name: param,
                label: format!("nest scale {name}"),
                start: 1.0,
                null: 1.0,
                in_reference: false,
            });
        }
        Ok(out)
    }
}

/// The nests as (name, alternative indices), checked: known alternatives, each
/// in at most one nest, two or more per nest, names unique and plain.
pub fn nests_of(
    keys: &Table,
    alternatives: &[Alternative],
) -> Result<Vec<(String, Vec<usize>)>, String> {
    let Some(value) = keys.get("nest") else {
        return Ok(Vec::new());
    };
    let Value::Array(items) = value else {
        return Err("[[nest]]: write each nest as its own [[nest]] table".into());
    };
    let mut nests: Vec<(String, Vec<usize>)> = Vec::new();
    for (n, item) in items.iter().enumerate() {
        let Value::Table(t) = item else {
            return Err(format!("[[nest]] number {}: not a table", n + 1));
        };
        if let Some(k) = t.keys().find(|k| *k != "name" && *k != "alternatives") {
            return Err(format!(
                "[[nest]] number {}: unknown key `{k}` (a nest takes `name` and `alternatives`)",
                n + 1
            ));
        }
        let name = nest_name(t, n, &nests)?;
        let members = nest_members(t, &name, alternatives, &nests)?;
        if members.len() < 2 {
            return Err(format!(
                "[[nest]] {name}: a nest needs two or more alternatives; a nest of one is the logit (its scale cannot be estimated), so leave the alternative out of every nest"
            ));
        }
        nests.push((name, members));
    }
    Ok(nests)
}

/// A nest's `name`: a plain word, not used by an earlier nest.
fn nest_name(t: &Table, n: usize, nests: &[(String, Vec<usize>)]) -> Result<String, String> {
    let name = match t.get("name") {
        Some(Value::String(s)) => s.clone(),
        other => {
            return Err(format!(
                "[[nest]] number {}: `name` {}",
                n + 1,
                if other.is_some() {
                    "must be a string"
                } else {
                    "(a string) is missing"
                }
            ))
        }
    };
    if name.is_empty() || !name.chars().all(|c| c.is_alphanumeric() || c == '_') {
        return Err(format!(
            "[[nest]] {name:?}: a nest name is letters, digits and underscores (it names the parameter lambda_<name>)"
        ));
    }
    if nests.iter().any(|x| x.0 == name) {
        return Err(format!("[[nest]] {name}: two nests have this name"));
    }
    Ok(name)
}

/// A nest's `alternatives`: known names, listed once, in no earlier nest.
fn nest_members(
    t: &Table,
    name: &str,
    alternatives: &[Alternative],
    nests: &[(String, Vec<usize>)],
) -> Result<Vec<usize>, String> {
    let list = match t.get("alternatives") {
        Some(Value::Array(a)) => a,
        other => {
            return Err(format!(
                "[[nest]] {name}: `alternatives` {}",
                if other.is_some() {
                    "must be a list of names, such as [\"bus\", \"rail\"]"
                } else {
                    "(a list of names) is missing"
                }
            ))
        }
    };
    let mut members = Vec::new();
    for a in list {
        let Value::String(alt) = a else {
            return Err(format!("[[nest]] {name}: alternatives are given by name"));
        };
        let Some(idx) = alternatives.iter().position(|x| &x.name == alt) else {
            let known: Vec<&str> = alternatives.iter().map(|x| x.name.as_str()).collect();
            return Err(format!(
                "[[nest]] {name}: `{alt}` is not an alternative (the spec has: {})",
                known.join(", ")
            ));
        };
        if let Some(other) = nests.iter().find(|x| x.1.contains(&idx)) {
            return Err(format!(
                "[[nest]] {name}: `{alt}` is already in nest `{}`; an alternative belongs to at most one nest",
                other.0
            ));
        }
        if members.contains(&idx) {
            return Err(format!("[[nest]] {name}: `{alt}` is listed twice"));
        }
        members.push(idx);
    }
    Ok(members)
}
