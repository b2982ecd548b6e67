//! The diversion view: where an alternative's demand goes when it is
//! withdrawn, and the price diversion ratios for a change in the row's price
//! attribute, both from the analysis and shaded by size.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::tui::app::Pending;
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, View};
use crate::tui::theme::{Theme, GLYPHS, SHARE_CUTS};
use crate::tui::widgets::{left, panel, right};
use crate::tui::worker::Model;

/// Rows of (row label, [(column label, value)]) drawn as a shaded matrix.
fn matrix(
    rows: &[String],
    cols: &[String],
    value: &dyn Fn(&str, &str) -> Option<f64>,
    width: usize,
    corner: &str,
    t: &Theme,
) -> Vec<Line<'static>> {
    let lw = (corner.chars().count() + 2).max(16);
    let cw = (width.saturating_sub(lw) / cols.len().max(1)).clamp(8, 14);
    let mut head = left(corner, lw);
    for c in cols {
        head.push_str(&right(c, cw));
    }
    let mut lines = vec![Line::from(Span::styled(head, t.header()))];
    for r in rows {
        let mut spans = vec![Span::styled(left(r, lw), t.bold())];
        for c in cols {
            spans.push(Span::raw(" "));
            match value(r, c) {
                Some(v) if r != c => {
                    let g = Theme::glyph(v, &SHARE_CUTS);
                    spans.push(Span::styled(
                        right(&format!("{v:.3} {g}"), cw - 1),
                        t.heat(v, &SHARE_CUTS),
                    ));
                }
                _ => spans.push(Span::styled(right("—", cw - 1), t.dim())),
            }
        }
        lines.push(Line::from(spans));
    }
    lines
}

/// The diversion view: nothing to choose, nothing to scroll.
#[derive(Debug, Default)]
pub struct Diversion;

impl View for Diversion {
    fn title(&self) -> &'static str {
        "diversion"
    }

    fn about(&self) -> &'static str {
        "where demand goes if withdrawn"
    }

    fn keys(&self) -> &'static [Key] {
        &[]
    }

    fn applies(&self, model: &Model) -> Result<(), String> {
        if model.fit.family.abilities().ordered {
            return Err(format!(
                "diversion does not apply to the {} family: its categories are ratings on one ordered scale, never withdrawn or added. The what-if and elasticities views show how the characteristics move the ratings.",
                model.fit.family.name()
            ));
        }
        Ok(())
    }

    fn act(&mut self, _ctx: &Ctx, _action: Action, _reply: &mut Reply) {}

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        render(ctx, area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

fn render(ctx: &Ctx, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let a = match &l.analysis {
        Pending::Ready(a) => a,
        other => {
            let msg = match other {
                Pending::Failed(e) => e.clone(),
                _ => "computing the diversion ratios…".into(),
            };
            Paragraph::new(msg)
                .block(panel("diversion", t))
                .render(area, buf);
            return;
        }
    };
    let alts = l.model.spec.alternative_names();
    let mut removed: Vec<String> = Vec::new();
    for r in &a.diversion {
        if !removed.contains(&r.removed) {
            removed.push(r.removed.clone());
        }
    }
    let mut changed: Vec<String> = Vec::new();
    for r in &a.price_diversion {
        if !changed.contains(&r.changed) {
            changed.push(r.changed.clone());
        }
    }
    let top_h = removed.len() as u16 + 4;
    let [top, bottom] =
        Layout::vertical([Constraint::Length(top_h), Constraint::Min(3)]).areas(area);

    let block = panel(
        "diversion on withdrawal · share of the withdrawn alternative's demand",
        t,
    );
    let inner = block.inner(top);
    block.render(top, buf);
    let get = |r: &str, c: &str| {
        a.diversion
            .iter()
            .find(|d| d.removed == r && d.to == c)
            .map(|d| d.share)
    };
    let mut lines = matrix(
        &removed,
        &alts,
        &get,
        inner.width as usize,
        "withdrawn ↓  to →",
        t,
    );
    let mut legend = vec![Span::styled("share ", t.dim())];
    for (g, c) in GLYPHS.iter().skip(1).zip(SHARE_CUTS) {
        legend.push(Span::styled(format!(" {g}"), t.heat(c, &SHARE_CUTS)));
        legend.push(Span::styled(format!("≥{c} "), t.dim()));
    }
    lines.push(Line::from(legend));
    Paragraph::new(lines).render(inner, buf);

    let attr = a
        .price_diversion
        .first()
        .map(|r| r.attribute.clone())
        .unwrap_or_default();
    let title = if attr.is_empty() {
        "price diversion ratios".to_string()
    } else {
        format!("{attr} diversion ratios · −(dQ to / d{attr}) ÷ (dQ own / d{attr})")
    };
    let block = panel(title, t);
    let inner = block.inner(bottom);
    block.render(bottom, buf);
    if changed.is_empty() {
        Paragraph::new(Span::styled(
            "no shared attribute to read as a price: the spec has none",
            t.dim(),
        ))
        .render(inner, buf);
        return;
    }
    let get = |r: &str, c: &str| {
        a.price_diversion
            .iter()
            .find(|d| d.changed == r && d.to == c)
            .map(|d| d.ratio)
    };
    let lines = matrix(
        &changed,
        &alts,
        &get,
        inner.width as usize,
        &format!("{attr} of ↓  to →"),
        t,
    );
    Paragraph::new(lines).render(inner, buf);
}
