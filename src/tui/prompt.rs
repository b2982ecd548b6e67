//! The one-line prompts of the what-if view: a typed change for the lever,
//! the path to save the scenario or export the forecast to, and the explicit
//! `y` that replacing an existing file needs. Files are written atomically
//! by the library (`data::write::text`, `scenario::export::forecast`).

use std::path::{Path, PathBuf};

use super::app::{App, Ask, Prompt, Tone};
use super::keys::Action;
use super::levers::parse_change;
use super::whatif;
use super::worker::{Job, DRAWS};
use crate::scenario::{export, Op};

/// The question a prompt asks, shown before the typed text.
pub fn question(ask: Ask) -> &'static str {
    match ask {
        Ask::Value => "change (+10%  x1.2  +2  =3.5):",
        Ask::Save => "save the what-if as scenario file:",
        Ask::Export => "export the forecast to (.csv .json .parquet):",
    }
}

/// Opens a line prompt with a suggested text.
pub fn open(app: &mut App, ask: Ask, text: &str) {
    app.prompt = Some(Prompt::Line {
        ask,
        text: text.to_string(),
    });
}

/// Keys while a prompt is open.
pub fn on(app: &mut App, a: Action) -> Vec<Job> {
    let Some(prompt) = app.prompt.clone() else {
        return Vec::new();
    };
    match prompt {
        Prompt::Line { ask, mut text } => match a {
            Action::Char(c) => {
                text.push(c);
                app.prompt = Some(Prompt::Line { ask, text });
            }
            Action::Backspace => {
                text.pop();
                app.prompt = Some(Prompt::Line { ask, text });
            }
            Action::Enter => return accept(app, ask, &text),
            _ => {}
        },
        Prompt::Overwrite { ask, path } => {
            app.prompt = None;
            if a == Action::Yes {
                write(app, ask, &path, true);
            } else {
                app.say(Tone::Info, format!("kept {} as it was", path.display()));
            }
        }
    }
    Vec::new()
}

fn accept(app: &mut App, ask: Ask, text: &str) -> Vec<Job> {
    if ask == Ask::Value {
        return match parse_change(text) {
            Ok(op) => {
                app.prompt = None;
                let none = matches!(op, Op::Multiply(m) if m == 1.0) || op == Op::Add(0.0);
                if let Some(l) = app.loaded_mut() {
                    let c = l.whatif.cursor;
                    if let Some(slot) = l.whatif.ops.get_mut(c) {
                        *slot = (!none).then_some(op);
                    }
                }
                whatif::refresh(app)
            }
            Err(e) => {
                app.say(Tone::Bad, e);
                Vec::new()
            }
        };
    }
    let t = text.trim();
    if t.is_empty() {
        app.prompt = None;
        app.say(Tone::Info, "cancelled: no file name");
        return Vec::new();
    }
    let path = PathBuf::from(t);
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    if ask == Ask::Export && !matches!(ext.as_str(), "csv" | "json" | "parquet") {
        app.say(Tone::Bad, "exports are written as .csv, .json or .parquet");
        return Vec::new();
    }
    if path.is_dir() {
        app.say(
            Tone::Bad,
            format!("{} is a folder: give a file name", path.display()),
        );
        return Vec::new();
    }
    if crate::data::write::occupied(&path) {
        app.prompt = Some(Prompt::Overwrite { ask, path });
        return Vec::new();
    }
    app.prompt = None;
    write(app, ask, &path, false);
    Vec::new()
}

/// Writes the scenario or the forecast; `force` only after the explicit `y`.
fn write(app: &mut App, ask: Ask, path: &Path, force: bool) {
    let Some(l) = app.loaded() else {
        return;
    };
    let spec = &l.model.spec;
    let result = match ask {
        Ask::Save => {
            let sc = l.whatif.scenario(spec);
            crate::data::write::text(path, force, &sc.to_toml(spec)).map(|_| {
                format!(
                    "saved {}: sharecast simulate {} --scenario {} reads it",
                    path.display(),
                    l.model.path.display(),
                    path.display()
                )
            })
        }
        Ask::Export => match l.whatif.best() {
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
        },
        Ask::Value => return,
    };
    match result {
        Ok(text) => app.say(Tone::Good, text),
        Err(e) => app.say(Tone::Bad, e.to_string()),
    }
}
