//! `[[ratio]]` entries checked against the model's parameters: numerator and
//! denominator by name, a usable scale, the `per` direction and the `unit`.

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
