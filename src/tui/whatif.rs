//! The what-if view: levers on the left, base against what-if shares as bars
//! on top (the band fills in when the worker's draws arrive), and the list of
//! changes; its keys step, type, reset, withdraw, save and export.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use super::app::{App, Ask, Tone, View};
use super::keys::Action;
use super::levers::{describe, stepped};
use super::prompt;
use super::widgets::{fixed, left, panel, right, share_bar, share_scale, signed};
use super::worker::{Job, DRAWS};
use crate::scenario::Target;

pub use super::levers::WhatIf;

/// Recomputes the current model's point forecast and requests its band.
pub fn refresh(app: &mut App) -> Vec<Job> {
    let index = app.current;
    let g = app.next_generation();
    match app.models.get_mut(index) {
        Some(l) => l.whatif.refresh(index, &l.model, g).into_iter().collect(),
        None => Vec::new(),
    }
}

pub fn on(app: &mut App, a: Action) -> Vec<Job> {
    let Some(l) = app.loaded_mut() else {
        return Vec::new();
    };
    let w = &mut l.whatif;
    let n = w.levers.len();
    let c = w.cursor.min(n.saturating_sub(1));
    match a {
        Action::Up => w.cursor = c.saturating_sub(1),
        Action::Down => w.cursor = (c + 1).min(n.saturating_sub(1)),
        Action::Top => w.cursor = 0,
        Action::Bottom => w.cursor = n.saturating_sub(1),
        Action::Left | Action::Right | Action::BigLeft | Action::BigRight if n > 0 => {
            let up = matches!(a, Action::Right | Action::BigRight);
            let big = matches!(a, Action::BigLeft | Action::BigRight);
            w.ops[c] = stepped(w.ops[c], up, big);
            return refresh(app);
        }
        Action::Enter | Action::Edit if n > 0 => prompt::open(app, Ask::Value, ""),
        Action::ResetLever if n > 0 => {
            w.ops[c] = None;
            return refresh(app);
        }
        Action::ResetAll => {
            w.ops.iter_mut().for_each(|o| *o = None);
            w.removed.clear();
            app.say(Tone::Info, "back to the base: every change withdrawn");
            return refresh(app);
        }
        Action::Withdraw => {
            let Some(k) = w.lever().and_then(|l| l.alternative) else {
                app.say(Tone::Info, "this lever belongs to no alternative");
                return Vec::new();
            };
            if let Some(p) = w.removed.iter().position(|&r| r == k) {
                w.removed.remove(p);
            } else if w.removed.len() + 2 > l.model.spec.alternatives.len() {
                app.say(
                    Tone::Bad,
                    "one alternative must stay: nothing left to choose",
                );
                return Vec::new();
            } else {
                w.removed.push(k);
                w.removed.sort_unstable();
            }
            return refresh(app);
        }
        Action::Save => prompt::open(app, Ask::Save, "whatif.toml"),
        Action::Export => prompt::open(app, Ask::Export, "whatif.csv"),
        Action::CurveOfLever => {
            if let Some(Target::Attribute {
                attribute,
                alternative,
            }) = w.lever().map(|l| l.target.clone())
            {
                let index = app.current;
                let g = app.next_generation();
                app.view = View::Curve;
                if let Some(l) = app.models.get_mut(index) {
                    l.curve.select(attribute, alternative);
                    return l.curve.request(index, &l.model, g).into_iter().collect();
                }
            } else {
                app.say(
                    Tone::Info,
                    "a demand curve sweeps an attribute of an alternative",
                );
            }
        }
        _ => {}
    }
    Vec::new()
}

pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let Some(l) = app.loaded() else {
        return;
    };
    let t = &app.theme;
    let w = &l.whatif;
    let spec = &l.model.spec;
    let j = w
        .best()
        .map(|f| f.shares.len())
        .unwrap_or(spec.alternatives.len());
    // One more line says that the figures are simulated.
    let simulated = u16::from(l.model.fit.family.abilities().simulation_draws);
    let [top, bottom] = Layout::vertical([
        Constraint::Length(j as u16 + 4 + simulated),
        Constraint::Min(3),
    ])
    .areas(area);
    let [levers, changes] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(bottom);

    // Shares.
    let block = panel("shares: base ┃ and what-if █, 95% band ▓░", t);
    let inner = block.inner(top);
    block.render(top, buf);
    let mut lines = Vec::new();
    let fixed_cols = 12 + 1 + 16 + 9 + 16;
    let bar_w = (inner.width as usize).saturating_sub(fixed_cols + 2).max(4);
    lines.push(Line::from(Span::styled(
        format!(
            "{}{}{}{}{}",
            left("alternative", 12),
            left(" share", bar_w + 1),
            right("base → what-if", 16),
            right("change", 9),
            right("95% band", 16)
        ),
        t.header(),
    )));
    match (w.best(), &w.error) {
        (Some(f), _) => {
            let scale = share_scale(f.shares.iter().flat_map(|r| [r.base, r.scenario, r.high]));
            let banded = w.band.is_some();
            for r in &f.shares {
                let gone = spec
                    .alternative_index(&r.alternative)
                    .is_some_and(|k| w.removed.contains(&k));
                let name = if gone {
                    format!("{} ✕", r.alternative)
                } else {
                    r.alternative.clone()
                };
                let band = banded.then_some((r.low, r.high));
                let mut spans = vec![Span::styled(left(&name, 12), t.bold()), Span::raw(" ")];
                spans.extend(share_bar(r.scenario, Some(r.base), band, scale, bar_w, t));
                spans.push(Span::raw(" "));
                spans.push(Span::raw(right(
                    &format!("{} → {}", fixed(r.base, 4), fixed(r.scenario, 4)),
                    16,
                )));
                let ch_style = if r.change.abs() >= 5e-5 {
                    t.bold()
                } else {
                    t.dim()
                };
                spans.push(Span::styled(right(&signed(r.change, 4), 9), ch_style));
                let band_text = if banded {
                    format!("{}–{}", fixed(r.low, 4), fixed(r.high, 4))
                } else {
                    "…".into()
                };
                spans.push(Span::styled(right(&band_text, 16), t.band()));
                lines.push(Line::from(spans));
            }
            let note = match (&w.band, &w.band_error) {
                (Some(b), _) if b.draws > 0 => {
                    format!("band: 95% of {} parameter draws (seed {})", b.draws, b.seed)
                }
                (Some(_), _) => "no band: the covariance is not positive definite".into(),
                (None, Some(e)) => format!("no band: {e}"),
                (None, None) => format!("drawing {DRAWS} parameter sets for the band…"),
            };
            lines.push(Line::from(Span::styled(note, t.dim())));
            if w.quick {
                lines.push(Line::from(Span::styled(
                    format!(
                        "quick figures from the first {} simulation draws of each decision maker; the full forecast fills in from the worker",
                        crate::model::draws::BAND_DRAWS
                    ),
                    t.warn(),
                )));
            } else if l.model.fit.family.abilities().simulation_draws {
                lines.push(Line::from(Span::styled(
                    format!(
                        "simulated: each decision maker's shares average over their draws; the band's parameter draws use the first {} of them",
                        crate::model::draws::BAND_DRAWS
                    ),
                    t.dim(),
                )));
            }
            // e.g. situations a withdrawal leaves with nothing to choose
            for warning in &f.warnings {
                lines.push(Line::from(Span::styled(format!("! {warning}"), t.warn())));
            }
        }
        (None, Some(e)) => lines.push(Line::from(Span::styled(e.clone(), t.warn()))),
        (None, None) => lines.push(Line::from("computing…")),
    }
    Paragraph::new(lines).render(inner, buf);

    // Levers.
    let block = panel("levers · ↑↓ choose · ←→ step", t);
    let inner = block.inner(levers);
    block.render(levers, buf);
    let rows = inner.height.saturating_sub(1) as usize;
    let first = w.cursor.saturating_sub(rows.saturating_sub(1));
    let cw = inner.width as usize;
    let (aw, vw) = (13, 9);
    let mut lines = vec![Line::from(Span::styled(
        format!(
            "{}{}{}",
            left(" alternative", aw),
            left("variable", vw),
            left(" change", cw.saturating_sub(aw + vw))
        ),
        t.header(),
    ))];
    for (i, (lever, op)) in w
        .levers
        .iter()
        .zip(&w.ops)
        .enumerate()
        .skip(first)
        .take(rows)
    {
        let alt = match lever.alternative {
            Some(k) if w.removed.contains(&k) => format!("{} ✕", spec.alternatives[k].name),
            Some(k) => spec.alternatives[k].name.clone(),
            None => "(everyone)".into(),
        };
        let change = op.as_ref().map(describe).unwrap_or_else(|| "·".into());
        let mark = if i == w.cursor { '›' } else { ' ' };
        let text = format!(
            "{mark}{}{} {}",
            left(&alt, aw - 1),
            left(&lever.variable, vw),
            change
        );
        let style = if i == w.cursor {
            t.selected()
        } else if op.is_some() {
            t.bold()
        } else {
            Default::default()
        };
        lines.push(Line::from(Span::styled(left(&text, cw), style)));
    }
    Paragraph::new(lines).render(inner, buf);

    // The what-if in words.
    let block = panel("this what-if", t);
    let inner = block.inner(changes);
    block.render(changes, buf);
    let mut lines = Vec::new();
    let listed: Vec<(String, String)> = w
        .levers
        .iter()
        .zip(&w.ops)
        .filter_map(|(lv, op)| {
            let op = op.as_ref()?;
            let of = match lv.alternative {
                Some(k) => format!("{} of {}", lv.variable, spec.alternatives[k].name),
                None => format!("{} (everyone)", lv.variable),
            };
            Some((of, describe(op)))
        })
        .collect();
    if listed.is_empty() && w.removed.is_empty() {
        lines.push(Line::from(Span::styled(
            "no change yet: the shares are the fitted base",
            t.dim(),
        )));
    }
    for (of, what) in listed {
        lines.push(Line::from(vec![
            Span::raw("• "),
            Span::raw(of),
            Span::raw(" "),
            Span::styled(what, t.bold()),
        ]));
    }
    for &k in &w.removed {
        lines.push(Line::from(vec![
            Span::raw("• "),
            Span::styled(format!("{} withdrawn", spec.alternatives[k].name), t.bold()),
        ]));
    }
    lines.push(Line::from(""));
    lines.push(Line::from(Span::styled(
        "⇧←→ big step · r/R reset · w withdraw · s save · x export · c curve",
        t.dim(),
    )));
    Paragraph::new(lines)
        .wrap(Wrap { trim: true })
        .render(inner, buf);
}
