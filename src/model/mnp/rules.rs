//! The probit family's spec keys. Two alternatives: the binary probit, exact,
//! with no keys of its own. Three or more: the multinomial probit, reading
//! `[errors].structure` ("independent", the default, or "full") and
//! `[simulation]`; `full` adds the free entries of the Cholesky factor of the
//! differenced error covariance as parameters `chol_<row>_<column>`, named by
//! the non-base alternatives they join (see `covariance`).

use toml::Value;

use super::covariance::{free_entries, independent_factor};
use crate::model::draws::Simulation;
use crate::spec::{FamilyParameter, FamilyRules, SpecView};

/// The most alternatives the multinomial probit takes: the GHK simulator's
/// error grows with the number of utility differences and each situation's
/// time with its square.
pub const MAX_ALTERNATIVES: usize = 12;

/// The spec rules of the probit family (binary and multinomial).
pub struct Rules;

/// `[errors].structure`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    Independent,
    Full,
}

impl Kind {
    pub fn name(self) -> &'static str {
        match self {
            Kind::Independent => "independent",
            Kind::Full => "full",
        }
    }
}

/// Reads `[errors]` from the family's keys.
pub fn structure(keys: &toml::Table) -> Result<Kind, String> {
    let Some(v) = keys.get("errors") else {
        return Ok(Kind::Independent);
    };
    let Value::Table(t) = v else {
        return Err("[errors]: write it as a table ([errors] with `structure = ...` below)".into());
    };
    let mut kind = Kind::Independent;
    for (k, v) in t {
        match (k.as_str(), v) {
            ("structure", Value::String(s)) if s == "independent" => kind = Kind::Independent,
            ("structure", Value::String(s)) if s == "full" => kind = Kind::Full,
            ("structure", other) => {
                return Err(format!(
                "[errors].structure: {other} is not a structure (use \"independent\" or \"full\")"
            ))
            }
            (other, _) => {
                return Err(format!(
                    "[errors]: unknown key `{other}` (the section takes `structure`)"
                ))
            }
        }
    }
    Ok(kind)
}

/// The names of the non-base alternatives, in spec order.
pub fn non_base<'a>(names: impl Iterator<Item = &'a str>, base: usize) -> Vec<&'a str> {
    names
        .enumerate()
        .filter(|(j, _)| *j != base)
        .map(|(_, n)| n)
        .collect()
}

impl FamilyRules for Rules {
    fn sections(&self) -> &'static [&'static str] {
        &["errors", "simulation"]
    }

    fn check(&self, spec: &SpecView) -> Result<Vec<FamilyParameter>, String> {
        let j = spec.alternatives.len();
        if j < 2 {
            return Err(format!(
                "[model].family: \"probit\" needs at least two alternatives, found {j}"
            ));
        }
        if j == 2 {
            for key in ["errors", "simulation"] {
                if spec.keys.contains_key(key) {
                    return Err(format!(
                        "[{key}]: with two alternatives the probit is the binary probit, whose probability is exact (no error covariance to choose, no simulation); remove [{key}]"
                    ));
                }
            }
            return Ok(Vec::new());
        }
        if j > MAX_ALTERNATIVES {
            return Err(format!(
                "[model].family: the multinomial probit takes at most {MAX_ALTERNATIVES} alternatives (its GHK simulator's error grows with the number of utility differences), and this spec has {j}; consider the nested or mixed logit"
            ));
        }
        Simulation::from_keys(spec.keys)?;
        let kind = structure(spec.keys)?;
        if kind == Kind::Independent {
            return Ok(Vec::new());
        }
        let names = non_base(spec.alternatives.iter().map(|a| a.name.as_str()), spec.base);
        let n = names.len();
        let start = independent_factor(n);
        Ok(free_entries(n)
            .into_iter()
            .map(|(r, s)| FamilyParameter {
                name: format!("chol_{}_{}", names[r], names[s]),
                label: format!(
                    "error covariance factor ({} row, {} column)",
                    names[r], names[s]
                ),
                start: start[r * n + s],
                // Tested against the independent structure's value.
                null: start[r * n + s],
                in_reference: false,
            })
            .collect())
    }
}
