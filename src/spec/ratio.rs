//! `[[ratio]]` entries checked against the model's parameters: numerator and
//! denominator by name, a usable scale, the `per` direction and the `unit`.
//! In a model with one copy of the utility per latent class, a ratio named
//! by the utility's names is one ratio per class (`<name>_class<k>`).

use super::raw::RawRatio;
use super::{Parameter, Ratio};

/// The parameter names, for messages.
fn known(parameters: &[Parameter]) -> String {
    parameters
        .iter()
        .map(|p| p.name.clone())
        .collect::<Vec<_>>()
        .join(", ")
}

/// Checks every `[[ratio]]`; the error message names the ratio and the key.
pub fn ratios(raw: &[RawRatio], parameters: &[Parameter]) -> Result<Vec<Ratio>, String> {
    let mut ratios = Vec::new();
    for r in raw {
        let find = |key: &str, name: &str| {
            parameters.iter().position(|p| p.name == name).ok_or_else(|| {
                format!(
                    "[[ratio]] {}: {key} `{name}` is not a parameter of this model (the model has: {})",
                    r.name,
                    known(parameters)
                )
            })
        };
        let per_less = match r.per.as_deref() {
            None | Some("unit more") => false,
            Some("unit less") => true,
            Some(other) => {
                return Err(format!(
                    "[[ratio]] {}: per = `{other}` is not one of \"unit more\" (the default: willingness to pay for one more unit of the numerator's variable) or \"unit less\" (for one unit less, a saving)",
                    r.name
                ))
            }
        };
        let scale = r.scale.unwrap_or(1.0);
        if !scale.is_finite() || scale == 0.0 {
            return Err(format!(
                "[[ratio]] {}: scale must be a finite number other than 0",
                r.name
            ));
        }
        let classes = parameters.iter().map(|p| p.class).max().unwrap_or(0);
        let per_class = |name: &str| {
            classes > 0
                && !parameters.iter().any(|p| p.name == name)
                && parameters
                    .iter()
                    .any(|p| p.name == format!("{name}_class1"))
        };
        if per_class(&r.numerator) || per_class(&r.denominator) {
            // One ratio per latent class, of that class's copies.
            let named = |name: &str, k: usize| match per_class(name) {
                true => format!("{name}_class{k}"),
                false => name.to_string(),
            };
            for k in 1..=classes {
                ratios.push(Ratio {
                    name: format!("{}_class{k}", r.name),
                    numerator: find("numerator", &named(&r.numerator, k))?,
                    denominator: find("denominator", &named(&r.denominator, k))?,
                    scale,
                    unit: r.unit.clone(),
                    per_less,
                });
            }
            continue;
        }
        ratios.push(Ratio {
            name: r.name.clone(),
            numerator: find("numerator", &r.numerator)?,
            denominator: find("denominator", &r.denominator)?,
            scale,
            unit: r.unit.clone(),
            per_less,
        });
    }
    Ok(ratios)
}
