//! "The design": what it is (alternatives, tasks, blocks, parameters), its
//! D- and A-error, and how the search went.

use std::fmt::Write;

use super::{fig, DesignSection};
use crate::experiment::Outcome;
use crate::report::html::page::esc;

pub struct Summary;

/// The facts as (label, value) pairs, shared by the page and the text.
fn facts(o: &Outcome) -> Vec<(&'static str, String)> {
    let per = o.tasks.len() / o.blocks.max(1);
    let criterion = if o.bayesian {
        format!(
            "{} (Bayesian: the mean over {} prior draws; {} at the prior means)",
            fig(o.d_error),
            o.draws,
            fig(o.d_error_at_means)
        )
    } else {
        format!("{} (at the fixed priors)", fig(o.d_error))
    };
    let s = &o.search;
    let singular = s.start_d_errors.iter().filter(|d| !d.is_finite()).count();
    let starts = match median(&s.start_d_errors) {
        Some(m) if m.is_finite() => format!("median {}", fig(m)),
        _ => "mostly singular".into(),
    };
    let starts = if singular > 0 {
        format!("{starts}; {singular} of {} singular", s.starts)
    } else {
        starts
    };
    vec![
        ("alternatives", o.alternatives.join(", ")),
        (
            "tasks",
            format!("{} in {} block(s) of {per}", o.tasks.len(), o.blocks),
        ),
        ("parameters", o.parameters.join(", ")),
        ("D-error", criterion),
        ("A-error", fig(o.a_error)),
        (
            "search",
            format!(
                "best of {} level-balanced random starts (start {}), {} swaps tried in {:.1} s; the random starts' D-error before the search: {starts}",
                s.starts, s.best_start, s.swaps_tried, s.seconds
            ),
        ),
        (
            "level balance",
            if o.balanced {
                "every attribute's levels appear equally often (within one) in each block and alternative".into()
            } else {
                "not balanced in every block".into()
            },
        ),
    ]
}

/// The median (infinite values sort last); None for no values.
fn median(v: &[f64]) -> Option<f64> {
    let mut v = v.to_vec();
    v.sort_by(|a, b| a.total_cmp(b));
    v.get(v.len() / 2).copied()
}

impl DesignSection for Summary {
    fn names(&self) -> (&'static str, &'static str) {
        ("design", "The design")
    }

    fn html(&self, o: &Outcome) -> String {
        let mut s = String::from("<dl class=\"facts\">\n");
        for (label, value) in facts(o) {
            let _ = writeln!(s, "<dt>{}</dt><dd>{}</dd>", esc(label), esc(&value));
        }
        s.push_str("</dl>\n");
        s
    }

    fn text(&self, o: &Outcome) -> Option<String> {
        let mut s = format!("{}\n", super::title(o));
        for (label, value) in facts(o) {
            let _ = writeln!(s, "  {label:<14} {value}");
        }
        Some(s)
    }
}
