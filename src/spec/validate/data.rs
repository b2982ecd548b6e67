//! The `[data]` section: the file, the layout and its columns, weight and group.

use std::path::Path;

use crate::spec::raw::RawData;
use crate::spec::{AlternativesTable, DataSpec, Layout, PairsTable};

/// `[data]`, with the file resolved against the spec file's folder.
pub(super) fn data(d: &RawData, path: &Path) -> Result<DataSpec, String> {
    let layout = match d.layout.as_str() {
        "wide" => wide(d)?,
        "long" => long(d)?,
        "tables" => tables(d, path)?,
        other => {
            return Err(format!(
                "[data].layout: \"{other}\" is not a layout (use \"wide\", \"long\" or \"tables\")"
            ))
        }
    };
    if !matches!(layout, Layout::Tables { .. }) && (d.alternatives.is_some() || d.pairs.is_some()) {
        return Err(format!(
            "[data]: [data.alternatives] and [data.pairs] belong to layout \"tables\"; this spec's layout is \"{}\"",
            d.layout
        ));
    }
    let dir = path.parent().unwrap_or_else(|| Path::new("."));
    Ok(DataSpec {
        file: dir.join(&d.file),
        file_written: d.file.clone(),
        layout,
        weight: d.weight.clone(),
        group: d.group.clone(),
    })
}

fn wide(d: &RawData) -> Result<Layout, String> {
    if d.situation.is_some() || d.alternative.is_some() || d.chosen.is_some() {
        return Err(
            "[data]: layout \"wide\" takes `choice`; `situation`, `alternative` and `chosen` belong to layout \"long\"".into(),
        );
    }
    let choice = d.choice.clone().ok_or_else(|| {
        "[data]: layout \"wide\" needs `choice` (the column holding the chosen alternative)"
            .to_string()
    })?;
    Ok(Layout::Wide { choice })
}

fn long(d: &RawData) -> Result<Layout, String> {
    if d.choice.is_some() {
        return Err(
            "[data]: layout \"long\" takes `situation`, `alternative` and `chosen`; `choice` belongs to layout \"wide\"".into(),
        );
    }
    let need = |v: &Option<String>, key: &str| {
        v.clone()
            .ok_or_else(|| format!("[data]: layout \"long\" needs `{key}`"))
    };
    Ok(Layout::Long {
        situation: need(&d.situation, "situation")?,
        alternative: need(&d.alternative, "alternative")?,
        chosen: need(&d.chosen, "chosen")?,
    })
}

/// Layout "tables": `choice` in the situations file, `[data.alternatives]`
/// and the optional `[data.pairs]`, their files resolved like `[data].file`.
fn tables(d: &RawData, path: &Path) -> Result<Layout, String> {
    if d.situation.is_some() || d.alternative.is_some() || d.chosen.is_some() {
        return Err(
            "[data]: layout \"tables\" takes `choice` and [data.alternatives]; `situation`, `alternative` and `chosen` belong to layout \"long\"".into(),
        );
    }
    let choice = d.choice.clone().ok_or_else(|| {
        "[data]: layout \"tables\" needs `choice` (the column holding the chosen alternative's id)"
            .to_string()
    })?;
    let dir = path.parent().unwrap_or_else(|| Path::new("."));
    let a = d.alternatives.as_ref().ok_or_else(|| {
        "[data]: layout \"tables\" needs [data.alternatives] with `file` (one row per alternative) and `id` (its id column)".to_string()
    })?;
    let alternatives = AlternativesTable {
        file: dir.join(&a.file),
        file_written: a.file.clone(),
        id: a.id.clone(),
    };
    let pairs = d.pairs.as_ref().map(|p| PairsTable {
        file: dir.join(&p.file),
        file_written: p.file.clone(),
        from: p.from.clone(),
        id: p.id.clone(),
    });
    Ok(Layout::Tables {
        choice,
        alternatives,
        pairs,
    })
}
