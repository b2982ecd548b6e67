//! The `[alternatives.*]` tables: names in order, availability columns, codes.

use crate::spec::raw::RawAlternative;
use crate::spec::Alternative;

/// `[alternatives.*]`: at least two, no code used twice.
pub(super) fn alternatives(table: &toml::Table) -> Result<Vec<Alternative>, String> {
    let mut alternatives = Vec::new();
    for (name, value) in table.iter() {
        let alt: RawAlternative = value
            .clone()
            .try_into()
            .map_err(|e| format!("[alternatives.{name}]: {}", e.to_string().trim_end()))?;
        if let Some(code) = alt.code {
            if let Some(other) = alternatives
                .iter()
                .find(|a: &&Alternative| a.code == Some(code))
            {
                return Err(format!(
                    "[alternatives.{name}].code: code {code} is already used by `{}`",
                    other.name
                ));
            }
        }
        alternatives.push(Alternative {
            name: name.clone(),
            available: alt.available,
            code: alt.code,
        });
    }
    if alternatives.len() < 2 {
        return Err(format!(
            "[alternatives]: a choice needs at least two alternatives, found {}",
            alternatives.len()
        ));
    }
    Ok(alternatives)
}
