//! "Observed and predicted shares": the fit's shares (chart and table), the
//! hit rate, the hold-out check and shares by segment.

use std::fmt::Write;

use super::{Input, Section};
use crate::report::html::page::{figure, label_cell, not_applicable, num_cell, table};
use crate::report::html::svg::{self, Pair};
use crate::report::html::Chart;
use crate::report::walk::Walk;

pub struct Shares;

/// Observed against predicted shares, one row per alternative.
fn share_table(class: &str, first: &str, shares: &[crate::estimate::ShareRow]) -> String {
    let rows: Vec<String> = shares
        .iter()
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
        let fit = input.m.fit;
        let pairs: Vec<Pair> = fit
            .shares
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
        s.push_str(&share_table("shares", "alternative", &fit.shares));
        match &input.walk {
            Some(w) => s.push_str(&validation(w)),
            None => s.push_str(&not_applicable(
                "The analysis was skipped, so there is no hit rate or hold-out check.",
            )),
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let mut s = String::from("shares (weighted)   observed   predicted\n");
        for r in &input.m.fit.shares {
            let _ = writeln!(
                s,
                "  {:<16}{:>11.4}{:>12.4}",
                r.alternative, r.observed, r.predicted
            );
        }
        if let Some(w) = &input.walk {
            validation_text(&mut s, w);
        }
        Some(s)
    }
}
