//! The HTML report's section on tastes that vary across decision makers:
//! each random coefficient's implied distribution as the library computed it
//! (`analysis::random`), or a sentence saying the family has none; and the
//! section on the error covariance a family estimates (the multinomial
//! probit's covariance and correlations of the error differences).

use super::page::{label_cell, not_applicable, note, num_cell, section, table};
use super::{heading, Material};

fn fig(v: f64, se: f64) -> String {
    if se.is_finite() {
        format!("{v:.4} ± {se:.4}")
    } else {
        format!("{v:.4}")
    }
}

/// The section: one row per random coefficient.
pub fn random_coefficients(m: &Material) -> String {
    let id = "random-coefficients";
    if m.fit.family.random_coefficients().is_empty() {
        let s = not_applicable(&format!(
            "The {} family gives every decision maker the same coefficients; tastes that vary across people need family \"mixed\".",
            m.fit.family.name()
        ));
        return section(id, heading(id), &s);
    }
    let Some(a) = m.analysis else {
        return section(
            id,
            heading(id),
            &note("The analysis sections were not computed."),
        );
    };
    let mut s = note("Each random coefficient's distribution across decision makers, implied by its location and spread (value ± delta-method s.e.).");
    let rows: Vec<String> = a
        .random_coefficients
        .iter()
        .map(|r| {
            let q: Vec<String> = r
                .quantiles
                .iter()
                .map(|x| format!("{:.0}%: {:.4}", 100.0 * x.level, x.value))
                .collect();
            format!(
                "{}{}{}{}{}{}{}",
                label_cell(&format!("{} ({})", r.coefficient, r.distribution)),
                num_cell(&fig(r.mean.value, r.mean.std_error)),
                num_cell(&fig(r.std_dev.value, r.std_dev.std_error)),
                num_cell(&fig(r.median.value, r.median.std_error)),
                num_cell(&format!("{:.1}%", 100.0 * r.share_positive.value)),
                num_cell(&format!("{:.1}%", 100.0 * r.share_negative.value)),
                label_cell(&q.join(" · "))
            )
        })
        .collect();
    s.push_str(&table(
        "random",
        &[
            "coefficient",
            "mean",
            "std. dev.",
            "median",
            "above 0",
            "below 0",
            "5/25/75/95% points",
        ],
        &rows,
    ));
    for line in m.fit.family.structure(m.spec) {
        s.push_str(&note(&line));
    }
    section(id, heading(id), &s)
}

/// The section: the family's derived figures (error covariance and
/// correlations) with their errors, or a sentence saying there are none.
pub fn error_covariance(m: &Material) -> String {
    let id = "error-covariance";
    let Some(a) = m.analysis else {
        return section(
            id,
            heading(id),
            &note("The analysis sections were not computed."),
        );
    };
    if a.derived.is_empty() {
        let s = not_applicable(&format!(
            "The {} model as specified estimates no covariance between the alternatives' unobserved parts; a multinomial probit with [errors].structure = \"full\" does.",
            m.fit.family.name()
        ));
        return section(id, heading(id), &s);
    }
    let mut s = note("Which alternatives share unobserved traits: the covariance and correlations of the utilities' error differences implied by the estimates (value ± delta-method s.e.). A positive correlation between two differences means the two alternatives draw from the base together.");
    let mut groups: Vec<&str> = Vec::new();
    for r in &a.derived {
        if !groups.contains(&r.group.as_str()) {
            groups.push(&r.group);
        }
    }
    for g in groups {
        let rows: Vec<String> = a
            .derived
            .iter()
            .filter(|r| r.group == g)
            .map(|r| {
                format!(
                    "{}{}",
                    label_cell(&r.name),
                    num_cell(&fig(r.value, r.std_error))
                )
            })
            .collect();
        s.push_str(&table("derived", &[g, "value"], &rows));
    }
    for line in m.fit.family.structure(m.spec) {
        s.push_str(&note(&line));
    }
    section(id, heading(id), &s)
}
