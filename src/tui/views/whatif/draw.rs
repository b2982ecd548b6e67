//! The what-if view's drawing: base against what-if shares as bars on top
//! (the band fills in when the worker's draws arrive), the levers on the
//! left and the list of changes on the right; between them, when asked,
//! each latent class's shares (`classes`). With many alternatives the shares
//! show the rows the filter keeps, the largest changes (or shares) first.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use super::levers::{describe, WhatIf};
use crate::scenario::Forecast;
use crate::spec::Spec;
use crate::tui::app::Loaded;
use crate::tui::filter::{self, Filter, MOST};
use crate::tui::part::Ctx;
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, left, panel, right, share_bar, share_scale, signed};
use crate::tui::worker::DRAWS;

/// The rows of the shares shown (positions in the forecast's shares) and
/// the note on what they are when some are left out.
pub struct Shown {
    pub rows: Vec<usize>,
    pub note: Option<String>,
}

/// The shares the filter keeps: all in spec order when they fit in `room`
/// lines, else the largest changes first (the largest shares when nothing
/// changed), from `offset`.
pub fn shown(f: &Forecast, filter: &Filter, offset: usize, room: usize) -> Shown {
    let kept = filter.kept(f.shares.iter().map(|r| r.alternative.as_str()));
    let n = f.shares.len();
    if kept.len() <= room {
        let note = (kept.len() < n).then(|| filter::showing(kept.len(), n, ""));
        return Shown { rows: kept, note };
    }
    let changed = f.shares.iter().any(|r| r.change.abs() >= 5e-5);
    let (order, by) = if changed {
        (
            filter::largest(&kept, |i| f.shares[i].change.abs()),
            "largest changes first",
        )
    } else {
        (
            filter::largest(&kept, |i| f.shares[i].base),
            "largest shares first",
        )
    };
    let start = offset.min(order.len().saturating_sub(room));
    let rows: Vec<usize> = order.into_iter().skip(start).take(room).collect();
    let of = if kept.len() < n {
        format!("{} matching of {n}", kept.len())
    } else {
        n.to_string()
    };
    let note = format!(
        "showing rows {}–{} of {of}, {by} · PgUp PgDn",
        start + 1,
        start + rows.len()
    );
    Shown {
        rows,
        note: Some(note),
    }
}

pub fn render(
    w: &WhatIf,
    (filter, offset): (&Filter, usize),
    ctx: &Ctx,
    area: Rect,
    buf: &mut Buffer,
) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let spec = &l.model.spec;
    let kept = filter.kept(w.lever_names(spec));
    let matching = filter.kept(spec.alternative_names()).len();
    let area = filter.split(area, matching, spec.alternatives.len(), t, buf);
    // One more line says that the figures are simulated.
    let simulated = u16::from(l.model.fit.family.abilities().simulation_draws);
    let room = (area.height as usize)
        .saturating_sub(4 + 8 + simulated as usize)
        .clamp(1, MOST);
    let rows = w.best().map(|f| shown(f, filter, offset, room));
    if let Some(r) = &rows {
        filter.seen(r.rows.len());
    }
    let j = rows
        .as_ref()
        .map_or(spec.alternatives.len().min(room), |r| {
            r.rows.len() + usize::from(r.note.is_some())
        });
    let by_class = if w.by_class { j as u16 + 3 } else { 0 };
    let [top, classes, bottom] = Layout::vertical([
        Constraint::Length(j as u16 + 4 + simulated),
        Constraint::Length(by_class),
        Constraint::Min(3),
    ])
    .areas(area);
    let [levers, changes] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(bottom);

    shares_panel(w, rows.as_ref(), l, t, top, buf);
    if by_class > 0 {
        let picked = rows.as_ref().map(|r| r.rows.as_slice());
        super::classes::render(w, picked, l, t, classes, buf);
    }
    levers_panel(w, (spec, &kept), t, levers, buf);
    changes_panel(w, spec, t, changes, buf);
}

/// Base against what-if shares as bars, with the band and its notes.
fn shares_panel(
    w: &WhatIf,
    shown: Option<&Shown>,
    l: &Loaded,
    t: &Theme,
    top: Rect,
    buf: &mut Buffer,
) {
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
            if let Some(note) = shown.and_then(|s| s.note.clone()) {
                lines.push(Line::from(Span::styled(note, t.dim())));
            }
            let all: Vec<usize> = (0..f.shares.len()).collect();
            let rows = shown.map_or(all.as_slice(), |s| s.rows.as_slice());
            for r in rows.iter().filter_map(|&i| f.shares.get(i)) {
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

/// The levers the filter keeps (`kept`), the cursor's selected.
fn levers_panel(
    w: &WhatIf,
    (spec, kept): (&Spec, &[usize]),
    t: &Theme,
    levers: Rect,
    buf: &mut Buffer,
) {
    let title = if kept.len() < w.levers.len() {
        format!(
            "levers · {} of {} · ↑↓ choose · ←→ step",
            kept.len(),
            w.levers.len()
        )
    } else {
        "levers · ↑↓ choose · ←→ step".to_string()
    };
    let block = panel(title, t);
    let inner = block.inner(levers);
    block.render(levers, buf);
    let rows = inner.height.saturating_sub(1) as usize;
    let at = kept.iter().position(|&i| i == w.cursor).unwrap_or(0);
    let first = filter::first(at, kept.len(), rows);
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
    for &i in kept.iter().skip(first).take(rows) {
        let (Some(lever), Some(op)) = (w.levers.get(i), w.ops.get(i)) else {
            continue;
        };
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
