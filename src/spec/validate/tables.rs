//! Layout "tables" in the spec: the alternatives named by the ids of their
//! table, and `[sampling]` with the utility it needs (the same terms in
//! every alternative).

use crate::error::{Error, Result};
use crate::spec::raw::RawSampling;
use crate::spec::{
    Alternative, Catalog, Coefficient, FamilyRules, Layout, Sampling, Scheme, SpecView,
};

/// The alternatives: `[alternatives.*]`, or the ids of the table of
/// alternatives in layout "tables" (which then takes no `[alternatives.*]`).
pub(super) fn alternatives(
    raw: Option<&toml::Table>,
    layout: &Layout,
    families: &dyn Catalog,
    path: &std::path::Path,
) -> Result<Vec<Alternative>> {
    let fail = |msg: String| Error::spec(path, msg);
    let Layout::Tables { alternatives, .. } = layout else {
        let Some(raw) = raw else {
            return Err(fail("not a valid spec: missing field `alternatives`; declare each alternative as a table of its own, such as [alternatives.bus] and [alternatives.rail] (a list or a string of names under another table does not declare them)".into()));
        };
        return super::alternatives::alternatives(raw).map_err(fail);
    };
    if raw.is_some_and(|t| !t.is_empty()) {
        return Err(fail(format!(
            "[alternatives]: layout \"tables\" takes its alternatives from the ids of [data.alternatives] ({}); remove the [alternatives.*] tables",
            alternatives.file_written
        )));
    }
    let ids = families.table_ids(&alternatives.file, &alternatives.id)?;
    if ids.len() < 2 {
        return Err(Error::data(
            &alternatives.file,
            format!(
                "column `{}` ([data.alternatives].id): a choice needs at least two alternatives, found {}",
                alternatives.id,
                ids.len()
            ),
        ));
    }
    Ok(ids
        .into_iter()
        .map(|name| Alternative {
            name,
            available: None,
            code: None,
        })
        .collect())
}

/// `[sampling]`: layout "tables", a family for which it is consistent, fewer
/// draws than the set, a known scheme, and a utility with the same terms in
/// every alternative (a sampled set's members are not told apart).
pub(super) fn sampling(
    raw: Option<&RawSampling>,
    t: &SpecView,
    (rules, family): (&dyn FamilyRules, &str),
) -> std::result::Result<Option<Sampling>, String> {
    let Some(raw) = raw else {
        return Ok(None);
    };
    if !matches!(t.layout, Layout::Tables { .. }) {
        return Err("[sampling]: sampled choice sets need [data].layout = \"tables\"".into());
    }
    if !rules.sampled_sets(t.keys) {
        return Err(format!(
            "[sampling]: estimation on sampled choice sets is consistent for the logit in preference space, not for family \"{}\" as specified; remove [sampling]",
            family
        ));
    }
    let largest = t.alternatives.len() - 1;
    let drawn = raw.alternatives;
    if drawn < 1 {
        return Err(format!(
            "[sampling].alternatives: draw at least 1 alternative besides the chosen one (found {drawn})"
        ));
    }
    if drawn as usize >= largest {
        return Err(format!(
            "[sampling].alternatives: {drawn} drawn besides the chosen one, but the set has only {} alternatives, so a sample is no smaller than the set; remove [sampling] and estimate on the full sets",
            t.alternatives.len()
        ));
    }
    let scheme = match (raw.scheme.as_deref().unwrap_or("uniform"), &raw.weight) {
        ("uniform", None) => Scheme::Uniform,
        ("uniform", Some(_)) => {
            return Err("[sampling].weight: only scheme \"weighted\" reads a weight column".into())
        }
        ("weighted", Some(w)) => Scheme::Weighted(w.clone()),
        ("weighted", None) => {
            return Err("[sampling]: scheme \"weighted\" needs `weight` (a column of the alternatives table, drawn in proportion to it)".into())
        }
        (other, _) => {
            return Err(format!(
                "[sampling].scheme: \"{other}\" is not a scheme (use \"uniform\" or \"weighted\")"
            ))
        }
    };
    generic(t)?;
    Ok(Some(Sampling {
        alternatives: drawn as usize,
        scheme,
        seed: raw.seed.unwrap_or(1),
    }))
}

/// Refuses terms that differ between alternatives under `[sampling]`.
fn generic(t: &SpecView) -> std::result::Result<(), String> {
    let why = "sampled estimation needs a utility with the same terms in every alternative";
    if t.constants {
        return Err(format!("[sampling]: {why}; set [model].constants = false (an alternative's own appeal enters as a column of the alternatives table)"));
    }
    if let Some(c) = t.characteristics.first() {
        return Err(format!("[sampling]: {why}; [[characteristic]] {} enters some alternatives only: interact it with an attribute instead (`times = \"{}\"` on the [[attribute]])", c.name, c.column));
    }
    for a in t.attributes {
        if a.coefficient == Coefficient::PerAlternative {
            return Err(format!(
                "[sampling]: {why}; [[attribute]] {} has coefficient \"per-alternative\"",
                a.name
            ));
        }
        if a.sources.iter().any(|s| s.is_none()) {
            return Err(format!(
                "[sampling]: {why}; [[attribute]] {} enters only the alternatives it lists",
                a.name
            ));
        }
    }
    Ok(())
}
