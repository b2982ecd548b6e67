//! The terminal fit report: the registered sections' text blocks in page
//! order (`report`), the matrix layout they share, the cautions line and the
//! simulation check.

use std::fmt::Write;

use super::cautions;
use super::walk::Matrix;
use crate::estimate::Fit;
use crate::spec::Spec;

/// The terminal report of a fit: every registered section that the terminal
/// report has and that applies, in the registry's order; the analysis's
/// sections when `analysis` is given, the simulation check when `draws_check` is.
pub fn report(
    spec: &Spec,
    fit: &Fit,
    analysis: Option<&crate::analysis::Analysis>,
    draws_check: Option<&crate::estimate::simcheck::DrawsCheck>,
    colour: bool,
) -> String {
    let m = super::html::Material {
        spec,
        fit,
        spec_label: String::new(),
        analysis,
        forecasts: Vec::new(),
        curves: Err(String::new()),
        notes: Vec::new(),
    };
    let mut input = super::sections::Input::new(&m);
    input.colour = colour;
    input.draws_check = draws_check;
    super::sections::text(&input)
}

/// A matrix of the walk laid out in columns: its corner naming both axes,
/// the column labels, then one line per row (value ± s.e., or the share).
pub fn matrix(s: &mut String, m: &Matrix) {
    let (rows, cols) = (&m.rows.labels, &m.columns.labels);
    let corner = m.corner();
    let cells: Vec<Vec<String>> = (0..rows.len())
        .map(|r| (0..cols.len()).map(|c| m.cell_text(r, c, "±")).collect())
        .collect();
    let w = cols
        .iter()
        .chain(cells.iter().flatten())
        .map(|c| c.chars().count())
        .max()
        .unwrap_or(6)
        + 2;
    let lw = rows
        .iter()
        .chain([&corner])
        .map(|r| r.chars().count())
        .max()
        .unwrap_or(8)
        + 2;
    let _ = write!(s, "  {}", pad(&corner, lw));
    for c in cols {
        let _ = write!(s, "{c:>w$}");
    }
    let _ = writeln!(s);
    for (label, line) in rows.iter().zip(&cells) {
        let _ = write!(s, "  {}", pad(label, lw));
        for c in line {
            let _ = write!(s, "{c:>w$}");
        }
        let _ = writeln!(s);
    }
}

/// Text left-aligned in `width` characters.
fn pad(text: &str, width: usize) -> String {
    format!("{text:<width$}")
}

/// The closing line of every report.
pub fn closing(spec: &Spec, fit: &Fit) -> String {
    format!("{}\n", cautions(spec, &*fit.family))
}

/// The simulation check: each estimate on the second seed's draws.
pub fn draws_check(c: &crate::estimate::simcheck::DrawsCheck) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "simulation check: refitted on the draws of seed {} (the fit used seed {})",
        c.other_seed, c.seed
    );
    let _ = writeln!(
        s,
        "  {:<22}{:>13}{:>13}{:>13}{:>12}",
        "parameter", "this fit", "other seed", "difference", "in s.e."
    );
    for r in &c.rows {
        let _ = writeln!(
            s,
            "  {:<22}{:>13.5}{:>13.5}{:>13.5}{:>12.3}",
            r.name, r.estimate, r.other, r.difference, r.in_std_errors
        );
    }
    let verdict = if !c.largest.is_finite() {
        "cannot be judged: the fit has no standard errors to measure the moves against"
    } else if c.largest < 0.1 {
        "the draws are enough: no estimate moves by a tenth of its standard error"
    } else if c.largest < 0.5 {
        "simulation noise is small next to sampling noise; more draws would tighten it"
    } else {
        "estimates move by half a standard error or more: use more draws ([simulation].draws)"
    };
    let _ = writeln!(
        s,
        "  log-likelihood {:.4} against {:.4} · largest move {:.3} s.e.: {verdict}",
        c.log_likelihood, c.other_log_likelihood, c.largest
    );
    s
}
