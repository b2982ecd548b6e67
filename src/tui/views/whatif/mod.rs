//! The what-if view: levers that change attributes and characteristics,
//! withdrawn alternatives, the point forecast at once and its band from the
//! worker. Its keys step, type, reset, withdraw, save and export, and open the
//! demand curve of a lever, and show the shares by latent class; `/` filters
//! the levers and the shares by the alternative's name and PgUp PgDn scroll
//! the shares. `levers` holds its per-model state, `draw` its drawing,
//! `files` the scenario and forecast it writes.

mod classes;
mod draw;
mod files;
pub mod levers;

use std::any::Any;
use std::path::Path;

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

use crate::scenario::{Op, Target};
use crate::tui::filter::{self, Filter, Took};
use crate::tui::keys::Action;
use crate::tui::part::{Answer, Ctx, Focus, Key, PerModel, Reply, Tone, View};
use crate::tui::worker::Job;
use levers::{parse_change, stepped};
pub use levers::{Banded, WhatIf};

/// The view's title, also the name its jobs carry.
pub const TITLE: &str = "what-if";

/// The prompts the view asks.
const VALUE: u8 = 0;
const SAVE: u8 = 1;
const EXPORT: u8 = 2;

/// The what-if of every opened model; the filter of the levers and shares,
/// and the first row of the shares shown.
#[derive(Debug, Default)]
pub struct WhatIfView {
    pub models: PerModel<WhatIf>,
    pub filter: Filter,
    pub offset: usize,
}

impl WhatIfView {
    /// The what-if of model `index`.
    pub fn state(&self, index: usize) -> Option<&WhatIf> {
        self.models.get(index)
    }

    /// Recomputes the current model's point forecast and requests its band.
    fn refresh(&mut self, ctx: &Ctx, reply: &mut Reply) {
        let index = ctx.current;
        let g = self.models.next_generation();
        if let (Some(l), Some(w)) = (ctx.loaded(), self.models.get_mut(index)) {
            reply.job(w.refresh(index, &l.model, g));
        }
    }
}

/// The view's own keys and what the shared keys do on it.
const KEYS: &[Key] = &[
    Key::shared("↑↓  j k", "choose a lever"),
    Key::shared("PgUp PgDn", "scroll the shares"),
    Key::shared("←→  h l", "step −/+ 1% (or 0.1)"),
    Key::shared("⇧←→  H L", "step −/+ 10% (or 1)"),
    Key::command("e", "Enter  e", "type +10% x1.2 +2 =3.5"),
    Key::command("rR", "r  R", "reset lever / all"),
    Key::command("w", "w", "withdraw / restore alt."),
    Key::command("s", "s", "save as scenario TOML"),
    Key::command("x", "x", "export csv/json/parquet"),
    Key::command("c", "c", "demand curve of lever"),
    Key::command("b", "b", "shares by latent class"),
];

impl View for WhatIfView {
    fn title(&self) -> &'static str {
        TITLE
    }

    fn about(&self) -> &'static str {
        "levers, shares, band"
    }

    fn keys(&self) -> &'static [Key] {
        KEYS
    }

    fn hints(&self) -> &'static str {
        "←→ step  Enter type  s save  ? help  q quit "
    }

    fn opened(&mut self, ctx: &Ctx, index: usize) -> Vec<Job> {
        let Some(l) = ctx.models.get(index) else {
            return Vec::new();
        };
        let w = WhatIf::new(&l.model.spec);
        self.models
            .open(index, w, |w, g| w.refresh(index, &l.model, g))
    }

    fn typing(&self) -> bool {
        self.filter.typing()
    }

    fn act(&mut self, ctx: &Ctx, a: Action, reply: &mut Reply) {
        let took = self.filter.on(a);
        let Some(w) = self.models.get_mut(ctx.current) else {
            return;
        };
        let kept = match ctx.loaded() {
            Some(l) => self.filter.kept(w.lever_names(&l.model.spec)),
            None => Vec::new(),
        };
        match took {
            Took::Changed => {
                w.cursor = filter::settle(w.cursor, &kept);
                self.offset = 0;
                return;
            }
            Took::Kept => return,
            Took::Not => {}
        }
        let n = w.levers.len();
        let c = w.cursor.min(n.saturating_sub(1));
        match a {
            Action::Up | Action::Down | Action::Top | Action::Bottom => {
                if let Some(to) = filter::cursor(c, &kept, 1, a) {
                    w.cursor = to;
                }
            }
            Action::PageUp | Action::PageDown => {
                let rows = w.best().map_or(0, |f| {
                    let names = f.shares.iter().map(|r| r.alternative.as_str());
                    self.filter.kept(names).len()
                });
                self.offset = self.filter.scroll(self.offset, rows, a);
            }
            Action::Left | Action::Right | Action::BigLeft | Action::BigRight if n > 0 => {
                let up = matches!(a, Action::Right | Action::BigRight);
                let big = matches!(a, Action::BigLeft | Action::BigRight);
                w.ops[c] = stepped(w.ops[c], up, big);
                self.refresh(ctx, reply);
            }
            Action::Enter | Action::Command('e') if n > 0 => {
                reply.ask(VALUE, "change (+10%  x1.2  +2  =3.5):", "")
            }
            Action::Command('r') if n > 0 => {
                w.ops[c] = None;
                self.refresh(ctx, reply);
            }
            Action::Command('R') => {
                w.ops.iter_mut().for_each(|o| *o = None);
                w.removed.clear();
                reply.say(Tone::Info, "back to the base: every change withdrawn");
                self.refresh(ctx, reply);
            }
            Action::Command('w') => self.withdraw(ctx, reply),
            Action::Command('s') => {
                reply.ask(SAVE, "save the what-if as scenario file:", "whatif.toml")
            }
            Action::Command('x') => reply.ask(
                EXPORT,
                "export the forecast to (.csv .json .parquet):",
                "whatif.csv",
            ),
            Action::Command('c') => curve_of_lever(w, reply),
            Action::Command('b') => match ctx.loaded() {
                Some(l) if crate::report::walk::class_count(&l.model.spec) > 1 => {
                    w.by_class = !w.by_class
                }
                _ => reply.say(Tone::Info, "the model has no latent classes"),
            },
            _ => {}
        }
    }

    fn arrived(
        &mut self,
        index: usize,
        generation: u64,
        result: Result<Box<dyn Any + Send>, String>,
    ) {
        self.models
            .arrived::<Banded>(index, result, |x, r| x.banded(generation, r));
    }

    fn answered(&mut self, ctx: &Ctx, ask: u8, text: &str, reply: &mut Reply) -> Answer {
        if ask != VALUE {
            return files::accept(self, ctx, ask == EXPORT, text, reply);
        }
        match parse_change(text) {
            Ok(op) => {
                let none = matches!(op, Op::Multiply(m) if m == 1.0) || op == Op::Add(0.0);
                if let Some(w) = self.models.get_mut(ctx.current) {
                    let c = w.cursor;
                    if let Some(slot) = w.ops.get_mut(c) {
                        *slot = (!none).then_some(op);
                    }
                }
                self.refresh(ctx, reply);
                Answer::Done
            }
            Err(e) => {
                reply.say(Tone::Bad, e);
                Answer::Again
            }
        }
    }

    fn confirmed(&mut self, ctx: &Ctx, ask: u8, path: &Path, reply: &mut Reply) {
        files::write(self, ctx, ask == EXPORT, path, true, reply);
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        if let Some(w) = self.models.get(ctx.current) {
            draw::render(w, (&self.filter, self.offset), ctx, area, buf);
        }
    }

    fn as_any(&self) -> &dyn Any {
        self
    }
}

impl WhatIfView {
    /// Withdraws the lever's alternative, or restores it; one must stay.
    fn withdraw(&mut self, ctx: &Ctx, reply: &mut Reply) {
        let (Some(w), Some(l)) = (self.models.get_mut(ctx.current), ctx.loaded()) else {
            return;
        };
        let Some(k) = w.lever().and_then(|l| l.alternative) else {
            reply.say(Tone::Info, "this lever belongs to no alternative");
            return;
        };
        if let Some(p) = w.removed.iter().position(|&r| r == k) {
            w.removed.remove(p);
        } else if w.removed.len() + 2 > l.model.spec.alternatives.len() {
            reply.say(
                Tone::Bad,
                "one alternative must stay: nothing left to choose",
            );
            return;
        } else {
            w.removed.push(k);
            w.removed.sort_unstable();
        }
        self.refresh(ctx, reply);
    }
}

/// Asks the curve view for the demand curve of the lever's attribute.
fn curve_of_lever(w: &WhatIf, reply: &mut Reply) {
    match w.lever().map(|l| l.target.clone()) {
        Some(Target::Attribute {
            attribute,
            alternative,
        }) => {
            reply.go = Some((
                crate::tui::curve::TITLE,
                Focus::Attribute {
                    attribute,
                    alternative,
                },
            ))
        }
        _ => reply.say(
            Tone::Info,
            "a demand curve sweeps an attribute of an alternative",
        ),
    }
}
