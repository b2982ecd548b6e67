//! A matrix of the report walk (`report::walk::Matrix`) drawn for the
//! terminal: the corner names both axes, each row is labelled, and cells are
//! shaded by size on a heat scale (with a glyph that says the same without
//! colour) or written plain. The elasticity and diversion views share it;
//! `pick` cuts a matrix with many alternatives to the rows and columns on
//! screen (the largest by share, the rows the view's filter keeps).

use ratatui::text::{Line, Span};

use super::app::Loaded;
use super::filter::{largest, Filter, MOST};
use super::theme::Theme;
use super::widgets::{left, right};
use crate::report::num;
use crate::report::walk::{Axis, Cell, Holds, Matrix};

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

/// The part of a matrix on screen, and what was left out.
pub struct Picked {
    pub matrix: Matrix,
    /// The rows the filter keeps, and all rows.
    pub kept: usize,
    pub rows: usize,
    /// Whether rows or columns were cut, and the columns shown of all.
    pub cut: bool,
    pub columns: (usize, usize),
}

impl Picked {
    /// What the rows and columns shown are, when some were left out.
    pub fn note(&self, order: &str) -> Option<String> {
        if !self.cut {
            return None;
        }
        let shown = self.matrix.rows.labels.len();
        let rows = if self.kept < self.rows {
            format!("rows {shown} of {} matching", self.kept)
        } else {
            format!("rows {shown} of {}", self.rows)
        };
        let (c, of) = self.columns;
        Some(format!("showing {rows} · columns {c} of {of}, {order}"))
    }
}

/// Whether an axis's labels name alternatives (what the filter narrows).
fn names_alternatives(holds: &Holds) -> bool {
    matches!(
        holds,
        Holds::Changed(_) | Holds::Withdrawn | Holds::ShareOf | Holds::MovesTo
    )
}

/// Columns of a matrix that fit in `width` (at most `filter::MOST`).
pub fn columns_fit(m: &Matrix, width: usize) -> usize {
    let longest = m.rows.labels.iter().map(|l| l.chars().count()).max();
    let lw = (m.corner().chars().count().max(longest.unwrap_or(0)) + 2).clamp(16, 30);
    // All columns at the grid's narrowest cells when they fit (few
    // alternatives); else a little wider, for the largest.
    let room = width.saturating_sub(lw);
    if m.columns.labels.len() <= room / 8 {
        return m.columns.labels.len().max(1);
    }
    (room / 9).clamp(1, MOST)
}

/// The rows and columns shown: all when they fit; otherwise the largest by
/// `share` (columns the filter keeps first), the rows the filter keeps
/// scrolled from `offset`, `room` being (rows, columns) that fit.
pub fn pick(
    m: &Matrix,
    share: &dyn Fn(&str) -> f64,
    filter: &Filter,
    offset: usize,
    room: (usize, usize),
) -> Picked {
    let (rl, cl) = (&m.rows.labels, &m.columns.labels);
    let kept = if names_alternatives(&m.rows.holds) {
        filter.kept(rl)
    } else {
        (0..rl.len()).collect()
    };
    let order = if kept.len() <= room.0 {
        kept.clone()
    } else {
        largest(&kept, |i| share(&rl[i]))
    };
    let start = offset.min(order.len().saturating_sub(room.0));
    let rows: Vec<usize> = order.iter().skip(start).take(room.0).copied().collect();
    let cols: Vec<usize> = if cl.len() <= room.1 {
        (0..cl.len()).collect()
    } else {
        let all: Vec<usize> = (0..cl.len()).collect();
        let by = largest(&all, |i| share(&cl[i]));
        let (first, rest): (Vec<usize>, Vec<usize>) = by
            .into_iter()
            .partition(|&i| filter.active() && filter.keeps(&cl[i]));
        first.into_iter().chain(rest).take(room.1).collect()
    };
    let cut = rows.len() < rl.len() || cols.len() < cl.len();
    let sub = Matrix {
        measure: m.measure,
        rows: Axis {
            holds: m.rows.holds.clone(),
            labels: rows.iter().map(|&r| rl[r].clone()).collect(),
        },
        columns: Axis {
            holds: m.columns.holds.clone(),
            labels: cols.iter().map(|&c| cl[c].clone()).collect(),
        },
        cells: rows
            .iter()
            .flat_map(|&r| cols.iter().map(move |&c| m.cell(r, c)))
            .collect(),
    };
    Picked {
        matrix: sub,
        kept: kept.len(),
        rows: rl.len(),
        cut,
        columns: (cols.len(), cl.len()),
    }
}

/// Each alternative's predicted share by name, to pick the largest.
pub fn share_of(l: &Loaded) -> impl Fn(&str) -> f64 + '_ {
    let by: std::collections::HashMap<&str, f64> = l
        .model
        .fit
        .shares
        .iter()
        .map(|r| (r.alternative.as_str(), r.predicted))
        .collect();
    move |name| by.get(name).copied().unwrap_or(f64::NAN)
}
