//! The what-if's panel of shares by latent class: each class's shares at
//! the base and after the what-if, with the class's size in its heading, as
//! the worker's job returned them (`analysis::classes::by_class`).

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use super::levers::WhatIf;
use crate::tui::app::Loaded;
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, left, panel, right, signed};

/// Columns of each class: base → what-if and the change.
const CLASS_W: usize = 30;

/// The panel: a heading per class with its size, then one line per
/// alternative (those of `rows` when the shares panel shows only some).
pub fn render(
    w: &WhatIf,
    rows: Option<&[usize]>,
    l: &Loaded,
    t: &Theme,
    area: Rect,
    buf: &mut Buffer,
) {
    let block = panel(
        "shares by latent class: base → what-if (change) · b hides",
        t,
    );
    let inner = block.inner(area);
    block.render(area, buf);
    let Some(c) = &w.classes else {
        let text = match (&w.band_error, &w.error) {
            (Some(e), _) | (None, Some(e)) => e.clone(),
            (None, None) => "computing each class's shares…".into(),
        };
        Paragraph::new(Line::from(Span::styled(text, t.dim()))).render(inner, buf);
        return;
    };
    let names: Vec<String> = match w.best() {
        Some(f) => f.shares.iter().map(|r| r.alternative.clone()).collect(),
        None => l.model.spec.alternative_names(),
    };
    let mut head = left("alternative", 12);
    for (k, size) in c.size.iter().enumerate() {
        head.push_str(&right(
            &format!("class {} ({:.1}% of situations)", k + 1, 100.0 * size),
            CLASS_W + 4,
        ));
    }
    let mut lines = vec![Line::from(Span::styled(head, t.header()))];
    let all: Vec<usize> = (0..names.len()).collect();
    for &j in rows.unwrap_or(&all) {
        let Some(name) = names.get(j) else {
            continue;
        };
        let mut text = left(name, 12);
        for (base, after) in c.base.iter().zip(&c.after) {
            let (b, a) = (base.get(j).copied(), after.get(j).copied());
            let cell = match (b, a) {
                (Some(b), Some(a)) => {
                    format!("{} → {} ({})", fixed(b, 4), fixed(a, 4), signed(a - b, 4))
                }
                (None, Some(a)) => format!("new → {}", fixed(a, 4)),
                _ => "—".into(),
            };
            text.push_str(&right(&cell, CLASS_W + 4));
        }
        lines.push(Line::from(text));
    }
    Paragraph::new(lines).render(inner, buf);
}
