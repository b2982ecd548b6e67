//! Checks a raw spec and builds the validated `Spec`, with messages that name
//! the key at fault (`[model].base`, `[[attribute]] cost: columns.tram`, ...).

use std::path::Path;

use super::expr::Expr;
use super::raw::{RawParameter, RawSpec};
use super::*;

pub(super) fn validate(raw: RawSpec, path: &Path, families: &dyn Catalog) -> Result<Spec> {
    let fail = |msg: String| Error::spec(path, msg);

    // [data]
    let d = &raw.data;
    let layout = match d.layout.as_str() {
        "wide" => {
            if d.situation.is_some() || d.alternative.is_some() || d.chosen.is_some() {
                return Err(fail(
                    "[data]: layout \"wide\" takes `choice`; `situation`, `alternative` and `chosen` belong to layout \"long\"".into(),
                ));
            }
            let choice = d.choice.clone().ok_or_else(|| {
                fail("[data]: layout \"wide\" needs `choice` (the column holding the chosen alternative)".into())
            })?;
            Layout::Wide { choice }
        }
        "long" => {
            if d.choice.is_some() {
                return Err(fail(
                    "[data]: layout \"long\" takes `situation`, `alternative` and `chosen`; `choice` belongs to layout \"wide\"".into(),
                ));
            }
            let need = |v: &Option<String>, key: &str| {
                v.clone()
                    .ok_or_else(|| fail(format!("[data]: layout \"long\" needs `{key}`")))
            };
            Layout::Long {
                situation: need(&d.situation, "situation")?,
                alternative: need(&d.alternative, "alternative")?,
                chosen: need(&d.chosen, "chosen")?,
            }
        }
        other => {
            return Err(fail(format!(
                "[data].layout: \"{other}\" is not a layout (use \"wide\" or \"long\")"
            )))
        }
    };
    let long = matches!(layout, Layout::Long { .. });
    let dir = path.parent().unwrap_or_else(|| Path::new("."));
    let data = DataSpec {
        file: dir.join(&d.file),
        file_written: d.file.clone(),
        layout,
        weight: d.weight.clone(),
        group: d.group.clone(),
    };

    // [model]
    let family = raw.model.family.as_deref().unwrap_or("logit").to_string();
    let Some(rules) = families.rules(&family) else {
        let known: Vec<String> = families
            .names()
            .iter()
            .map(|n| format!("\"{n}\""))
            .collect();
        return Err(fail(format!(
            "[model].family: \"{family}\" is not a family (use one of {})",
            known.join(", ")
        )));
    };
    let family_keys = family_keys(&raw, families, rules, &family).map_err(fail)?;

    // [alternatives.*]
    let mut alternatives = Vec::new();
    for (name, value) in raw.alternatives.iter() {
        let alt: raw::RawAlternative = value.clone().try_into().map_err(|e| {
            fail(format!(
                "[alternatives.{name}]: {}",
                e.to_string().trim_end()
            ))
        })?;
        if let Some(code) = alt.code {
            if let Some(other) = alternatives
                .iter()
                .find(|a: &&Alternative| a.code == Some(code))
            {
                return Err(fail(format!(
                    "[alternatives.{name}].code: code {code} is already used by `{}`",
                    other.name
                )));
            }
        }
        alternatives.push(Alternative {
            name: name.clone(),
            available: alt.available,
            code: alt.code,
        });
    }
    if alternatives.len() < 2 {
        return Err(fail(format!(
            "[alternatives]: a choice needs at least two alternatives, found {}",
            alternatives.len()
        )));
    }
    let index_of = |name: &str| alternatives.iter().position(|a| a.name == name);
    let single = rules.single_index();
    let base = match (&raw.model.base, single) {
        (Some(_), true) => {
            return Err(fail(format!(
                "[model].base: family \"{family}\" has no base alternative (one latent index for all categories); remove `base`"
            )))
        }
        (None, true) => 0,
        (None, false) => {
            return Err(fail(
                "[model].base: missing: name the reference alternative (it gets no constant)".into(),
            ))
        }
        (Some(b), false) => index_of(b).ok_or_else(|| {
            fail(format!(
                "[model].base: `{b}` is not one of the alternatives ({})",
                alternatives
                    .iter()
                    .map(|a| a.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            ))
        })?,
    };
    if single && raw.model.constants == Some(true) {
        return Err(fail(format!(
            "[model].constants: family \"{family}\" has no constants (its cut-points take their place)"
        )));
    }
    let constants = raw.model.constants.unwrap_or(!single);

    // [[attribute]]
    let mut term_names: Vec<String> = Vec::new();
    let mut attributes = Vec::new();
    for a in &raw.attribute {
        let at = |msg: String| fail(format!("[[attribute]] {}: {msg}", a.name));
        if term_names.contains(&a.name) {
            return Err(at("the name is used twice".into()));
        }
        term_names.push(a.name.clone());
        let coefficient = match a.coefficient.as_deref().unwrap_or("shared") {
            "shared" => Coefficient::Shared,
            "per-alternative" => Coefficient::PerAlternative,
            other => {
                return Err(at(format!(
                    "coefficient: \"{other}\" is not known (use \"shared\" or \"per-alternative\")"
                )))
            }
        };
        let mut sources = vec![None; alternatives.len()];
        if long {
            if a.columns.is_some() {
                return Err(at(
                    "`columns` is for layout \"wide\"; in layout \"long\" write `column = \"...\"`"
                        .into(),
                ));
            }
            let column = a
                .column
                .clone()
                .ok_or_else(|| at("layout \"long\" needs `column`".into()))?;
            match &a.alternatives {
                None => sources
                    .iter_mut()
                    .for_each(|s| *s = Some(Source::Column(column.clone()))),
                Some(list) => {
                    for name in list {
                        let j = index_of(name).ok_or_else(|| {
                            at(format!(
                                "alternatives: `{name}` is not a declared alternative"
                            ))
                        })?;
                        sources[j] = Some(Source::Column(column.clone()));
                    }
                }
            }
        } else {
            if a.column.is_some() || a.alternatives.is_some() {
                return Err(at("layout \"wide\" takes `columns = { alt = \"column\" or number }`, not `column`/`alternatives`".into()));
            }
            let columns = a
                .columns
                .as_ref()
                .ok_or_else(|| at("layout \"wide\" needs `columns`".into()))?;
            for (name, v) in columns.iter() {
                let j = index_of(name).ok_or_else(|| {
                    at(format!(
                        "columns.{name}: `{name}` is not a declared alternative"
                    ))
                })?;
                sources[j] = Some(match v {
                    toml::Value::String(s) => Source::Column(s.clone()),
                    toml::Value::Integer(i) => Source::Value(*i as f64),
                    toml::Value::Float(f) => Source::Value(*f),
                    _ => {
                        return Err(at(format!(
                            "columns.{name}: give a column name or a number"
                        )))
                    }
                });
            }
        }
        if sources.iter().all(|s| s.is_none()) {
            return Err(at("the attribute enters no alternative".into()));
        }
        check_random(a.random.as_deref(), rules, families, &family).map_err(at)?;
        attributes.push(Attribute {
            name: a.name.clone(),
            coefficient,
            sources,
            random: a.random.clone(),
        });
    }

    // [[characteristic]]
    let mut characteristics = Vec::new();
    for c in &raw.characteristic {
        let at = |msg: String| fail(format!("[[characteristic]] {}: {msg}", c.name));
        if term_names.contains(&c.name) {
            return Err(at("the name is used twice".into()));
        }
        term_names.push(c.name.clone());
        let alts = match &c.alternatives {
            Some(_) if single => {
                return Err(at(format!(
                    "alternatives: family \"{family}\" has one coefficient per characteristic (it moves the one latent index); remove `alternatives`"
                )))
            }
            None if single => (0..alternatives.len()).collect(),
            None => (0..alternatives.len()).filter(|&j| j != base).collect(),
            Some(list) => {
                let mut v = Vec::new();
                for name in list {
                    let j = index_of(name).ok_or_else(|| {
                        at(format!(
                            "alternatives: `{name}` is not a declared alternative"
                        ))
                    })?;
                    if j == base {
                        return Err(at(format!(
                            "alternatives: `{name}` is the base, whose characteristic coefficients are 0"
                        )));
                    }
                    if !v.contains(&j) {
                        v.push(j);
                    }
                }
                v.sort_unstable();
                v
            }
        };
        if alts.is_empty() {
            return Err(at("the characteristic enters no alternative".into()));
        }
        check_random(c.random.as_deref(), rules, families, &family).map_err(at)?;
        characteristics.push(Characteristic {
            name: c.name.clone(),
            column: c.column.clone(),
            alternatives: alts,
            random: c.random.clone(),
        });
    }

    // [derived]
    let mut derived = Vec::new();
    for (name, v) in raw.derived.iter() {
        let text = v
            .as_str()
            .ok_or_else(|| fail(format!("[derived].{name}: give the expression as a string")))?;
        let e = Expr::parse(text).map_err(|e| fail(format!("[derived].{name}: {e}")))?;
        derived.push((name.clone(), e));
    }

    // The parameter list.
    let mut parameters = Vec::new();
    let push =
        |parameters: &mut Vec<Parameter>, name: String, term: Term, alternative: Option<usize>| {
            parameters.push(Parameter {
                name,
                term,
                alternative,
                start: 0.0,
                fixed: None,
                null: 0.0,
                in_reference: false,
            })
        };
    if constants {
        for (j, alt) in alternatives.iter().enumerate() {
            if j != base {
                push(
                    &mut parameters,
                    format!("asc_{}", alt.name),
                    Term::Constant,
                    Some(j),
                );
            }
        }
    }
    for (k, a) in attributes.iter().enumerate() {
        match a.coefficient {
            Coefficient::Shared => push(&mut parameters, a.name.clone(), Term::Attribute(k), None),
            Coefficient::PerAlternative => {
                for (j, s) in a.sources.iter().enumerate() {
                    if s.is_some() {
                        let name = format!("{}_{}", a.name, alternatives[j].name);
                        push(&mut parameters, name, Term::Attribute(k), Some(j));
                    }
                }
            }
        }
    }
    for (k, c) in characteristics.iter().enumerate() {
        if single {
            push(
                &mut parameters,
                c.name.clone(),
                Term::Characteristic(k),
                None,
            );
            continue;
        }
        for &j in &c.alternatives {
            let name = format!("{}_{}", c.name, alternatives[j].name);
            push(&mut parameters, name, Term::Characteristic(k), Some(j));
        }
    }
    let extra = rules
        .check(&SpecView {
            layout: &data.layout,
            alternatives: &alternatives,
            base,
            constants,
            attributes: &attributes,
            characteristics: &characteristics,
            parameters: &parameters,
            keys: &family_keys,
        })
        .map_err(fail)?;
    for p in extra {
        parameters.push(Parameter {
            name: p.name,
            term: Term::Family(p.label),
            alternative: None,
            start: p.start,
            fixed: None,
            null: p.null,
            in_reference: p.in_reference,
        });
    }
    for (i, p) in parameters.iter().enumerate() {
        if parameters[..i].iter().any(|q| q.name == p.name) {
            return Err(fail(format!(
                "two parameters would both be named `{}`; rename an attribute or characteristic",
                p.name
            )));
        }
    }
    let known = |parameters: &[Parameter]| {
        parameters
            .iter()
            .map(|p| p.name.clone())
            .collect::<Vec<_>>()
            .join(", ")
    };

    // [parameters]
    for (name, v) in raw.parameters.iter() {
        let Some(p) = parameters.iter_mut().find(|p| &p.name == name) else {
            return Err(fail(format!(
                "[parameters].{name}: no parameter of this model is named `{name}` (the model has: {})",
                known(&parameters)
            )));
        };
        let rp: RawParameter = v
            .clone()
            .try_into()
            .map_err(|e| fail(format!("[parameters].{name}: {}", e.to_string().trim_end())))?;
        if rp.start.is_some() && rp.fixed.is_some() {
            return Err(fail(format!(
                "[parameters].{name}: give `start` or `fixed`, not both"
            )));
        }
        if let Some(s) = rp.start {
            p.start = s;
        }
        if let Some(f) = rp.fixed {
            p.start = f;
            p.fixed = Some(f);
        }
        if !p.start.is_finite() {
            return Err(fail(format!(
                "[parameters].{name}: the value must be finite"
            )));
        }
    }

    rules.check_parameters(&parameters).map_err(fail)?;

    // [[ratio]]
    let ratios = super::ratio::ratios(&raw.ratio, &parameters).map_err(fail)?;

    // [validation]
    let holdout = match &raw.validation {
        None => None,
        Some(v) => match &v.holdout {
            None => None,
            Some(toml::Value::Float(f)) if *f > 0.0 && *f < 1.0 => Some(Holdout::Fraction {
                fraction: *f,
                seed: v.seed.unwrap_or(1),
            }),
            Some(toml::Value::String(s)) => Some(Holdout::Column(s.clone())),
            Some(_) => return Err(fail(
                "[validation].holdout: give a fraction between 0 and 1 or the name of a 0/1 column"
                    .into(),
            )),
        },
    };

    // [calibration]
    let calibration = match &raw.calibration {
        None => None,
        Some(c) => Some(
            parse_targets(
                &c.targets,
                &alternatives,
                base,
                constants,
                "[calibration].targets",
            )
            .map_err(fail)
            .map(|targets| Calibration {
                targets,
                tolerance: c.tolerance.unwrap_or(1e-8),
                max_iterations: c.max_iterations.unwrap_or(1000),
            })?,
        ),
    };

    // restrictions
    let mut restrictions = Vec::new();
    for text in &raw.restrictions {
        restrictions.push(
            parse_restriction(text, &parameters)
                .map_err(|m| fail(format!("restrictions: `{text}`: {m}")))?,
        );
    }

    let field = match raw.field.as_deref() {
        None => Field::General,
        Some(name) => Field::parse(name).ok_or_else(|| {
            fail(format!(
                "field: `{name}` is not one of {}",
                Field::NAMES.join(", ")
            ))
        })?,
    };

    Ok(Spec {
        path: path.to_path_buf(),
        title: raw.title,
        field,
        data,
        family,
        family_keys,
        base,
        constants,
        alternatives,
        attributes,
        characteristics,
        derived,
        parameters,
        ratios,
        holdout,
        calibration,
        restrictions,
    })
}

/// `random` on a term: only a family with random coefficients takes it.
fn check_random(
    random: Option<&str>,
    rules: &dyn FamilyRules,
    families: &dyn Catalog,
    family: &str,
) -> std::result::Result<(), String> {
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
fn family_keys(
    raw: &RawSpec,
    families: &dyn Catalog,
    rules: &dyn FamilyRules,
    family: &str,
) -> std::result::Result<toml::Table, String> {
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

/// Share targets for constant calibration (also used by scenario files).
pub fn parse_targets(
    table: &toml::Table,
    alternatives: &[Alternative],
    base: usize,
    constants: bool,
    key: &str,
) -> std::result::Result<Vec<(usize, f64)>, String> {
    if !constants {
        return Err(format!(
            "{key}: calibration adjusts the constants, but [model].constants is false"
        ));
    }
    let mut targets = Vec::new();
    for (name, v) in table.iter() {
        let j = alternatives
            .iter()
            .position(|a| &a.name == name)
            .ok_or_else(|| format!("{key}.{name}: `{name}` is not a declared alternative"))?;
        let s = match v {
            toml::Value::Float(f) => *f,
            toml::Value::Integer(i) => *i as f64,
            _ => return Err(format!("{key}.{name}: give a share between 0 and 1")),
        };
        if !(s > 0.0 && s < 1.0) {
            return Err(format!(
                "{key}.{name}: the share {s} is not strictly between 0 and 1"
            ));
        }
        targets.push((j, s));
    }
    if targets.is_empty() {
        return Err(format!("{key}: no targets given"));
    }
    let sum: f64 = targets.iter().map(|t| t.1).sum();
    let has_base = targets.iter().any(|t| t.0 == base);
    if has_base && targets.len() != alternatives.len() {
        return Err(format!(
            "{key}: the base alternative has a target, so every alternative needs one (its constant stays at 0)"
        ));
    }
    if targets.len() == alternatives.len() && (sum - 1.0).abs() > 1e-6 {
        return Err(format!(
            "{key}: the targets of all alternatives add up to {sum}, not 1"
        ));
    }
    if sum >= 1.0 + 1e-9 {
        return Err(format!("{key}: the targets add up to {sum}, more than 1"));
    }
    targets.sort_by_key(|t| t.0);
    Ok(targets)
}
