//! The `[model]` section and what the family claims: the family by name, its own
//! sections and `[model]` keys, the base alternative, the constants, and
//! whether a term may be random.

use crate::spec::raw::{RawModel, RawSpec};
use crate::spec::{Alternative, Catalog, FamilyRules};

/// `[model].family`: the family's rules (the logit when unnamed).
pub(super) fn family<'c>(
    model: &RawModel,
    families: &'c dyn Catalog,
) -> Result<(String, &'c dyn FamilyRules), String> {
    let family = model.family.as_deref().unwrap_or("logit").to_string();
    let Some(rules) = families.rules(&family) else {
        let known: Vec<String> = families
            .names()
            .iter()
            .map(|n| format!("\"{n}\""))
            .collect();
        return Err(format!(
            "[model].family: \"{family}\" is not a family (use one of {})",
            known.join(", ")
        ));
    };
    Ok((family, rules))
}

/// `[model].base`: the reference alternative's index (0, unused, for a
/// single-index family).
pub(super) fn base(
    model: &RawModel,
    rules: &dyn FamilyRules,
    family: &str,
    alternatives: &[Alternative],
    needed: bool,
) -> Result<usize, String> {
    match (&model.base, rules.single_index()) {
        (Some(_), true) => Err(format!(
            "[model].base: family \"{family}\" has no base alternative (one latent index for all categories); remove `base`"
        )),
        (None, true) => Ok(0),
        (None, false) if !needed => Ok(0),
        (None, false) => Err(
            "[model].base: missing: name the reference alternative (it gets no constant; characteristics enter the others)".into(),
        ),
        (Some(b), false) => alternatives.iter().position(|a| &a.name == b).ok_or_else(|| {
            format!(
                "[model].base: `{b}` is not one of the alternatives ({})",
                alternatives
                    .iter()
                    .map(|a| a.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        }),
    }
}

/// `[model].constants`: on unless the family is single-index.
pub(super) fn constants(
    model: &RawModel,
    rules: &dyn FamilyRules,
    family: &str,
) -> Result<bool, String> {
    let single = rules.single_index();
    if single && model.constants == Some(true) {
        return Err(format!(
            "[model].constants: family \"{family}\" has no constants (its cut-points take their place)"
        ));
    }
    Ok(model.constants.unwrap_or(!single))
}

/// `random` on a term: only a family with random coefficients takes it.
pub(super) fn check_random(
    random: Option<&str>,
    rules: &dyn FamilyRules,
    families: &dyn Catalog,
    family: &str,
) -> Result<(), String> {
    if random.is_none() || rules.random_terms() {
        return Ok(());
    }
    let takers: Vec<String> = families
        .names()
        .into_iter()
        .filter(|n| families.rules(n).is_some_and(|r| r.random_terms()))
        .map(|n| format!("\"{n}\""))
        .collect();
    Err(format!(
        "random: coefficients that vary across decision makers need a family with random coefficients ([model].family = {}); this spec's family is \"{family}\"",
        takers.join(" or ")
    ))
}

/// The family's own keys out of what the common sections did not claim: its
/// sections, and its extra `[model]` keys under `model`. Anything else is unknown.
pub(super) fn family_keys(
    raw: &RawSpec,
    families: &dyn Catalog,
    rules: &dyn FamilyRules,
    family: &str,
) -> Result<toml::Table, String> {
    let mut keys = toml::Table::new();
    for (k, v) in &raw.extra {
        let mine = rules.sections().contains(&k.as_str());
        let owners = families.owners_of(k);
        if !mine && !owners.is_empty() {
            let owners: Vec<String> = owners.iter().map(|o| format!("\"{o}\"")).collect();
            return Err(format!(
                "`{k}` belongs to family {}; this spec's [model].family is \"{family}\"",
                owners.join(" or ")
            ));
        }
        if !mine {
            return Err(format!(
                "unknown key `{k}` (not a section of the spec for family \"{family}\"; see docs/spec-format.md)"
            ));
        }
        keys.insert(k.clone(), v.clone());
    }
    let mut model = toml::Table::new();
    for (k, v) in &raw.model.extra {
        let owners = families.model_key_owners(k);
        if !rules.model_keys().contains(&k.as_str()) && !owners.is_empty() {
            let owners: Vec<String> = owners.iter().map(|o| format!("\"{o}\"")).collect();
            return Err(format!(
                "[model].{k}: applies to family {}; this spec's [model].family is \"{family}\"",
                owners.join(" or ")
            ));
        }
        if !rules.model_keys().contains(&k.as_str()) {
            return Err(format!(
                "[model]: unknown key `{k}` (family \"{family}\" takes `family`, `base` and `constants`{})",
                rules
                    .model_keys()
                    .iter()
                    .map(|m| format!(", `{m}`"))
                    .collect::<String>()
            ));
        }
        model.insert(k.clone(), v.clone());
    }
    if !model.is_empty() {
        keys.insert("model".into(), toml::Value::Table(model));
    }
    Ok(keys)
}
