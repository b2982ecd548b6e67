//! "Estimates": each parameter grouped by the spec term it comes from, with
//! its errors, t, p and 95% interval (and the interval chart on the page); a
//! (negative-)lognormal coefficient's location is labelled the mean of its
//! logarithm, with the coefficient's median beside it; in willingness-to-pay
//! space, a line saying which parameter is the price scale and each row's unit.

use std::fmt::Write;

use super::{Input, Section};
use crate::report::html::page::{esc, figure, label_cell, note, num_cell, short, table};
use crate::report::html::svg::{self, Interval};
use crate::report::html::Chart;
use crate::report::walk::{Estimate, Estimates};
use crate::report::{errors_label, num, plus_minus, pval};

pub struct EstimatesSection;

/// The line above the table: which errors, and that the Hessian's are beside.
fn errors_line(input: &Input) -> String {
    format!(
        "value ± standard error {}; t, p and the 95% interval use these errors{}",
        errors_label(input.m.fit),
        if input.estimates.robust {
            " (the Hessian's errors beside)"
        } else {
            ""
        }
    )
}

/// The interval chart's rows, one group per spec term.
fn interval_groups(e: &Estimates) -> Vec<(String, Vec<Interval>)> {
    e.terms
        .iter()
        .map(|t| {
            let rows = t
                .rows
                .iter()
                .map(|r| Interval {
                    label: r.label(),
                    value: r.value,
                    low: if r.fixed { f64::NAN } else { r.interval.0 },
                    high: if r.fixed { f64::NAN } else { r.interval.1 },
                    fixed: r.fixed,
                })
                .collect();
            (t.term.clone(), rows)
        })
        .collect()
}

/// The estimates table: a heading row per term, then its parameters.
fn html_table(e: &Estimates) -> String {
    let mut header = vec!["parameter", "value", "s.e.", "t", "p", "95% interval"];
    if e.robust {
        header.push("Hessian s.e.");
    }
    if e.odds {
        header.push("odds ×");
    }
    if e.has_medians() {
        header.push("coefficient's median");
    }
    if e.space.is_some() {
        header.push(UNIT);
    }
    let mut rows = Vec::new();
    for t in &e.terms {
        rows.push(format!(
            "<td class=\"l\" colspan=\"{}\">{}</td>",
            header.len(),
            esc(&t.term)
        ));
        for r in &t.rows {
            rows.push(html_row(e, r, header.len()));
        }
    }
    // Term rows are the ones with a single spanning cell.
    table("estimates", &header, &rows).replace(
        "<tr><td class=\"l\" colspan",
        "<tr class=\"term\"><td class=\"l\" colspan",
    )
}

/// One parameter's cells.
fn html_row(e: &Estimates, r: &Estimate, columns: usize) -> String {
    let median = r
        .median
        .map(|m| plus_minus(m.value, m.std_error))
        .unwrap_or_default();
    if r.fixed {
        let mut row = format!(
            "{}{}<td class=\"l\" colspan=\"{}\">(fixed)</td>",
            label_cell(&r.label()),
            num_cell(&short(r.value)),
            columns - 2 - usize::from(e.has_medians()) - usize::from(e.space.is_some())
        );
        if e.has_medians() {
            row.push_str(&num_cell(&median));
        }
        if e.space.is_some() {
            row.push_str(&label_cell(r.unit.as_deref().unwrap_or("")));
        }
        return row;
    }
    let mut row = label_cell(&r.label());
    row.push_str(&num_cell(&short(r.value)));
    row.push_str(&num_cell(&short(r.std_error)));
    row.push_str(&num_cell(&if r.t.is_finite() {
        format!("{:.2}", r.t)
    } else {
        "—".into()
    }));
    row.push_str(&num_cell(&pval(r.p)));
    row.push_str(&num_cell(&format!(
        "{} … {}",
        short(r.interval.0),
        short(r.interval.1)
    )));
    if e.robust {
        row.push_str(&num_cell(&short(r.hessian_std_error)));
    }
    if e.odds {
        row.push_str(&num_cell(&r.odds_ratio.map(short).unwrap_or_default()));
    }
    if e.has_medians() {
        row.push_str(&num_cell(&median));
    }
    if e.space.is_some() {
        row.push_str(&label_cell(r.unit.as_deref().unwrap_or("")));
    }
    row
}

/// A t statistic in its column, a dash when there is none.
fn tstat(t: f64) -> String {
    if t.is_finite() {
        format!("{t:>9.2}")
    } else {
        format!("{:>9}", "—")
    }
}

/// One parameter's text line.
fn text_row(s: &mut String, e: &Estimates, r: &Estimate) {
    let mut median = r
        .median
        .map(|m| format!("   median {}", plus_minus(m.value, m.std_error)))
        .unwrap_or_default();
    if let Some(u) = &r.unit {
        let _ = write!(median, "   · {u}");
    }
    if r.fixed {
        let _ = writeln!(
            s,
            "  │ {:<24}{}   (fixed){median}",
            r.label(),
            num(r.value, 12)
        );
        return;
    }
    let interval = format!("{} … {}", num(r.interval.0, 0), num(r.interval.1, 0));
    let hessian = if e.robust {
        format!("  {}", num(r.hessian_std_error, 13))
    } else {
        String::new()
    };
    let odds = r
        .odds_ratio
        .map(|o| format!("  {}", num(o, 8)))
        .unwrap_or_default();
    let value = format!("{} ± {:<9}", num(r.value, 12), num(r.std_error, 0).trim());
    let _ = writeln!(
        s,
        "  │ {:<24}{value}{}{:>10}   {:<25}{hessian}{odds}{median}",
        r.label(),
        tstat(r.t),
        pval(r.p),
        interval
    );
}

impl Section for EstimatesSection {
    fn names(&self) -> (&'static str, &'static str) {
        ("estimates", "Estimates")
    }

    fn html(&self, input: &Input, charts: &mut Vec<Chart>) -> String {
        let e = &input.estimates;
        let mut s = note(&errors_line(input));
        if let Some(space) = &e.space {
            s.push_str(&note(&space.line()));
        }
        let chart = svg::intervals("Estimates with 95% intervals", &interval_groups(e));
        s.push_str(&figure(
            &chart,
            "Each estimate (dot) with its 95% interval (bar); each term has its own axis, since terms are measured in different units. The dashed line is zero.",
        ));
        charts.push(Chart {
            name: "estimates".into(),
            svg: chart,
        });
        s.push_str(&html_table(e));
        if !e.against.is_empty() {
            let against: Vec<String> = e
                .against
                .iter()
                .map(|(name, null)| format!("{name} against {null}"))
                .collect();
            s.push_str(&note(&format!(
                "t and p test each value against 0, except {}",
                against.join(", ")
            )));
        }
        if e.has_medians() {
            s.push_str(&note(MEDIAN_NOTE));
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let e = &input.estimates;
        let mut s = String::new();
        let _ = writeln!(s, "estimates · {}", errors_line(input));
        if let Some(space) = &e.space {
            let _ = writeln!(s, "  {}", space.line());
        }
        let _ = writeln!(
            s,
            "  {:<26}{:>24}{:>9}{:>10}   {:<25}{}{}{}",
            "parameter",
            "value ± s.e.",
            "t",
            "p",
            "95% interval",
            if e.robust { "   Hessian s.e." } else { "" },
            if e.odds { "  odds ×" } else { "" },
            if e.has_medians() {
                "   coefficient's median"
            } else {
                ""
            }
        );
        for t in &e.terms {
            let _ = writeln!(s, "  ┌ {}", t.term);
            for r in &t.rows {
                text_row(&mut s, e, r);
            }
        }
        if !e.against.is_empty() {
            let against: Vec<String> = e
                .against
                .iter()
                .map(|(name, null)| format!("{name} against {}", (null * 1e6).round() / 1e6))
                .collect();
            let _ = writeln!(
                s,
                "  t and p test each value against 0, except {}",
                against.join(", ")
            );
        }
        if e.has_medians() {
            let _ = writeln!(s, "  {MEDIAN_NOTE}");
        }
        Some(s)
    }
}

/// The column of a willingness-space model's units.
const UNIT: &str = "price scale or value in";

/// What a "mean of log" row is and how its median follows.
const MEDIAN_NOTE: &str = "mean of log: the location of a lognormal coefficient is the mean of its logarithm, not the coefficient; the coefficient's median is exp(mean of log), or −exp(mean of log) when negative-lognormal (± delta-method s.e.)";
