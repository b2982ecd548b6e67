//! The estimates view's grid of correlated tastes: the correlations of the
//! underlying normals (and of the coefficients themselves where some are
//! lognormal) as the walk holds them, drawn by `tui::grid` on the
//! correlation heat scale, with the test that they are independent.

use ratatui::text::{Line, Span};

use crate::report::heat::CORRELATION_CUTS;
use crate::report::pval;
use crate::report::walk::{Correlated, Matrix};
use crate::tui::grid::{self, Shade};
use crate::tui::theme::Theme;

/// A matrix's grid two columns in, like the other figures below the table.
fn indented(m: &Matrix, width: usize, t: &Theme) -> Vec<Line<'static>> {
    let shade = Shade::Signed(&CORRELATION_CUTS);
    let mut lines = grid::lines(m, shade, width.saturating_sub(2), t);
    for l in &mut lines {
        l.spans.insert(0, Span::raw("  "));
    }
    lines
}

/// The grid's lines in `width` columns: a heading, the normals' matrix, the
/// coefficients' own where they differ, the legend and the test.
pub fn grid(c: &Correlated, width: usize, t: &Theme) -> Vec<Line<'static>> {
    let mut out = vec![
        Line::from(""),
        Line::from(Span::styled(
            "▸ correlated tastes: correlations of the underlying normals (logarithms, for lognormals)",
            t.accent(),
        )),
    ];
    out.extend(indented(&c.normals, width, t));
    if let Some(m) = &c.own {
        out.push(Line::from(Span::styled(
            "  the coefficients themselves (lognormal ones from the closed-form moments)",
            t.dim(),
        )));
        out.extend(indented(m, width, t));
    }
    let mut legend = vec![Span::raw("  ")];
    legend.extend(grid::legend("|r|", &CORRELATION_CUTS, true, t));
    legend.push(Span::styled(
        " · warm: move apart · cool: move together",
        t.dim(),
    ));
    out.push(Line::from(legend));
    if let Some(test) = &c.independence {
        out.push(Line::from(Span::styled(
            format!(
                "  {}: statistic {:.2}, {} df, p {}",
                test.name,
                test.statistic,
                test.df,
                pval(test.p_value)
            ),
            t.dim(),
        )));
    }
    out
}
