//! The diversion view: where an alternative's demand goes when it is
//! withdrawn, and the price diversion ratios for a change in the row's price
//! attribute, both from the analysis and shaded by size. With many
//! alternatives both show the largest by share (rows narrowed by the filter,
//! scrolled with ↑↓ PgUp PgDn).

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::report::walk::{Holds, Matrix};
use crate::tui::app::Pending;
use crate::tui::filter::{Filter, Took, MOST};
use crate::tui::grid::{self, Shade};
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, View};
use crate::tui::theme::{Theme, SHARE_CUTS};
use crate::tui::widgets::panel;
use crate::tui::worker::Model;

/// The diversion view: with many alternatives, the filter of the rows and
/// the first row shown.
#[derive(Debug, Default)]
pub struct Diversion {
    pub filter: Filter,
    pub offset: usize,
}

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

    fn typing(&self) -> bool {
        self.filter.typing()
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

    fn act(&mut self, ctx: &Ctx, action: Action, _reply: &mut Reply) {
        match self.filter.on(action) {
            Took::Changed => self.offset = 0,
            Took::Kept => {}
            Took::Not => {
                let rows = ctx
                    .loaded()
                    .and_then(|l| l.walk.as_ref())
                    .and_then(|w| w.withdrawal.as_ref().or(w.price_diversion.as_ref()))
                    .map_or(0, |m| self.filter.kept(&m.rows.labels).len());
                self.offset = self.filter.scroll(self.offset, rows, action);
            }
        }
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        render(self, ctx, area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

fn render(view: &Diversion, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
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
    let names = l.model.spec.alternative_names();
    let area = view
        .filter
        .split(area, view.filter.kept(&names).len(), names.len(), t, buf);
    let share = grid::share_of(l);
    let width = area.width.saturating_sub(4) as usize;
    // Rows that fit above the price panel (at least 3 lines).
    let room = (area.height as usize)
        .saturating_sub(5 + 1 + 3)
        .clamp(1, MOST);
    let pick = |m: &Matrix, room: usize| {
        grid::pick(
            m,
            &share,
            &view.filter,
            view.offset,
            (room, grid::columns_fit(m, width)),
        )
    };
    let withdrawal = walk.withdrawal.as_ref().map(|m| pick(m, room));
    if let Some(p) = &withdrawal {
        view.filter.seen(p.matrix.rows.labels.len());
    }
    let note = withdrawal
        .as_ref()
        .and_then(|p| p.note("largest shares first"));
    let rows = withdrawal.as_ref().map_or(0, |p| {
        p.matrix.rows.labels.len() + usize::from(note.is_some())
    });
    let [top, bottom] =
        Layout::vertical([Constraint::Length(rows as u16 + 4), Constraint::Min(3)]).areas(area);
    let block = panel(
        "diversion on withdrawal · share of the withdrawn alternative's demand",
        t,
    );
    let inner = block.inner(top);
    block.render(top, buf);
    let mut lines: Vec<Line> = note
        .map(|n| Line::from(Span::styled(n, t.dim())))
        .into_iter()
        .collect();
    match &withdrawal {
        Some(p) => lines.extend(grid::lines(&p.matrix, Shade::Share(&SHARE_CUTS), width, t)),
        None => lines.push(Line::from(Span::styled("no withdrawal figures", t.dim()))),
    }
    lines.push(Line::from(grid::legend("share", &SHARE_CUTS, false, t)));
    Paragraph::new(lines).render(inner, buf);
    let price_room = (bottom.height as usize).saturating_sub(3).clamp(1, MOST);
    let price = walk.price_diversion.as_ref().map(|m| pick(m, price_room));
    price_panel(price.as_ref().map(|p| &p.matrix), t, bottom, buf);
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
