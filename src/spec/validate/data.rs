//! The `[data]` section: the file, the layout and its columns, weight and group.

use std::path::Path;

use crate::spec::raw::RawData;
use crate::spec::{DataSpec, Layout};

/// `[data]`, with the file resolved against the spec file's folder.
pub(super) fn data(d: &RawData, path: &Path) -> Result<DataSpec, String> {
    let layout = match d.layout.as_str() {
        "wide" => wide(d)?,
        "long" => long(d)?,
        other => {
            return Err(format!(
                "[data].layout: \"{other}\" is not a layout (use \"wide\" or \"long\")"
            ))
        }
    };
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
