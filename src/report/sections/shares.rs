//! "Observed and predicted shares": the fit's shares (chart and table), the
//! hit rate, the hold-out check and shares by segment.

use std::fmt::Write;

use super::{Input, Section};
use crate::report::html::page::{figure, label_cell, not_applicable, num_cell, table};
use crate::report::html::svg::{self, Pair};
use crate::report::html::Chart;
use crate::report::walk::Walk;

pub struct Shares;

/// What stands in for the shares of a fit on sampled sets drawn straight
/// from the tables (`fit --no-analysis` on large data).
const NOT_OVER_FULL_SETS: &str = "shares over the full sets: not computed (the fit drew its sampled sets straight from the tables, the full sets being large; `sharecast simulate` forecasts over them in chunks)";

/// The share rows shown (the analysis's top alternatives, or by default the
/// top ones of a model with many; every one otherwise) and how many are not.
fn shown<'a>(input: &Input<'a>) -> (Vec<&'a crate::estimate::ShareRow>, usize) {
    let fit = input.m.fit;
    let rows: Vec<&crate::estimate::ShareRow> = match input.m.analysis {
        Some(a) => match &a.top {
            Some(top) => top
                .iter()
                .filter_map(|n| fit.shares.iter().find(|r| &r.alternative == n))
                .collect(),
            None => fit.shares.iter().collect(),
        },
        None => crate::analysis::focus(fit, None)
            .into_iter()
            .filter_map(|k| fit.shares.get(k))
            .collect(),
    };
    let hidden = fit.shares.len() - rows.len();
    (rows, hidden)
}

/// The sentence under a table cut to the top alternatives.
fn more(hidden: usize) -> String {
    format!("… and {hidden} more alternatives, largest predicted share first above (every one in the results document, `--json`)")
}

/// Observed against predicted shares, one row per alternative.
fn share_table<'r>(
    class: &str,
    first: &str,
    shares: impl IntoIterator<Item = &'r crate::estimate::ShareRow>,
) -> String {
    let rows: Vec<String> = shares
        .into_iter()
        .map(|r| {
            format!(
                "{}{}{}",
                label_cell(&r.alternative),
                num_cell(&format!("{:.4}", r.observed)),
                num_cell(&format!("{:.4}", r.predicted))
            )
        })
        .collect();
    table(class, &[first, "observed", "predicted"], &rows)
}

/// What the hold-out check scored and its log-likelihood.
fn holdout(h: &crate::analysis::validation::HoldoutReport) -> String {
    format!(
        "{} situations scored by a fit on the other {}; log-likelihood {:.4} (zero model {:.4})",
        h.situations, h.estimation_situations, h.log_likelihood, h.null_log_likelihood
    )
}

/// Hit rate and the hold-out check.
fn validation(w: &Walk) -> String {
    let v = &w.validation;
    let mut s = format!(
        "<p>Hit rate <span class=\"num\" id=\"hit-rate\">{:.4}</span> (most probable alternative chosen), mean probability of the choice <span class=\"num\">{:.4}</span>.</p>\n",
        v.hit_rate, v.mean_chosen_probability
    );
    if let Some(h) = &v.holdout {
        let _ = writeln!(s, "<p>Hold-out: {}.</p>", holdout(h));
        s.push_str(&share_table("holdout", "alternative (hold-out)", &h.shares));
    }
    s
}

/// The text report's validation lines.
fn validation_text(s: &mut String, w: &Walk) {
    let v = &w.validation;
    let _ = writeln!(
        s,
        "\nvalidation: hit rate {:.4} (most probable alternative chosen), mean probability of the choice {:.4}",
        v.hit_rate, v.mean_chosen_probability
    );
    if let Some(h) = &v.holdout {
        let _ = writeln!(s, "  hold-out: {}", holdout(h));
        for r in &h.shares {
            let _ = writeln!(
                s,
                "    {:<16} observed {:.4}   predicted {:.4}",
                r.alternative, r.observed, r.predicted
            );
        }
    }
    if !w.segments.is_empty() {
        let _ = writeln!(
            s,
            "  by segment        alternative        n   observed  predicted"
        );
        for r in &w.segments {
            let _ = writeln!(
                s,
                "    {:<16}{:<16}{:>6}{:>11.4}{:>11.4}",
                r.segment, r.alternative, r.situations, r.observed, r.predicted
            );
        }
    }
}

impl Section for Shares {
    fn names(&self) -> (&'static str, &'static str) {
        ("shares", "Observed and predicted shares")
    }

    fn html(&self, input: &Input, charts: &mut Vec<Chart>) -> String {
        let (rows, hidden) = shown(input);
        let pairs: Vec<Pair> = rows
            .iter()
            .map(|r| Pair {
                label: r.alternative.clone(),
                first: r.observed,
                second: r.predicted,
                band: None,
            })
            .collect();
        let chart = svg::pairs(
            "Observed and predicted shares",
            ("observed", "predicted"),
            &pairs,
        );
        let mut s = figure(&chart, "Weighted shares: observed in the data (light) and predicted by the model, summed over the sample (dark).");
        charts.push(Chart {
            name: "shares".into(),
            svg: chart,
        });
        s.push_str(&share_table("shares", "alternative", rows.iter().copied()));
        if hidden > 0 {
            let _ = writeln!(s, "<p>{}.</p>", more(hidden));
        }
        if let Some(g) = input.m.analysis.and_then(|a| a.by_alternative.as_ref()) {
            s.push_str(&grouped_html(g));
        }
        match &input.walk {
            Some(w) => s.push_str(&validation(w)),
            None => s.push_str(&not_applicable(
                "The analysis was skipped, so there is no hit rate or hold-out check.",
            )),
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        if input.m.fit.shares.is_empty() {
            return Some(NOT_OVER_FULL_SETS.to_string() + "\n");
        }
        let mut s = String::from("shares (weighted)   observed   predicted\n");
        let (rows, hidden) = shown(input);
        for r in rows {
            let _ = writeln!(
                s,
                "  {:<16}{:>11.4}{:>12.4}",
                r.alternative, r.observed, r.predicted
            );
        }
        if hidden > 0 {
            let _ = writeln!(s, "  {}", more(hidden));
        }
        if let Some(g) = input.m.analysis.and_then(|a| a.by_alternative.as_ref()) {
            grouped_text(&mut s, g);
        }
        if let Some(w) = &input.walk {
            validation_text(&mut s, w);
        }
        Some(s)
    }
}

/// The text report's shares and diversion by a column of the table of alternatives.
fn grouped_text(s: &mut String, g: &crate::analysis::grouped::Grouped) {
    let _ = writeln!(
        s,
        "\nby {} (alternatives grouped)   alternatives   observed   predicted",
        g.column
    );
    for r in &g.groups {
        let _ = writeln!(
            s,
            "  {:<30}{:>12}{:>11.4}{:>12.4}",
            r.group, r.alternatives, r.observed, r.predicted
        );
    }
    if !g.diversion.is_empty() {
        let _ = writeln!(
            s,
            "  when every alternative of one {} is withdrawn, the share of its demand each other one gains:",
            g.column
        );
        for r in &g.diversion {
            let _ = writeln!(s, "    {:<20} → {:<20}{:>9.4}", r.removed, r.to, r.share);
        }
    }
}

/// The HTML report's shares and diversion by a column of the table of alternatives.
fn grouped_html(g: &crate::analysis::grouped::Grouped) -> String {
    let rows: Vec<String> = g
        .groups
        .iter()
        .map(|r| {
            format!(
                "{}{}{}{}",
                label_cell(&r.group),
                num_cell(&r.alternatives.to_string()),
                num_cell(&format!("{:.4}", r.observed)),
                num_cell(&format!("{:.4}", r.predicted))
            )
        })
        .collect();
    let first = format!("{} (alternatives grouped)", g.column);
    let mut s = table(
        "by-alternative",
        &[first.as_str(), "alternatives", "observed", "predicted"],
        &rows,
    );
    if !g.diversion.is_empty() {
        let rows: Vec<String> = g
            .diversion
            .iter()
            .map(|r| {
                format!(
                    "{}{}{}",
                    label_cell(&r.removed),
                    label_cell(&r.to),
                    num_cell(&format!("{:.4}", r.share))
                )
            })
            .collect();
        let _ = writeln!(
            s,
            "<p>When every alternative of one {} is withdrawn, the share of its predicted demand each other one gains:</p>",
            g.column
        );
        s.push_str(&table(
            "by-alternative-diversion",
            &["withdrawn", "to", "share"],
            &rows,
        ));
    }
    s
}
