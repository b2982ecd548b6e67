//! The `[[attribute]]` and `[[characteristic]]` tables: where each term's
//! values come from and which alternatives it enters.

use super::model::check_random;
use crate::spec::raw::{RawAttribute, RawCharacteristic};
use crate::spec::{
    Alternative, Attribute, Catalog, Characteristic, Coefficient, FamilyRules, Source,
};

/// What the terms are checked against: the alternatives, the base, the layout
/// and the family.
pub(super) struct Context<'a> {
    pub alternatives: &'a [Alternative],
    pub base: usize,
    /// One `column` per attribute (layouts "long" and "tables").
    pub long: bool,
    /// Layout "tables": `times` is allowed.
    pub tables: bool,
    pub rules: &'a dyn FamilyRules,
    pub families: &'a dyn Catalog,
    pub family: &'a str,
}

impl Context<'_> {
    fn index_of(&self, name: &str) -> Option<usize> {
        self.alternatives.iter().position(|a| a.name == name)
    }
}

/// `[[attribute]]`: each name new to `names` (which records it).
pub(super) fn attributes(
    raw: &[RawAttribute],
    cx: &Context,
    names: &mut Vec<String>,
) -> Result<Vec<Attribute>, String> {
    let mut attributes = Vec::new();
    for a in raw {
        let at = |msg: String| format!("[[attribute]] {}: {msg}", a.name);
        if names.contains(&a.name) {
            return Err(at("the name is used twice".into()));
        }
        names.push(a.name.clone());
        let coefficient = match a.coefficient.as_deref().unwrap_or("shared") {
            "shared" => Coefficient::Shared,
            "per-alternative" => Coefficient::PerAlternative,
            other => {
                return Err(at(format!(
                    "coefficient: \"{other}\" is not known (use \"shared\" or \"per-alternative\")"
                )))
            }
        };
        let sources = if cx.long {
            long_sources(a, cx)
        } else {
            wide_sources(a, cx)
        }
        .map_err(at)?;
        if sources.iter().all(|s| s.is_none()) {
            return Err(at("the attribute enters no alternative".into()));
        }
        check_random(a.random.as_deref(), cx.rules, cx.families, cx.family).map_err(at)?;
        if a.times.is_some() && !cx.tables {
            return Err(at("`times` is for layout \"tables\"; in this layout write the product as a [derived] column".into()));
        }
        attributes.push(Attribute {
            name: a.name.clone(),
            coefficient,
            sources,
            random: a.random.clone(),
            times: a.times.clone(),
        });
    }
    Ok(attributes)
}

/// An attribute's sources in layout "long": one column for the listed alternatives.
fn long_sources(a: &RawAttribute, cx: &Context) -> Result<Vec<Option<Source>>, String> {
    let mut sources = vec![None; cx.alternatives.len()];
    if a.columns.is_some() {
        return Err(format!(
            "`columns` is for layout \"wide\"; in layout \"{}\" write `column = \"...\"`",
            if cx.tables { "tables" } else { "long" }
        ));
    }
    let layout = if cx.tables { "tables" } else { "long" };
    let column = a
        .column
        .clone()
        .ok_or_else(|| format!("layout \"{layout}\" needs `column`"))?;
    match &a.alternatives {
        None => sources
            .iter_mut()
            .for_each(|s| *s = Some(Source::Column(column.clone()))),
        Some(list) => {
            for name in list {
                let j = cx.index_of(name).ok_or_else(|| {
                    format!("alternatives: `{name}` is not a declared alternative")
                })?;
                sources[j] = Some(Source::Column(column.clone()));
            }
        }
    }
    Ok(sources)
}

/// An attribute's sources in layout "wide": a column or a number per alternative.
fn wide_sources(a: &RawAttribute, cx: &Context) -> Result<Vec<Option<Source>>, String> {
    let mut sources = vec![None; cx.alternatives.len()];
    if a.column.is_some() || a.alternatives.is_some() {
        return Err("layout \"wide\" takes `columns = { alt = \"column\" or number }`, not `column`/`alternatives`".into());
    }
    let columns = a
        .columns
        .as_ref()
        .ok_or_else(|| "layout \"wide\" needs `columns`".to_string())?;
    for (name, v) in columns.iter() {
        let j = cx
            .index_of(name)
            .ok_or_else(|| format!("columns.{name}: `{name}` is not a declared alternative"))?;
        sources[j] = Some(match v {
            toml::Value::String(s) => Source::Column(s.clone()),
            toml::Value::Integer(i) => Source::Value(*i as f64),
            toml::Value::Float(f) => Source::Value(*f),
            _ => return Err(format!("columns.{name}: give a column name or a number")),
        });
    }
    Ok(sources)
}

/// `[[characteristic]]`: each name new to `names` (which records it).
pub(super) fn characteristics(
    raw: &[RawCharacteristic],
    cx: &Context,
    names: &mut Vec<String>,
) -> Result<Vec<Characteristic>, String> {
    let mut characteristics = Vec::new();
    for c in raw {
        let at = |msg: String| format!("[[characteristic]] {}: {msg}", c.name);
        if names.contains(&c.name) {
            return Err(at("the name is used twice".into()));
        }
        names.push(c.name.clone());
        let alts = entered(c, cx).map_err(at)?;
        if alts.is_empty() {
            return Err(at("the characteristic enters no alternative".into()));
        }
        check_random(c.random.as_deref(), cx.rules, cx.families, cx.family).map_err(at)?;
        characteristics.push(Characteristic {
            name: c.name.clone(),
            column: c.column.clone(),
            alternatives: alts,
            random: c.random.clone(),
        });
    }
    Ok(characteristics)
}

/// The alternatives a characteristic enters, in order: all but the base unless
/// listed; all for a single-index family.
fn entered(c: &RawCharacteristic, cx: &Context) -> Result<Vec<usize>, String> {
    let single = cx.rules.single_index();
    let n = cx.alternatives.len();
    Ok(match &c.alternatives {
        Some(_) if single => {
            return Err(format!(
                "alternatives: family \"{}\" has one coefficient per characteristic (it moves the one latent index); remove `alternatives`",
                cx.family
            ))
        }
        None if single => (0..n).collect(),
        None => (0..n).filter(|&j| j != cx.base).collect(),
        Some(list) => {
            let mut v = Vec::new();
            for name in list {
                let j = cx.index_of(name).ok_or_else(|| {
                    format!("alternatives: `{name}` is not a declared alternative")
                })?;
                if j == cx.base {
                    return Err(format!(
                        "alternatives: `{name}` is the base, whose characteristic coefficients are 0"
                    ));
                }
                if !v.contains(&j) {
                    v.push(j);
                }
            }
            v.sort_unstable();
            v
        }
    })
}
