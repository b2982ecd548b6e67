//! The estimates view's latent classes side by side: one column per class
//! with its share in the header, a parameter every class shares once across,
//! the membership model against class 1, what each class chooses, and the
//! class shares by each membership column's values (membership model and
//! given choices); the starts line and its warnings on top. Everything as
//! the walk holds it (`walk::LatentClasses`), the errors as chosen with `e`.

use ratatui::text::{Line, Span};

use super::{fit_robust, shown, State};
use crate::estimate::Fit;
use crate::report::plus_minus;
use crate::report::walk::{Across, Estimated, LatentClasses, Row};
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, left, right};

/// A figure with the errors chosen: value ± s.e., or the value and "fixed".
pub fn figure(fit: &Fit, e: &Estimated, robust: bool) -> String {
    match fit.parameters.get(e.parameter) {
        Some(r) if !r.fixed => {
            let s = shown(r, robust, fit_robust(fit));
            plus_minus(s.estimate, s.std_error)
        }
        _ => format!("{} fixed", crate::report::num(e.value, 0).trim()),
    }
}

/// The rows the cursor moves over: the tastes, then the membership model.
pub fn rows(c: &LatentClasses) -> usize {
    c.tastes.iter().map(|b| b.rows.len()).sum::<usize>() + c.membership.len()
}

/// Widths of the label column and of each class's column.
struct Widths {
    label: usize,
    class: usize,
}

/// One row: its label, then one cell per class (a shared figure across).
fn row_line(fit: &Fit, r: &Row, robust: bool, at: bool, w: &Widths, t: &Theme) -> Line<'static> {
    let mark = if at { '›' } else { ' ' };
    let mut text = left(&format!("{mark} {}", r.name), w.label);
    match &r.across {
        Across::Shared(e) => {
            text.push_str(&right(&figure(fit, e, robust), w.class));
            text.push_str("  · shared by every class");
        }
        Across::PerClass(cells) => {
            for c in cells {
                let cell = c.as_ref().map(|e| figure(fit, e, robust));
                text.push_str(&right(&cell.unwrap_or_default(), w.class));
            }
        }
    }
    let style = if at { t.selected() } else { Default::default() };
    Line::from(Span::styled(text, style))
}

/// The lines above the table that stay when it scrolls: the panel or
/// cross-section, the starts and their warnings, the classes and their shares.
fn top(c: &LatentClasses, w: &Widths, t: &Theme) -> Vec<Line<'static>> {
    let mut out = vec![Line::from(Span::styled(
        c.structure_line().to_string(),
        t.dim(),
    ))];
    if let Some(s) = c.starts_line() {
        out.push(Line::from(Span::styled(s, t.dim())));
    }
    for x in &c.warnings {
        out.push(Line::from(Span::styled(format!("! {x}"), t.warn())));
    }
    let mut names = left("class →", w.label);
    let mut shares = left("share of decision makers", w.label);
    for x in &c.classes {
        names.push_str(&right(&x.name, w.class));
        shares.push_str(&right(
            &plus_minus(x.share.value, x.share.std_error),
            w.class,
        ));
    }
    out.push(Line::from(Span::styled(names, t.header())));
    out.push(Line::from(Span::styled(shares, t.header())));
    out
}

/// What each class chooses and the class shares by each membership column.
fn below(c: &LatentClasses, alternatives: &[String], w: &Widths, t: &Theme) -> Vec<Line<'static>> {
    let mut out = vec![
        Line::from(""),
        Line::from(Span::styled("▸ what each class chooses", t.accent())),
    ];
    for (j, a) in alternatives.iter().enumerate() {
        let mut text = left(&format!("  {a}"), w.label);
        for x in &c.classes {
            let p = x.predicted.get(j).map_or("—".into(), |p| fixed(*p, 4));
            text.push_str(&right(&p, w.class));
        }
        out.push(Line::from(text));
    }
    for by in &c.by_column {
        out.push(Line::from(""));
        out.push(Line::from(Span::styled(
            format!(
                "▸ class shares by {}: membership model / given choices (decision makers)",
                by.column
            ),
            t.accent(),
        )));
        for b in &by.bands {
            let mut text = left(&format!("  {} ({})", b.label, b.decision_makers), w.label);
            for (p, q) in b.prior.iter().zip(&b.posterior) {
                text.push_str(&right(
                    &format!("{} / {}", fixed(*p, 3), fixed(*q, 3)),
                    w.class,
                ));
            }
            out.push(Line::from(text));
        }
    }
    out
}

/// The view's lines for a model with classes; the line the cursor is on and
/// how many lines stay on top when scrolling.
pub fn lines(
    c: &LatentClasses,
    fit: &Fit,
    alternatives: &[String],
    st: &State,
    t: &Theme,
) -> (Vec<Line<'static>>, usize, usize) {
    let robust = st.robust.unwrap_or_else(|| fit_robust(fit));
    let every = c.tastes.iter().flat_map(|b| &b.rows).chain(&c.membership);
    let label = every
        .clone()
        .map(|r| r.name.chars().count() + 4)
        .chain(c.by_column.iter().flat_map(|b| {
            b.bands
                .iter()
                .map(|x| x.label.chars().count() + x.decision_makers.to_string().len() + 6)
        }))
        .chain([26])
        .max()
        .unwrap_or(26);
    let w = Widths { label, class: 22 };
    let mut out = top(c, &w, t);
    let pinned = out.len();
    let cursor = st.cursor.min(rows(c).saturating_sub(1));
    let mut cursor_line = 0;
    let mut at = 0;
    let mut push = |out: &mut Vec<Line<'static>>, r: &Row| {
        if at == cursor {
            cursor_line = out.len();
        }
        out.push(row_line(fit, r, robust, at == cursor, &w, t));
        at += 1;
    };
    for b in &c.tastes {
        out.push(Line::from(Span::styled(
            format!("▸ {}", b.term),
            t.accent(),
        )));
        for r in &b.rows {
            push(&mut out, r);
        }
    }
    out.push(Line::from(Span::styled(
        "▸ membership model: each class against class 1",
        t.accent(),
    )));
    let mut names = left("", w.label);
    for n in c.against_first() {
        names.push_str(&right(&n, w.class));
    }
    out.push(Line::from(Span::styled(names, t.dim())));
    for r in &c.membership {
        push(&mut out, r);
    }
    out.extend(below(c, alternatives, &w, t));
    (out, cursor_line, pinned)
}
