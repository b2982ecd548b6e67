//! The compare view: with several specs open, estimates by parameter name and
//! the fit statistics side by side, the AIC and BIC ranks, and the
//! likelihood-ratio tests where one model nests another (the library's
//! `analysis::compare`).

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::analysis::compare::{self, Comparison};
use crate::estimate::Fit;
use crate::report::{errors_label, num, plus_minus, pval, shown_error};
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, Scroll, View};
use crate::tui::widgets::{fixed, left, panel, right};

/// The compare view: the comparison of every opened model, once all are open.
#[derive(Debug, Default)]
pub struct Compare {
    pub scroll: Scroll,
    pub comparison: Option<Comparison>,
}

impl View for Compare {
    fn title(&self) -> &'static str {
        "compare"
    }

    fn about(&self) -> &'static str {
        "specs side by side"
    }

    fn keys(&self) -> &'static [Key] {
        &[]
    }

    fn opened(&mut self, ctx: &Ctx, _index: usize) -> Vec<crate::tui::worker::Job> {
        if ctx.all_open() && ctx.models.len() > 1 {
            let fits: Vec<&Fit> = ctx.models.iter().map(|l| l.model.fit.as_ref()).collect();
            self.comparison = Some(compare::compare(&fits));
        }
        Vec::new()
    }

    fn act(&mut self, ctx: &Ctx, action: Action, _reply: &mut Reply) {
        let height = self.height(ctx);
        self.scroll.on(action, height);
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        self.draw(ctx, area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

impl Compare {
    /// How many lines the comparison takes (for the scroll limit).
    pub fn height(&self, ctx: &Ctx) -> usize {
        self.comparison
            .as_ref()
            .map(|c| content(ctx, c, 80).len())
            .unwrap_or(0)
    }

    fn draw(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        let t = ctx.theme;
        let block = panel("compare · ↑↓ scroll", t);
        let Some(c) = &self.comparison else {
            none_open(t, block, area, buf);
            return;
        };
        let lines = content(ctx, c, area.width.saturating_sub(4) as usize);
        Paragraph::new(lines)
            .scroll((self.scroll.0, 0))
            .block(block)
            .render(area, buf);
    }
}

/// With one spec open: how to open several.
fn none_open(
    t: &crate::tui::theme::Theme,
    block: ratatui::widgets::Block,
    area: Rect,
    buf: &mut Buffer,
) {
    Paragraph::new(vec![
            Line::from("One spec is open. To compare models, open several:"),
            Line::from(""),
            Line::from(Span::styled(
                "  sharecast explore specs/commute.toml specs/commute_generic.toml",
                t.bold(),
            )),
            Line::from(""),
            Line::from(Span::styled(
                "Estimates and fit statistics are then set side by side, with likelihood-ratio tests where one model nests another.",
                t.dim(),
            )),
        ])
        .wrap(ratatui::widgets::Wrap { trim: true })
        .block(block)
        .render(area, buf);
}

fn content(ctx: &Ctx, c: &Comparison, inner_w: usize) -> Vec<Line<'static>> {
    let t = ctx.theme;
    let fits: Vec<_> = ctx.models.iter().map(|l| &l.model.fit).collect();
    let nw = 18;
    let cw = (inner_w.saturating_sub(nw) / fits.len().max(1)).clamp(12, 24);
    let mut lines = Vec::new();
    for ((id, l), f) in c.ids.iter().zip(ctx.models).zip(&fits) {
        let title = l.model.spec.title.as_deref().unwrap_or("untitled");
        lines.push(Line::from(vec![
            Span::styled(format!("{id} "), t.accent()),
            Span::raw(format!("{} — {title}", l.model.path.display())),
        ]));
        lines.push(Line::from(Span::styled(
            format!("   s.e. {}", errors_label(f)),
            t.dim(),
        )));
    }
    let mut head = left("value ± s.e.", nw);
    for id in &c.ids {
        head.push_str(&right(id, cw));
    }
    lines.push(Line::from(Span::styled(head, t.header())));
    for p in &c.parameters {
        let mut s = left(p, nw);
        for f in &fits {
            let cell = match f.parameters.iter().find(|r| &r.name == p) {
                Some(r) if r.fixed => format!("{} fixed", num(r.estimate, 0).trim()),
                Some(r) => plus_minus(r.estimate, shown_error(f, r)),
                None => "·".into(),
            };
            s.push_str(&right(&cell, cw));
        }
        lines.push(Line::from(s));
    }
    fit_rows(c, &fits, (nw, cw), t, &mut lines);
    lines.push(Line::from(""));
    lines.push(Line::from(Span::styled(
        "zero model: all coefficients 0, available alternatives equally likely",
        t.dim(),
    )));
    if let Some(n) = &c.note {
        lines.push(Line::from(Span::styled(n.clone(), t.bold())));
    }
    if c.nested.is_empty() {
        lines.push(Line::from(Span::styled(
            "no model nests another on the same data: no likelihood-ratio test",
            t.dim(),
        )));
    }
    for n in &c.nested {
        lines.push(Line::from(vec![
            Span::styled(
                format!("{} nests in {}: ", c.ids[n.restricted], c.ids[n.general]),
                t.bold(),
            ),
            Span::raw(format!(
                "LR χ² {} on {} df, p {}",
                fixed(n.test.statistic, 3),
                n.test.df,
                pval(n.test.p_value)
            )),
        ]));
    }
    lines
}

/// The fit statistics side by side, with the AIC and BIC ranks.
fn fit_rows(
    c: &Comparison,
    fits: &[&std::sync::Arc<Fit>],
    (nw, cw): (usize, usize),
    t: &crate::tui::theme::Theme,
    lines: &mut Vec<Line<'static>>,
) {
    let mut head = left("fit", nw);
    for id in &c.ids {
        head.push_str(&right(id, cw));
    }
    lines.push(Line::from(""));
    lines.push(Line::from(Span::styled(head, t.header())));
    let rank = |r: &[usize], i: usize| {
        r.iter()
            .position(|&x| x == i)
            .map(|p| format!(" ({})", p + 1))
            .unwrap_or_default()
    };
    let labels = [
        "situations",
        "K estimated",
        "log-likelihood",
        "rho² vs zero",
        "adjusted rho²",
        "AIC (rank)",
        "BIC (rank)",
        "converged",
    ];
    for (row, label) in labels.iter().enumerate() {
        let mut s = left(label, nw);
        for (i, f) in fits.iter().enumerate() {
            let st = &f.stats;
            let cell = match row {
                0 => st.situations.to_string(),
                1 => st.estimated_parameters.to_string(),
                2 => fixed(st.log_likelihood, 3),
                3 => fixed(st.rho_squared, 4),
                4 => fixed(st.adjusted_rho_squared, 4),
                5 => format!("{}{}", fixed(st.aic, 2), rank(&c.aic_rank, i)),
                6 => format!("{}{}", fixed(st.bic, 2), rank(&c.bic_rank, i)),
                _ => if st.converged { "yes" } else { "NO" }.to_string(),
            };
            s.push_str(&right(&cell, cw));
        }
        lines.push(Line::from(s));
    }
}
