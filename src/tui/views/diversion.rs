//! The diversion view: where an alternative's demand goes when it is
//! withdrawn, and the price diversion ratios for a change in the row's price
//! attribute, both from the analysis and shaded by size.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::report::walk::{Holds, Matrix};
use crate::tui::app::Pending;
use crate::tui::grid::{self, Shade};
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, View};
use crate::tui::theme::{Theme, SHARE_CUTS};
use crate::tui::widgets::panel;
use crate::tui::worker::Model;

/// The diversion view: nothing to choose, nothing to scroll.
#[derive(Debug, Default)]
pub struct Diversion;

impl View for Diversion {
    fn title(&self) -> &'static str {
        "diversion"
    }

    fn about(&self) -> &'static str {
        "where demand goes"
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
    let walk = match (&l.analysis, &l.walk) {
        (_, Some(w)) => w,
        (other, None) => {
            let msg = match other {
                Pending::Failed(e) => e.clone(),
                _ => l.analysing(),
            };
            Paragraph::new(msg)
                .block(panel("diversion", t))
                .render(area, buf);
            return;
        }
    };
    let rows = walk.withdrawal.as_ref().map_or(0, |m| m.rows.labels.len());
    let [top, bottom] =
        Layout::vertical([Constraint::Length(rows as u16 + 4), Constraint::Min(3)]).areas(area);
    let block = panel(
        "diversion on withdrawal · share of the withdrawn alternative's demand",
        t,
    );
    let inner = block.inner(top);
    block.render(top, buf);
    let mut lines = match &walk.withdrawal {
        Some(m) => grid::lines(m, Shade::Share(&SHARE_CUTS), inner.width as usize, t),
        None => vec![Line::from(Span::styled("no withdrawal figures", t.dim()))],
    };
    lines.push(Line::from(grid::legend("share", &SHARE_CUTS, false, t)));
    Paragraph::new(lines).render(inner, buf);
    price_panel(walk.price_diversion.as_ref(), t, bottom, buf);
}

/// Diversion ratios for a change in the price attribute, or why there are none.
fn price_panel(m: Option<&Matrix>, t: &Theme, area: Rect, buf: &mut Buffer) {
    let Some(m) = m else {
        let block = panel("price diversion ratios", t);
        let inner = block.inner(area);
        block.render(area, buf);
        Paragraph::new(Span::styled(
            "no shared attribute to read as a price: the spec has none",
            t.dim(),
        ))
        .render(inner, buf);
        return;
    };
    let attr = match &m.rows.holds {
        Holds::Changed(a) => a.clone(),
        _ => "price".into(),
    };
    let block = panel(
        format!("{attr} diversion ratios · −(dQ to / d{attr}) ÷ (dQ own / d{attr})"),
        t,
    );
    let inner = block.inner(area);
    block.render(area, buf);
    let lines = grid::lines(m, Shade::Share(&SHARE_CUTS), inner.width as usize, t);
    Paragraph::new(lines).render(inner, buf);
}
