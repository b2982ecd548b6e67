//! The fit's sections of the HTML report: what was fitted on which data, how
//! well it fits, the estimates with their interval chart, observed against
//! predicted shares, diagnostics and the cautions, in the text report's wording.

use std::fmt::Write;

use super::page::{esc, figure, label_cell, not_applicable, note, num_cell, section, short, table};
use super::svg::{self, Interval, Pair};
use super::{heading, Chart, Material};
use crate::spec::Term;

/// A fact line of the description list.
fn fact(s: &mut String, term: &str, value: &str) {
    let _ = writeln!(s, "<dt>{}</dt><dd>{}</dd>", esc(term), esc(value));
}

pub fn what_was_fitted(m: &Material) -> String {
    let (spec, fit) = (m.spec, m.fit);
    let st = &fit.stats;
    let mut s = String::from("<dl class=\"facts\">\n");
    fact(&mut s, "spec", &m.spec_label);
    fact(&mut s, "model", fit.family.name());
    let names = spec.alternative_names().join(", ");
    if fit.family.abilities().ordered {
        fact(
            &mut s,
            "ordered categories",
            &format!("{} (lowest first): {names}", spec.alternatives.len()),
        );
    } else {
        fact(
            &mut s,
            "alternatives",
            &format!("{}: {names}", spec.alternatives.len()),
        );
        fact(&mut s, "base", &spec.alternatives[spec.base].name);
    }
    for line in fit.family.structure(spec) {
        fact(&mut s, "structure", &line);
    }
    fact(&mut s, "data", &spec.data.file_written);
    fact(&mut s, "situations", &st.situations.to_string());
    if fit.design.obs.group.is_some() {
        fact(&mut s, "decision makers", &st.groups.to_string());
    }
    fact(
        &mut s,
        "parameters estimated",
        &st.estimated_parameters.to_string(),
    );
    let status = if st.converged {
        "converged"
    } else {
        "DID NOT CONVERGE"
    };
    fact(
        &mut s,
        "search",
        &format!(
            "{status}: {} quasi-Newton iterations, {} Newton steps, gradient norm {:.2e}",
            st.iterations, st.newton_steps, st.gradient_norm
        ),
    );
    s.push_str("</dl>\n");
    for n in &m.notes {
        s.push_str(&note(n));
    }
    section("fitted", heading("fitted"), &s)
}

pub fn statistics(m: &Material) -> String {
    let st = &m.fit.stats;
    let rows: Vec<String> = [
        ("log-likelihood", st.log_likelihood),
        ("zero model log-likelihood", st.null_log_likelihood),
        ("constants-only log-likelihood", st.constants_log_likelihood),
        ("rho² vs zero", st.rho_squared),
        ("rho² vs constants", st.rho_squared_constants),
        ("adjusted rho²", st.adjusted_rho_squared),
        ("AIC", st.aic),
        ("BIC", st.bic),
    ]
    .iter()
    .map(|(k, v)| format!("{}{}", label_cell(k), num_cell(&format!("{v:.4}"))))
    .collect();
    let mut s = table("stats", &["measure", "value"], &rows);
    s.push_str(&note("zero model: every coefficient 0, so each situation's available alternatives are equally likely"));
    section("fit-statistics", heading("fit-statistics"), &s)
}

pub fn estimates(m: &Material, charts: &mut Vec<Chart>) -> String {
    let fit = m.fit;
    let robust = fit.stats.inference == "robust";
    let mut s = note(&format!(
        "value ± standard error {}; t, p and the 95% interval use these errors{}",
        crate::report::errors_label(fit),
        if robust {
            " (the Hessian's errors beside)"
        } else {
            ""
        }
    ));
    let chart = svg::intervals("Estimates with 95% intervals", &interval_groups(fit));
    s.push_str(&figure(
        &chart,
        "Each estimate (dot) with its 95% interval (bar); each term has its own axis, since terms are measured in different units. The dashed line is zero.",
    ));
    charts.push(Chart {
        name: "estimates".into(),
        svg: chart,
    });
    s.push_str(&estimate_table(m));
    let against: Vec<String> = fit
        .parameters
        .iter()
        .filter(|r| r.null != 0.0 && !r.fixed)
        .map(|r| format!("{} against {}", r.name, r.null))
        .collect();
    if !against.is_empty() {
        s.push_str(&note(&format!(
            "t and p test each value against 0, except {}",
            against.join(", ")
        )));
    }
    section("estimates", heading("estimates"), &s)
}

/// The interval chart's rows, one group per spec term.
fn interval_groups(fit: &crate::estimate::Fit) -> Vec<(String, Vec<Interval>)> {
    let mut groups: Vec<(String, Vec<Interval>)> = Vec::new();
    for row in &fit.parameters {
        if groups.last().map(|g| &g.0) != Some(&row.term) {
            groups.push((row.term.clone(), Vec::new()));
        }
        if let Some(g) = groups.last_mut() {
            g.1.push(Interval {
                label: row.name.clone(),
                value: row.estimate,
                low: if row.fixed { f64::NAN } else { row.ci_low },
                high: if row.fixed { f64::NAN } else { row.ci_high },
                fixed: row.fixed,
            });
        }
    }
    groups
}

/// The estimates table: a heading row per term, then its parameters.
fn estimate_table(m: &Material) -> String {
    let fit = m.fit;
    let robust = fit.stats.inference == "robust";
    let odds = fit.family.abilities().odds_ratios;
    let mut header = vec!["parameter", "value", "s.e.", "t", "p", "95% interval"];
    if robust {
        header.push("Hessian s.e.");
    }
    if odds {
        header.push("odds ×");
    }
    let mut rows = Vec::new();
    let mut last: Option<&str> = None;
    for (k, row) in fit.parameters.iter().enumerate() {
        if last != Some(row.term.as_str()) {
            rows.push(format!(
                "<td class=\"l\" colspan=\"{}\">{}</td>",
                header.len(),
                esc(&row.term)
            ));
            last = Some(row.term.as_str());
        }
        if row.fixed {
            rows.push(format!(
                "{}{}<td class=\"l\" colspan=\"{}\">(fixed)</td>",
                label_cell(&row.name),
                num_cell(&short(row.estimate)),
                header.len() - 2
            ));
            continue;
        }
        let odds_ratio = match (&m.spec.parameters[k].term, odds) {
            (Term::Characteristic(_), true) => Some(short(row.estimate.exp())),
            (_, true) => Some(String::new()),
            _ => None,
        };
        rows.push(estimate_row(fit, row, robust, odds_ratio));
    }
    // Term rows are the ones with a single spanning cell.
    table("estimates", &header, &rows).replace(
        "<tr><td class=\"l\" colspan",
        "<tr class=\"term\"><td class=\"l\" colspan",
    )
}

/// One estimated parameter's cells.
fn estimate_row(
    fit: &crate::estimate::Fit,
    row: &crate::estimate::ParameterRow,
    robust: bool,
    odds_ratio: Option<String>,
) -> String {
    let mut r = label_cell(&row.name);
    r.push_str(&num_cell(&short(row.estimate)));
    r.push_str(&num_cell(&short(crate::report::shown_error(fit, row))));
    r.push_str(&num_cell(&if row.t_stat.is_finite() {
        format!("{:.2}", row.t_stat)
    } else {
        "—".into()
    }));
    r.push_str(&num_cell(&crate::report::pval(row.p_value)));
    r.push_str(&num_cell(&format!(
        "{} … {}",
        short(row.ci_low),
        short(row.ci_high)
    )));
    if robust {
        r.push_str(&num_cell(&short(row.std_error)));
    }
    if let Some(o) = odds_ratio {
        r.push_str(&num_cell(&o));
    }
    r
}

pub fn shares(m: &Material, charts: &mut Vec<Chart>) -> String {
    let fit = m.fit;
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
    match m.analysis {
        Some(a) => s.push_str(&validation(a)),
        None => s.push_str(&not_applicable(
            "The analysis was skipped, so there is no hit rate or hold-out check.",
        )),
    }
    section("shares", heading("shares"), &s)
}

/// Hit rate and the hold-out check.
fn validation(a: &crate::analysis::Analysis) -> String {
    let v = &a.validation;
    let mut s = format!(
        "<p>Hit rate <span class=\"num\" id=\"hit-rate\">{:.4}</span> (most probable alternative chosen), mean probability of the choice <span class=\"num\">{:.4}</span>.</p>\n",
        v.hit_rate, v.mean_chosen_probability
    );
    if let Some(h) = &v.holdout {
        let _ = writeln!(
            s,
            "<p>Hold-out: {} situations scored by a fit on the other {}; log-likelihood {:.4} (zero model {:.4}).</p>",
            h.situations, h.estimation_situations, h.log_likelihood, h.null_log_likelihood
        );
        s.push_str(&share_table("holdout", "alternative (hold-out)", &h.shares));
    }
    s
}

pub fn diagnostics(m: &Material) -> String {
    let mut s = String::new();
    if m.fit.diagnostics.is_empty() {
        s.push_str("<p>None — the Hessian is well conditioned and no coefficient runs off.</p>\n");
    } else {
        s.push_str("<ul class=\"warn\">\n");
        for d in &m.fit.diagnostics {
            let _ = writeln!(s, "<li>{}</li>", esc(&d.message));
        }
        s.push_str("</ul>\n");
    }
    if let Some(a) = m.analysis {
        s.push_str(&super::analysis::tests(a));
    }
    section("diagnostics", heading("diagnostics"), &s)
}

pub fn cautions(m: &Material) -> String {
    let mut s = String::from("<ul class=\"cautions\">\n");
    let sentences = crate::report::caution_sentences(m.spec, &*m.fit.family);
    for c in sentences
        .iter()
        .map(String::as_str)
        .chain(crate::report::FURTHER_CAUTIONS)
    {
        // The heading says "Cautions": the line's own prefix is dropped here.
        let c = match c.strip_prefix("Cautions: ") {
            Some(rest) => capitalised(rest),
            None => c.to_string(),
        };
        let _ = writeln!(s, "<li>{}</li>", esc(&c));
    }
    s.push_str("</ul>\n");
    section("cautions", heading("cautions"), &s)
}

fn capitalised(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

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
