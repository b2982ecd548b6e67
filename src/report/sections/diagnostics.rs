//! "Diagnostics": the fit's diagnostics, the analysis's tests and warnings,
//! and in the terminal report the simulation check (`fit --draws-check`).

use std::fmt::Write;

use super::{Input, Section};
use crate::estimate::DiagnosticKind;
use crate::report::html::page::{esc, label_cell, num_cell, table};
use crate::report::html::Chart;
use crate::report::pval;
use crate::report::walk::{Test, TestKind, Walk};

pub struct Diagnostics;

const NONE: &str = "the Hessian is well conditioned and no coefficient runs off";

/// The tests table and the analysis warnings on the page.
fn tests_html(w: &Walk) -> String {
    let mut s = String::new();
    let rows: Vec<String> = w
        .tests
        .iter()
        .filter_map(|t| {
            let note = match &t.kind {
                TestKind::Wald => String::new(),
                TestKind::SingleIndex {
                    unordered_log_likelihood,
                    note,
                } => format!(
                    "likelihood ratio; unordered logit log-likelihood {unordered_log_likelihood:.4}; note: {note}"
                ),
                TestKind::Iia { .. } => return None,
            };
            Some(format!(
                "{}{}{}{}{}",
                label_cell(&t.name),
                num_cell(&format!("{:.4}", t.statistic)),
                num_cell(&t.df.to_string()),
                num_cell(&pval(t.p_value)),
                label_cell(&note)
            ))
        })
        .collect();
    if !rows.is_empty() {
        s.push_str("<h3>tests</h3>\n");
        s.push_str(&table(
            "tests",
            &["test", "statistic", "df", "p", "note"],
            &rows,
        ));
    }
    if !w.warnings.is_empty() {
        s.push_str("<ul class=\"warn\">\n");
        for x in &w.warnings {
            let _ = writeln!(s, "<li>{}</li>", esc(x));
        }
        s.push_str("</ul>\n");
    }
    s
}

/// One test in the terminal report, after a blank line.
fn test_text(s: &mut String, t: &Test) {
    match &t.kind {
        TestKind::SingleIndex {
            unordered_log_likelihood,
            note,
        } => {
            let _ = writeln!(
                s,
                "\n{}: likelihood ratio {:.4}, {} df, p {} (unordered logit log-likelihood {:.4})\n  note: {}",
                t.name, t.statistic, t.df, pval(t.p_value), unordered_log_likelihood, note
            );
        }
        TestKind::Wald => {
            let _ = writeln!(
                s,
                "\n{}: statistic {:.4}, {} df, p {}",
                t.name,
                t.statistic,
                t.df,
                pval(t.p_value)
            );
        }
        TestKind::Iia {
            dropped,
            compared,
            note,
        } => {
            let _ = writeln!(
                s,
                "\n{}: statistic {:.4}, {} df, p {}",
                t.name,
                t.statistic,
                t.df,
                pval(t.p_value),
            );
            let _ = writeln!(
                s,
                "  the coefficients {} are estimated again without `{dropped}`; if IIA holds they should barely move. The {} degrees of freedom count the independent ways they can move that the test measures.",
                compared.join(", "),
                t.df
            );
            if let Some(n) = note {
                let _ = writeln!(s, "  note: {n}");
            }
        }
    }
}

impl Section for Diagnostics {
    fn names(&self) -> (&'static str, &'static str) {
        ("diagnostics", "Diagnostics")
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let fit = input.m.fit;
        let mut s = String::new();
        if fit.diagnostics.is_empty() {
            let _ = writeln!(s, "<p>None — {NONE}.</p>");
        } else {
            s.push_str("<ul class=\"warn\">\n");
            for d in &fit.diagnostics {
                let _ = writeln!(s, "<li>{}</li>", esc(&d.message));
            }
            s.push_str("</ul>\n");
        }
        if let Some(w) = &input.walk {
            s.push_str(&tests_html(w));
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let fit = input.m.fit;
        let mut s = String::new();
        if fit.diagnostics.is_empty() {
            let _ = writeln!(s, "diagnostics: none — {NONE}");
        } else {
            let _ = writeln!(s, "diagnostics");
        }
        for d in &fit.diagnostics {
            let line = format!("  ! {}", d.message);
            let line = if d.kind == DiagnosticKind::NotConverged {
                crate::report::red(&line, input.colour)
            } else {
                line
            };
            let _ = writeln!(s, "{line}");
        }
        if let Some(w) = &input.walk {
            for t in &w.tests {
                test_text(&mut s, t);
            }
            for x in &w.warnings {
                let _ = writeln!(s, "  ! {x}");
            }
        }
        if let Some(c) = input.draws_check {
            s.push('\n');
            s.push_str(&crate::report::text::draws_check(c));
        }
        Some(s)
    }
}
