//! The mixed family's spec keys: `random = "<distribution>"` on attributes
//! and characteristics, `[model].random_constants`, and `[simulation]`. Each
//! random coefficient `<name>` (its location) gains a spread parameter
//! `<name>_spread` (start 0, tested against 0).

use toml::Value;

use crate::model::distribution::{Distribution, NAMES};
use crate::model::draws::Simulation;
use crate::spec::{FamilyParameter, FamilyRules, SpecView, Term};

/// The spec rules of the mixed family.
pub struct Rules;

impl FamilyRules for Rules {
    fn sections(&self) -> &'static [&'static str] {
        &["simulation"]
    }

    fn model_keys(&self) -> &'static [&'static str] {
        &["random_constants", super::correlated::KEY, "space", "price"]
    }

    fn random_terms(&self) -> bool {
        true
    }

    fn check(&self, spec: &SpecView) -> Result<Vec<FamilyParameter>, String> {
        let simulation = Simulation::from_keys(spec.keys)?;
        for a in spec.attributes {
            check_name(a.random.as_deref(), "[[attribute]]", &a.name)?;
        }
        for c in spec.characteristics {
            check_name(c.random.as_deref(), "[[characteristic]]", &c.name)?;
        }
        let constants = random_constants(spec)?;
        let mut out = Vec::new();
        let mut random = Vec::new();
        for p in spec.parameters {
            let dist = match &p.term {
                Term::Constant => p
                    .alternative
                    .and_then(|j| constants.iter().find(|c| c.0 == j))
                    .map(|c| c.1.as_str()),
                Term::Attribute(a) => spec.attributes[*a].random.as_deref(),
                Term::Characteristic(c) => spec.characteristics[*c].random.as_deref(),
                Term::Family(_) => None,
            };
            let Some(dist) = dist.and_then(Distribution::parse) else {
                continue;
            };
            random.push((p.name.clone(), dist));
            out.push(FamilyParameter {
                name: format!("{}_spread", p.name),
                label: format!("spread of {}", p.name),
                start: 0.0,
                null: 0.0,
                in_reference: false,
            });
        }
        if let Some(price) = crate::model::space::check(spec)? {
            let a = &spec.attributes[price];
            if let Some(d) = a.random.as_deref().and_then(Distribution::parse) {
                if d != Distribution::Lognormal {
                    return Err(format!(
                        "[[attribute]] {}: random = \"{}\": the price scale of a model in willingness space must be positive for every decision maker; make it random = \"lognormal\" or fixed",
                        a.name,
                        d.name()
                    ));
                }
            }
        }
        let model = spec.keys.get("model");
        let listed =
            super::correlated::listed(model.and_then(|m| m.get(super::correlated::KEY)), &random)?;
        out.extend(super::correlated::parameters(&listed));
        simulation.check_dimensions(random.len())?;
        if random.is_empty() {
            return Err("[model].family \"mixed\" needs at least one random coefficient (`random = \"normal\"` or another distribution on an [[attribute]] or [[characteristic]], or [model].random_constants); with none the model is the logit: use family \"logit\"".into());
        }
        Ok(out)
    }
}

fn check_name(random: Option<&str>, table: &str, name: &str) -> Result<(), String> {
    match random {
        Some(r) if Distribution::parse(r).is_none() => Err(format!(
            "{table} {name}: random: \"{r}\" is not a distribution we know (use {})",
            NAMES
                .iter()
                .map(|n| format!("\"{n}\""))
                .collect::<Vec<_>>()
                .join(", ")
        )),
        _ => Ok(()),
    }
}

/// Alternatives whose constant varies, with the distribution, from
/// `[model].random_constants`: a list of names (normal) or a table of
/// name = "distribution".
fn random_constants(spec: &SpecView) -> Result<Vec<(usize, String)>, String> {
    let Some(v) = spec
        .keys
        .get("model")
        .and_then(|m| m.get("random_constants"))
    else {
        return Ok(Vec::new());
    };
    let mut out = Vec::new();
    for (name, dist) in entries(v)? {
        check_name(Some(&dist), "[model].random_constants", &name)?;
        let Some(j) = spec.alternatives.iter().position(|a| a.name == name) else {
            return Err(format!(
                "[model].random_constants: `{name}` is not an alternative (the spec has: {})",
                spec.alternatives
                    .iter()
                    .map(|a| a.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        };
        if !spec.constants {
            return Err(format!(
                "[model].random_constants: `{name}` has no constant ([model].constants = false)"
            ));
        }
        if j == spec.base {
            return Err(format!(
                "[model].random_constants: `{name}` is the base, whose constant is 0; a random constant needs an alternative with a constant"
            ));
        }
        if out.iter().any(|c: &(usize, String)| c.0 == j) {
            return Err(format!(
                "[model].random_constants: `{name}` is listed twice"
            ));
        }
        out.push((j, dist));
    }
    Ok(out)
}

/// (alternative name, distribution name) pairs of `random_constants`.
fn entries(v: &Value) -> Result<Vec<(String, String)>, String> {
    match v {
        Value::Array(items) => items
            .iter()
            .map(|item| match item {
                Value::String(name) => Ok((name.clone(), "normal".to_string())),
                _ => Err("[model].random_constants: give alternatives by name".to_string()),
            })
            .collect(),
        Value::Table(t) => t
            .iter()
            .map(|(name, d)| match d {
                Value::String(d) => Ok((name.clone(), d.clone())),
                _ => Err(format!(
                    "[model].random_constants.{name}: give the distribution's name"
                )),
            })
            .collect(),
        _ => Err("[model].random_constants: give a list of alternative names (normal constants) or a table of name = \"distribution\"".into()),
    }
}

/// The random constants of a validated spec (checked by `Rules`): alternative
/// index and distribution name.
pub fn constants_of(spec: &crate::spec::Spec) -> Vec<(usize, String)> {
    let Some(v) = spec
        .family_keys
        .get("model")
        .and_then(|m| m.get("random_constants"))
    else {
        return Vec::new();
    };
    entries(v)
        .unwrap_or_default()
        .into_iter()
        .filter_map(|(n, d)| {
            spec.alternatives
                .iter()
                .position(|a| a.name == n)
                .map(|j| (j, d))
        })
        .collect()
}
