//! Drafting a spec from a data file (`sharecast new`): reads every column,
//! guesses the layout, the alternatives, availability, attributes,
//! characteristics, weight and group, and writes commented TOML in which each
//! guess says so. Uses the data room to read; the command line writes the file.

mod layout;
mod profile;
mod roles;
mod text;

use std::path::{Component, Path, PathBuf};

use crate::error::{Error, Result};

pub use layout::carries;

/// A drafted spec and the summary printed beside it.
#[derive(Clone, Debug)]
pub struct Draft {
    /// The spec text (TOML with comments).
    pub text: String,
    /// Short lines saying what was found.
    pub summary: Vec<String>,
}

/// Drafts a spec for `data` that will be written to `spec_path` (the data
/// file is named relative to the spec's folder).
pub fn draft(data: &Path, spec_path: &Path) -> Result<Draft> {
    let (names, unreadable) = crate::data::load::readable_columns(data)?;
    crate::data::load::check_field_counts(data)?;
    let table = crate::data::load::read(data, &names, &names)?;
    let profiles = profile::profiles(&table);
    let g = layout::guess(&table, &profiles)
        .map_err(|why| Error::data(data, format!("cannot be read as choices: {why}")))?;
    let mut plan = roles::plan(&table, &profiles, &g);
    for (col, why) in unreadable {
        plan.left_out.push((col, why));
    }
    let fam = text::family(&g);
    let rel = relative(data, spec_path);
    let label = data.display().to_string();
    let text = text::spec_text(&label, &rel, &g, &plan, &fam);
    let summary = summary(&table, &g, &plan, fam.family);
    Ok(Draft { text, summary })
}

fn summary(
    t: &crate::data::Table,
    g: &layout::Guess,
    plan: &roles::Plan,
    family: &str,
) -> Vec<String> {
    let mut out = vec![format!(
        "read {}: {} rows, {} columns",
        t.file.display(),
        t.nrows,
        t.names.len()
    )];
    out.extend(g.why.iter().cloned());
    let alts: Vec<&str> = g.alternatives.iter().map(|a| a.name.as_str()).collect();
    out.push(format!(
        "model: {family} over {} {} ({})",
        alts.len(),
        if family.starts_with("ordered") {
            "ordered categories"
        } else {
            "alternatives"
        },
        alts.join(", ")
    ));
    let attrs: Vec<&str> = plan.attributes.iter().map(|a| a.name.as_str()).collect();
    let chars: Vec<&str> = plan
        .characteristics
        .iter()
        .filter(|c| c.left_out.is_none())
        .map(|c| c.name.as_str())
        .collect();
    let out_chars: Vec<&str> = plan
        .characteristics
        .iter()
        .filter(|c| c.left_out.is_some())
        .map(|c| c.column.as_str())
        .collect();
    out.push(format!(
        "terms: {}, {}",
        listed("attribute", &attrs),
        listed("characteristic", &chars)
    ));
    let mut roles = Vec::new();
    if let Some((w, _)) = &plan.weight {
        roles.push(format!("weight {w}"));
    }
    if let Some((gr, _)) = &plan.group {
        roles.push(format!("group {gr}"));
    }
    if !plan.availability.is_empty() {
        let av: Vec<&str> = plan
            .availability
            .iter()
            .map(|(a, _, _)| g.alternatives[*a].name.as_str())
            .collect();
        roles.push(format!("availability for {}", av.join(", ")));
    }
    if !roles.is_empty() {
        out.push(format!("guessed: {}", roles.join(" · ")));
    }
    let mut unused: Vec<&str> = out_chars;
    unused.extend(plan.left_out.iter().map(|(c, _)| c.as_str()));
    if !unused.is_empty() {
        out.push(format!(
            "left out, with the reason in a comment: {}",
            unused.join(", ")
        ));
    }
    out
}

/// "no attributes", "1 attribute (cost)", "2 attributes (cost, time)".
fn listed(what: &str, names: &[&str]) -> String {
    match names.len() {
        0 => format!("no {what}s"),
        1 => format!("1 {what} ({})", names[0]),
        n => format!("{n} {what}s ({})", names.join(", ")),
    }
}

/// `data` as the spec at `spec_path` should name it: relative to the spec's
/// folder (which need not exist yet: writing the spec creates it) when both
/// can be resolved, else as given; always with `/`.
fn relative(data: &Path, spec_path: &Path) -> String {
    let dir = spec_path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let (Ok(d), Some(s)) = (std::fs::canonicalize(data), resolve(dir)) else {
        return slashes(data);
    };
    let dc: Vec<Component> = d.components().collect();
    let sc: Vec<Component> = s.components().collect();
    let common = dc.iter().zip(&sc).take_while(|(a, b)| a == b).count();
    // Nothing in common but the root: the absolute path reads better.
    if common <= 1 {
        return slashes(&d);
    }
    let mut rel = PathBuf::new();
    for _ in common..sc.len() {
        rel.push("..");
    }
    for c in &dc[common..] {
        rel.push(c.as_os_str());
    }
    slashes(&rel)
}

/// A folder as an absolute path without `.`, `..` or links, whether or not
/// it exists: its longest existing ancestor resolved, the rest appended.
fn resolve(dir: &Path) -> Option<PathBuf> {
    let dir = std::path::absolute(dir).ok()?;
    let mut missing: Vec<Component> = Vec::new();
    let mut base = dir.as_path();
    let mut real = loop {
        if let Ok(r) = std::fs::canonicalize(base) {
            break r;
        }
        let parent = base.parent()?;
        missing.extend(base.components().next_back());
        base = parent;
    };
    for c in missing.into_iter().rev() {
        match c {
            Component::ParentDir => {
                real.pop();
            }
            Component::Normal(part) => real.push(part),
            _ => {}
        }
    }
    Some(real)
}

fn slashes(p: &Path) -> String {
    p.to_string_lossy().replace('\\', "/")
}
