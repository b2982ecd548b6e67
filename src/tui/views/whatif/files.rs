//! What the what-if writes: the scenario file (`s`) and the forecast export
//! (`x`), after checking the typed path; an existing file is replaced only
//! after the explicit `y`. Files are written atomically by the library
//! (`data::write::text`, `scenario::export::forecast`).

use std::path::{Path, PathBuf};

use super::WhatIfView;
use crate::scenario::export;
use crate::tui::part::{Answer, Ctx, Reply, Tone};
use crate::tui::worker::DRAWS;

/// The typed path: refused, written, or (when it exists) to be confirmed.
pub fn accept(view: &WhatIfView, ctx: &Ctx, export: bool, text: &str, reply: &mut Reply) -> Answer {
    let t = text.trim();
    if t.is_empty() {
        reply.say(Tone::Info, "cancelled: no file name");
        return Answer::Done;
    }
    let path = PathBuf::from(t);
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    if export && !matches!(ext.as_str(), "csv" | "json" | "parquet") {
        reply.say(Tone::Bad, "exports are written as .csv, .json or .parquet");
        return Answer::Again;
    }
    if path.is_dir() {
        reply.say(
            Tone::Bad,
            format!("{} is a folder: give a file name", path.display()),
        );
        return Answer::Again;
    }
    if crate::data::write::occupied(&path) {
        return Answer::Overwrite(path);
    }
    write(view, ctx, export, &path, false, reply);
    Answer::Done
}

/// Writes the scenario or the forecast; `force` only after the explicit `y`.
pub fn write(
    view: &WhatIfView,
    ctx: &Ctx,
    export: bool,
    path: &Path,
    force: bool,
    reply: &mut Reply,
) {
    let (Some(l), Some(w)) = (ctx.loaded(), view.models.get(ctx.current)) else {
        return;
    };
    let spec = &l.model.spec;
    let result = if !export {
        let sc = w.scenario(spec);
        crate::data::write::text(path, force, &sc.to_toml(spec)).map(|_| {
            format!(
                "saved {}: sharecast simulate {} --scenario {} reads it",
                path.display(),
                l.model.path.display(),
                path.display()
            )
        })
    } else {
        match w.best() {
            Some(f) => export::forecast(path, force, f).map(|_| {
                if f.draws > 0 {
                    format!(
                        "exported {} with the 95% band from {DRAWS} draws",
                        path.display()
                    )
                } else {
                    format!(
                        "exported {} without a band (the draws had not finished)",
                        path.display()
                    )
                }
            }),
            None => Err(crate::Error::Usage(
                "there is no forecast to export: see the message on the what-if view".into(),
            )),
        }
    };
    match result {
        Ok(text) => reply.say(Tone::Good, text),
        Err(e) => reply.say(Tone::Bad, e.to_string()),
    }
}
