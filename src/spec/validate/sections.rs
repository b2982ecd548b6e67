//! The smaller sections: `[derived]` figures, `[validation]`, `[calibration]`
//! (and the share targets scenario files use too), and `field`.

use crate::spec::expr::Expr;
use crate::spec::raw::{RawCalibration, RawValidation};
use crate::spec::{Alternative, Calibration, Field, Holdout};

/// `[derived]`: named expressions of the parameters.
pub(super) fn derived(table: &toml::Table) -> Result<Vec<(String, Expr)>, String> {
    let mut derived = Vec::new();
    for (name, v) in table.iter() {
        let text = v
            .as_str()
            .ok_or_else(|| format!("[derived].{name}: give the expression as a string"))?;
        let e = Expr::parse(text).map_err(|e| format!("[derived].{name}: {e}"))?;
        derived.push((name.clone(), e));
    }
    Ok(derived)
}

/// `[validation].holdout`: a fraction drawn with the seed, or a 0/1 column.
pub(super) fn holdout(validation: &Option<RawValidation>) -> Result<Option<Holdout>, String> {
    let Some(v) = validation else {
        return Ok(None);
    };
    Ok(match &v.holdout {
        None => None,
        Some(toml::Value::Float(f)) if *f > 0.0 && *f < 1.0 => Some(Holdout::Fraction {
            fraction: *f,
            seed: v.seed.unwrap_or(1),
        }),
        Some(toml::Value::String(s)) => Some(Holdout::Column(s.clone())),
        Some(_) => {
            return Err(
                "[validation].holdout: give a fraction between 0 and 1 or the name of a 0/1 column"
                    .into(),
            )
        }
    })
}

/// `[calibration]`: share targets for the constants and the search's limits.
pub(super) fn calibration(
    calibration: &Option<RawCalibration>,
    alternatives: &[Alternative],
    base: usize,
    constants: bool,
) -> Result<Option<Calibration>, String> {
    let Some(c) = calibration else {
        return Ok(None);
    };
    let key = "[calibration].targets";
    let targets = parse_targets(&c.targets, alternatives, base, constants, key)?;
    Ok(Some(Calibration {
        targets,
        tolerance: c.tolerance.unwrap_or(1e-8),
        max_iterations: c.max_iterations.unwrap_or(1000),
    }))
}

/// `field`: the field of application (general when unnamed).
pub(super) fn field(field: Option<&str>) -> Result<Field, String> {
    match field {
        None => Ok(Field::General),
        Some(name) => Field::parse(name)
            .ok_or_else(|| format!("field: `{name}` is not one of {}", Field::NAMES.join(", "))),
    }
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
