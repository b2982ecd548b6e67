//! The what-if view's drawing: base against what-if shares as bars on top
//! (the band fills in when the worker's draws arrive), the levers on the
//! left and the list of changes on the right; between them, when asked,
//! each latent class's shares (`classes`).

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use super::levers::{describe, WhatIf};
use crate::spec::Spec;
use crate::tui::app::Loaded;
use crate::tui::part::Ctx;
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, left, panel, right, share_bar, share_scale, signed};
use crate::tui::worker::DRAWS;

pub fn render(w: &WhatIf, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let spec = &l.model.spec;
    let j = w
        .best()
        .map(|f| f.shares.len())
        .unwrap_or(spec.alternatives.len());
    // One more line says that the figures are simulated.
    let simulated = u16::from(l.model.fit.family.abilities().simulation_draws);
    let by_class = if w.by_class { j as u16 + 3 } else { 0 };
    let [top, classes, bottom] = Layout::vertical([
        Constraint::Length(j as u16 + 4 + simulated),
        Constraint::Length(by_class),
        Constraint::Min(3),
    ])
    .areas(area);
    let [levers, changes] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(bottom);

    shares_panel(w, l, t, top, buf);
    if by_class > 0 {
        super::classes::render(w, l, t, classes, buf);
    }
    levers_panel(w, spec, t, levers, buf);
    changes_panel(w, spec, t, changes, buf);
}

/// Base against what-if shares as bars, with the band and its notes.
fn shares_panel(w: &WhatIf, l: &Loaded, t: &Theme, top: Rect, buf: &mut Buffer) {
    let spec = &l.model.spec;
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
            lines.extend(notes(w, l, f, t));
        }
        (None, Some(e)) => lines.push(Line::from(Span::styled(e.clone(), t.warn()))),
        (None, None) => lines.push(Line::from("computing…")),
    }
    Paragraph::new(lines).render(inner, buf);
}

/// The levers, the cursor's selected.
fn levers_panel(w: &WhatIf, spec: &Spec, t: &Theme, levers: Rect, buf: &mut Buffer) {
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
}

/// The what-if in words.
fn changes_panel(w: &WhatIf, spec: &Spec, t: &Theme, changes: Rect, buf: &mut Buffer) {
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

/// Under the shares: where the band stands, whether the figures are
/// simulated or quick, and the forecast's warnings.
fn notes(w: &WhatIf, l: &Loaded, f: &crate::scenario::Forecast, t: &Theme) -> Vec<Line<'static>> {
    let mut lines = Vec::new();
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
    lines
}
