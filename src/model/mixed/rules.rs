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
        &["random_constants"]
    }

    fn random_terms(&self) -> bool {
        true
    }

    fn check(&self, spec: &SpecView) -> Result<Vec<FamilyParameter>, String> {
        Simulation::from_keys(spec.keys)?;
        for a in spec.attributes {
            check_name(a.random.as_deref(), "[[attribute]]", &a.name)?;
        }
        for c in spec.characteristics {
            check_name(c.random.as_deref(), "[[characteristic]]", &c.name)?;
        }
        let constants = random_constants(spec)?;
        let mut out = Vec::new();
        for p in spec.parameters {
            let random = match &p.term {
                Term::Constant => p.alternative.is_some_and(|j| constants.contains(&j)),
                Term::Attribute(a) => spec.attributes[*a].random.is_some(),
                Term::Characteristic(c) => spec.characteristics[*c].random.is_some(),
                Term::Family(_) => false,
            };
            if random {
                out.push(FamilyParameter {
                    name: format!("{}_spread", p.name),
                    label: format!("spread of {}", p.name),
                    start: 0.0,
                    null: 0.0,
                    in_reference: false,
                });
            }
        }
        if out.is_empty() {
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

/// Alternatives whose constant varies normally, from `[model].random_constants`.
fn random_constants(spec: &SpecView) -> Result<Vec<usize>, String> {
    let Some(v) = spec
        .keys
        .get("model")
        .and_then(|m| m.get("random_constants"))
    else {
        return Ok(Vec::new());
    };
    let Value::Array(items) = v else {
        return Err("[model].random_constants: give a list of alternative names".into());
    };
    let mut out = Vec::new();
    for item in items {
        let Value::String(name) = item else {
            return Err("[model].random_constants: give alternatives by name".into());
        };
        let Some(j) = spec.alternatives.iter().position(|a| &a.name == name) else {
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
        if out.contains(&j) {
            return Err(format!(
                "[model].random_constants: `{name}` is listed twice"
            ));
        }
        out.push(j);
    }
    Ok(out)
}

/// The random-constant alternatives of a validated spec (checked by `Rules`).
pub fn constants_of(spec: &crate::spec::Spec) -> Vec<usize> {
    let Some(Value::Array(items)) = spec
        .family_keys
        .get("model")
        .and_then(|m| m.get("random_constants"))
    else {
        return Vec::new();
    };
    items
        .iter()
        .filter_map(|v| v.as_str())
        .filter_map(|n| spec.alternatives.iter().position(|a| a.name == n))
        .collect()
}
