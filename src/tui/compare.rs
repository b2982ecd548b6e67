//! The compare view: with several specs open, estimates by parameter name and
//! the fit statistics side by side, the AIC and BIC ranks, and the
//! likelihood-ratio tests where one model nests another (the library's
//! `analysis::compare`).

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use super::app::App;
use super::widgets::{fixed, left, panel, right};
use crate::analysis::compare::Comparison;
use crate::report::{errors_label, num, plus_minus, pval, shown_error};

pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    let block = panel("compare · ↑↓ scroll", t);
    let Some(c) = &app.comparison else {
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
        return;
    };
    let lines = content(app, c, area.width.saturating_sub(4) as usize);
    Paragraph::new(lines)
        .scroll((app.scroll[6], 0))
        .block(block)
        .render(area, buf);
}

/// How many lines the comparison takes (for the scroll limit).
pub fn height(app: &App) -> usize {
    app.comparison
        .as_ref()
        .map(|c| content(app, c, 80).len())
        .unwrap_or(0)
}

fn content(app: &App, c: &Comparison, inner_w: usize) -> Vec<Line<'static>> {
    let t = &app.theme;
    let fits: Vec<_> = app.models.iter().map(|l| &l.model.fit).collect();
    let nw = 18;
    let cw = (inner_w.saturating_sub(nw) / fits.len().max(1)).clamp(12, 24);
    let mut lines = Vec::new();
    for ((id, l), f) in c.ids.iter().zip(&app.models).zip(&fits) {
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
