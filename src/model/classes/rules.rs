//! The latent class family's spec keys: `[model].classes` (how many),
//! `membership` (data columns that shift the class shares), `starts` (EM
//! starts), `seed` and `common` (utility parameters every class shares).
//! The utility's parameters are copied per class by the spec room
//! (`FamilyRules::copies`); the rules add the membership parameters
//! `member_class<k>` and `member_class<k>_<column>` for k = 2..K.

use toml::{Table, Value};

use crate::spec::{Copies, FamilyParameter, FamilyRules, SpecView};

/// The spec rules of the latent class family.
pub struct Rules;

/// The `[model]` keys the family reads.
pub const KEYS: [&str; 5] = ["classes", "membership", "starts", "seed", "common"];

/// Starts of the EM search when `[model].starts` is not given.
pub const DEFAULT_STARTS: usize = 10;
/// The seed of the starts when `[model].seed` is not given.
pub const DEFAULT_SEED: u64 = 1;

/// The family's settings, read from `[model]`.
#[derive(Clone, Debug, PartialEq)]
pub struct Settings {
    pub classes: usize,
    pub membership: Vec<String>,
    pub starts: usize,
    pub seed: u64,
    pub common: Vec<String>,
}

fn model(keys: &Table) -> Option<&Table> {
    keys.get("model").and_then(Value::as_table)
}

/// A whole number of at least `least` under `[model].key`.
fn count(m: Option<&Table>, key: &str, least: i64, what: &str) -> Result<Option<i64>, String> {
    match m.and_then(|m| m.get(key)) {
        None => Ok(None),
        Some(Value::Integer(n)) if *n >= least => Ok(Some(*n)),
        Some(v) => Err(format!(
            "[model].{key}: {what} must be a whole number of at least {least}, found {v}"
        )),
    }
}

/// A list of names under `[model].key`.
fn names(m: Option<&Table>, key: &str) -> Result<Vec<String>, String> {
    let Some(v) = m.and_then(|m| m.get(key)) else {
        return Ok(Vec::new());
    };
    let bad =
        || format!("[model].{key}: give a list of column or parameter names, such as [\"income\"]");
    let list = v.as_array().ok_or_else(bad)?;
    let mut out: Vec<String> = Vec::new();
    for x in list {
        let s = x.as_str().ok_or_else(bad)?.to_string();
        if out.contains(&s) {
            return Err(format!("[model].{key}: `{s}` is listed twice"));
        }
        out.push(s);
    }
    Ok(out)
}

impl Settings {
    /// Reads and checks the keys; the message names the key at fault.
    pub fn from_keys(keys: &Table) -> Result<Settings, String> {
        let m = model(keys);
        let classes = count(m, "classes", 1, "the number of classes")?.ok_or(
            "[model].classes: missing: say how many latent classes (segments) to fit, such as classes = 2",
        )? as usize;
        let membership = names(m, "membership")?;
        if classes == 1 && !membership.is_empty() {
            return Err("[model].membership: with classes = 1 there are no class shares for the columns to shift; remove `membership` or fit two classes or more".into());
        }
        let starts =
            count(m, "starts", 1, "the number of starts")?.map_or(DEFAULT_STARTS, |n| n as usize);
        let seed = count(m, "seed", 0, "the seed")?.map_or(DEFAULT_SEED, |n| n as u64);
        let common = names(m, "common")?;
        Ok(Settings {
            classes,
            membership,
            starts,
            seed,
            common,
        })
    }
}

impl FamilyRules for Rules {
    fn model_keys(&self) -> &'static [&'static str] {
        &KEYS
    }

    fn copies(&self, keys: &Table) -> Result<Copies, String> {
        let s = Settings::from_keys(keys)?;
        Ok(Copies {
            count: s.classes,
            common: s.common,
            common_key: "[model].common",
        })
    }

    fn columns(&self, keys: &Table) -> Vec<(String, String)> {
        Settings::from_keys(keys)
            .map(|s| s.membership)
            .unwrap_or_default()
            .into_iter()
            .map(|c| (c, "[model].membership".to_string()))
            .collect()
    }

    fn check(&self, spec: &SpecView) -> Result<Vec<FamilyParameter>, String> {
        let s = Settings::from_keys(spec.keys)?;
        if s.classes > 1 && s.common.len() == spec.parameters.len() {
            return Err("[model].common: every utility parameter is common to all classes, so the classes would not differ; leave some out of `common`".into());
        }
        let mut out = Vec::new();
        for k in 2..=s.classes {
            out.push(FamilyParameter {
                name: format!("member_class{k}"),
                label: format!("class {k} membership constant"),
                start: 0.0,
                null: 0.0,
                in_reference: false,
            });
            for c in &s.membership {
                out.push(FamilyParameter {
                    name: format!("member_class{k}_{c}"),
                    label: format!("class {k} membership: {c}"),
                    start: 0.0,
                    null: 0.0,
                    in_reference: false,
                });
            }
        }
        Ok(out)
    }
}
