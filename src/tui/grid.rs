//! A matrix of the report walk (`report::walk::Matrix`) drawn for the
//! terminal: the corner names both axes, each row is labelled, and cells are
//! shaded by size on a heat scale (with a glyph that says the same without
//! colour) or written plain. The elasticity and diversion views share it.

use ratatui::text::{Line, Span};

use super::theme::Theme;
use super::widgets::{left, right};
use crate::report::num;
use crate::report::walk::{Cell, Matrix};

/// How cells are written.
#[derive(Clone, Copy, Debug)]
pub enum Shade {
    /// Signed values on a heat scale with these cuts (elasticities, changes).
    Signed(&'static [f64; 4]),
    /// Shares of demand on a heat scale with these cuts (diversion).
    Share(&'static [f64; 4]),
    /// Plain numbers (marginal effects).
    Plain,
}

/// The matrix's lines in `width` columns: a header with the corner, then one line per row.
pub fn lines(m: &Matrix, shade: Shade, width: usize, t: &Theme) -> Vec<Line<'static>> {
    let corner = m.corner();
    let longest = m
        .rows
        .labels
        .iter()
        .map(|l| l.chars().count())
        .max()
        .unwrap_or(0);
    let lw = (corner.chars().count().max(longest) + 2).clamp(16, 30);
    let cols = &m.columns.labels;
    let cw = (width.saturating_sub(lw) / cols.len().max(1)).clamp(8, 14);
    let mut head = left(&corner, lw);
    for c in cols {
        head.push_str(&right(c, cw));
    }
    let mut out = vec![Line::from(Span::styled(head, t.header()))];
    for (r, label) in m.rows.labels.iter().enumerate() {
        let mut spans = vec![Span::styled(left(label, lw), t.bold())];
        for c in 0..cols.len() {
            spans.push(cell(m.cell(r, c), shade, cw, t));
        }
        out.push(Line::from(spans));
    }
    out
}

/// One cell, right-aligned in `cw` columns.
fn cell(c: Cell, shade: Shade, cw: usize, t: &Theme) -> Span<'static> {
    let v = match c {
        Cell::Value(f) if f.value.is_finite() => f.value,
        Cell::Missing if matches!(shade, Shade::Plain) => return Span::raw(right("", cw)),
        _ => return Span::styled(right("—", cw), t.dim()),
    };
    match shade {
        Shade::Signed(cuts) => Span::styled(
            right(&format!("{v:+.3} {}", Theme::glyph(v, cuts)), cw),
            t.heat(v, cuts),
        ),
        Shade::Share(cuts) => Span::styled(
            right(&format!("{v:.3} {}", Theme::glyph(v, cuts)), cw),
            t.heat(v, cuts),
        ),
        Shade::Plain => Span::raw(right(num(v, 0).trim(), cw)),
    }
}

/// The legend of a heat scale: each glyph in its colour with its cut.
pub fn legend(label: &str, cuts: &[f64; 4], signed: bool, t: &Theme) -> Vec<Span<'static>> {
    let mut out = vec![Span::styled(format!("{label} "), t.dim())];
    for (g, c) in super::theme::GLYPHS.iter().skip(1).zip(cuts) {
        let at = if signed { -c } else { *c };
        out.push(Span::styled(format!(" {g}"), t.heat(at, cuts)));
        out.push(Span::styled(format!("≥{c} "), t.dim()));
    }
    out
}
