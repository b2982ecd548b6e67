//! The analysis sections of the HTML report: value ratios, elasticity and
//! diversion matrices shaded like the workbench's, and the tests, laid out
//! from the `Analysis` the library returned.

use std::fmt::Write;

use super::page::{
    esc, heat_cell, heat_legend, label_cell, not_applicable, note, num_cell, section, table,
};
use super::{heading, Material};
use crate::analysis::Analysis;
use crate::report::heat::{ELASTICITY_CUTS, SHARE_CUTS};

/// A value with about three significant digits and its standard error, or a dot when missing.
fn value_se(v: f64, se: f64) -> String {
    crate::report::value_se(v, se, " ± ")
}

/// A matrix of heat cells: rows × columns, `cell` gives (value, text) or None.
fn heat_matrix(
    corner: &str,
    rows: &[String],
    cols: &[String],
    cuts: &[f64; 4],
    cell: &dyn Fn(usize, usize) -> Option<(f64, String)>,
) -> String {
    let mut header: Vec<&str> = vec![corner];
    header.extend(cols.iter().map(String::as_str));
    let body: Vec<String> = rows
        .iter()
        .enumerate()
        .map(|(r, label)| {
            let mut s = label_cell(label);
            for c in 0..cols.len() {
                match cell(r, c) {
                    Some((v, text)) => s.push_str(&heat_cell(v, &text, cuts)),
                    None => s.push_str(&num_cell("—")),
                }
            }
            s
        })
        .collect();
    table("matrix", &header, &body)
}

fn no_analysis() -> String {
    not_applicable("The analysis was skipped, so this section is empty.")
}

pub fn ratios(m: &Material) -> String {
    let Some(a) = m.analysis else {
        return section("value-ratios", heading("value-ratios"), &no_analysis());
    };
    if a.ratios.is_empty() {
        let s = not_applicable("The spec declares no [[ratio]], so there is no value ratio (willingness to pay) to show.");
        return section("value-ratios", heading("value-ratios"), &s);
    }
    let mut s = note("willingness to pay, positive when the change named is desirable (value ± delta-method s.e.)");
    let rows: Vec<String> = a
        .ratios
        .iter()
        .map(|r| {
            let kr = if r.draws == 0 {
                "— … — (no draws)".to_string()
            } else {
                format!("{:.4} … {:.4}", r.kr_low, r.kr_high)
            };
            format!(
                "{}{}{}{}{}{}{}",
                label_cell(&if r.distribution.is_some() {
                    format!("{} (median across decision makers)", r.name)
                } else {
                    r.name.clone()
                }),
                num_cell(&format!("{:.4}", r.value)),
                num_cell(&format!("{:.4}", r.std_error)),
                label_cell(r.unit.as_deref().unwrap_or("")),
                label_cell(&format!(
                    "{} of `{}` against `{}`",
                    per_units(r.scale, &r.per),
                    r.numerator,
                    r.denominator
                )),
                num_cell(&format!("{:.4} … {:.4}", r.ci_low, r.ci_high)),
                num_cell(&kr)
            )
        })
        .collect();
    s.push_str(&table(
        "ratios",
        &[
            "ratio",
            "value",
            "s.e.",
            "unit",
            "for",
            "95% delta",
            "95% Krinsky-Robb",
        ],
        &rows,
    ));
    if let Some(r) = a.ratios.iter().find(|r| r.draws > 0) {
        s.push_str(&note(&format!(
            "Krinsky-Robb intervals from {} parameter draws (seed {}).",
            r.draws, r.seed
        )));
    }
    section("value-ratios", heading("value-ratios"), &s)
}

/// "one unit more", "60 units less": what a ratio's willingness to pay is for.
fn per_units(scale: f64, per: &str) -> String {
    let way = per.strip_prefix("unit ").unwrap_or(per);
    if scale == 1.0 {
        format!("one unit {way}")
    } else {
        format!("{} units {way}", scale.abs())
    }
}

pub fn elasticities(m: &Material) -> String {
    let Some(a) = m.analysis else {
        return section("elasticities", heading("elasticities"), &no_analysis());
    };
    let names = m.spec.alternative_names();
    let mut s = note(
        "elasticities of predicted shares (sample enumeration, weighted; ± delta-method s.e.)",
    );
    s.push_str(&heat_legend(&ELASTICITY_CUTS, true));
    for attr in &m.spec.attributes {
        let rows: Vec<&crate::analysis::ElasticityRow> = a
            .elasticities
            .iter()
            .filter(|e| e.variable == attr.name)
            .collect();
        if rows.is_empty() {
            continue;
        }
        let changed: Vec<String> = names
            .iter()
            .filter(|n| {
                rows.iter()
                    .any(|e| e.changed.as_deref() == Some(n.as_str()))
            })
            .cloned()
            .collect();
        let _ = writeln!(
            s,
            "<h3>{}</h3>",
            esc(&format!(
                "{} of the row's alternative changes → share of the column's alternative",
                attr.name
            ))
        );
        s.push_str(&heat_matrix(
            "changed \\ share",
            &changed,
            &names,
            &ELASTICITY_CUTS,
            &|r, c| {
                rows.iter()
                    .find(|e| {
                        e.changed.as_deref() == Some(changed[r].as_str()) && e.affected == names[c]
                    })
                    .map(|e| (e.value, value_se(e.value, e.std_error)))
            },
        ));
    }
    let vars: Vec<String> = m
        .spec
        .characteristics
        .iter()
        .map(|c| c.name.clone())
        .filter(|n| a.elasticities.iter().any(|e| &e.variable == n))
        .collect();
    if !vars.is_empty() {
        s.push_str("<h3>characteristics (the decision maker's value changes) → share</h3>\n");
        s.push_str(&heat_matrix(
            "variable \\ share",
            &vars,
            &names,
            &ELASTICITY_CUTS,
            &|r, c| {
                a.elasticities
                    .iter()
                    .find(|e| {
                        e.variable == vars[r] && e.changed.is_none() && e.affected == names[c]
                    })
                    .map(|e| (e.value, value_se(e.value, e.std_error)))
            },
        ));
    }
    s.push_str(&flags(&names, a));
    s.push_str(&expected_category(a, names.len()));
    if a.elasticities.is_empty() && a.flag_effects.is_empty() {
        s.push_str(&not_applicable(
            "The model has no attribute or characteristic to take an elasticity of.",
        ));
    }
    section("elasticities", heading("elasticities"), &s)
}

/// 0/1 variables: the change in shares when the flag switches from 0 to 1.
fn flags(names: &[String], a: &Analysis) -> String {
    let mut seen: Vec<(String, Option<String>)> = Vec::new();
    for f in &a.flag_effects {
        let key = (f.variable.clone(), f.changed.clone());
        if !seen.contains(&key) {
            seen.push(key);
        }
    }
    if seen.is_empty() {
        return String::new();
    }
    let mut s = String::from("<h3>0/1 variables: change in each share when the flag switches from 0 to 1 in every situation</h3>\n");
    s.push_str(&note(
        "no elasticity: a 1% change means nothing for a flag (± delta-method s.e.)",
    ));
    let rows: Vec<String> = seen
        .iter()
        .map(|(v, c)| match c {
            Some(k) => format!("{v} of {k}"),
            None => v.clone(),
        })
        .collect();
    s.push_str(&heat_matrix(
        "flag \\ share",
        &rows,
        names,
        &SHARE_CUTS,
        &|r, c| {
            a.flag_effects
                .iter()
                .find(|f| {
                    f.variable == seen[r].0 && f.changed == seen[r].1 && f.affected == names[c]
                })
                .map(|f| (f.change, value_se(f.change, f.std_error)))
        },
    ));
    s
}

/// Ordered families: the effect on the expected category.
fn expected_category(a: &Analysis, categories: usize) -> String {
    if a.expected_category.is_empty() {
        return String::new();
    }
    let mut s = format!("<h3>effect on the expected category (categories numbered 1 to {categories}), per unit</h3>\n");
    let rows: Vec<String> = a
        .expected_category
        .iter()
        .map(|e| {
            format!(
                "{}{}",
                label_cell(&e.variable),
                num_cell(&value_se(e.value, e.std_error))
            )
        })
        .collect();
    s.push_str(&table("expected", &["variable", "effect ± s.e."], &rows));
    s
}

pub fn diversion(m: &Material) -> String {
    let Some(a) = m.analysis else {
        return section("diversion", heading("diversion"), &no_analysis());
    };
    if m.fit.family.abilities().ordered {
        let s = not_applicable(&format!(
            "Does not apply to the {} family: its categories are ordered ratings on one scale, neither withdrawn nor added, so no demand moves between them.",
            m.fit.family.name()
        ));
        return section("diversion", heading("diversion"), &s);
    }
    let names = m.spec.alternative_names();
    let mut s = heat_legend(&SHARE_CUTS, false);
    if !a.diversion.is_empty() {
        let removed: Vec<String> = names
            .iter()
            .filter(|n| a.diversion.iter().any(|d| &d.removed == *n))
            .cloned()
            .collect();
        s.push_str("<h3>diversion on withdrawal: share of the row's demand that moves to each column</h3>\n");
        s.push_str(&heat_matrix(
            "removed \\ to",
            &removed,
            &names,
            &SHARE_CUTS,
            &|r, c| {
                if removed[r] == names[c] {
                    return None;
                }
                a.diversion
                    .iter()
                    .find(|d| d.removed == removed[r] && d.to == names[c])
                    .map(|d| (d.share, format!("{:.3}", d.share)))
            },
        ));
    }
    if let Some(first) = a.price_diversion.first() {
        let changed: Vec<String> = names
            .iter()
            .filter(|n| a.price_diversion.iter().any(|d| &d.changed == *n))
            .cloned()
            .collect();
        let _ = writeln!(
            s,
            "<h3>{}</h3>",
            esc(&format!(
                "{} diversion ratios -(dQ_to/dx)/(dQ_row/dx) for a change in the row's {}",
                first.attribute, first.attribute
            ))
        );
        s.push_str(&heat_matrix(
            "changed \\ to",
            &changed,
            &names,
            &SHARE_CUTS,
            &|r, c| {
                if changed[r] == names[c] {
                    return None;
                }
                a.price_diversion
                    .iter()
                    .find(|d| d.changed == changed[r] && d.to == names[c])
                    .map(|d| (d.ratio, format!("{:.3}", d.ratio)))
            },
        ));
    }
    if a.diversion.is_empty() && a.price_diversion.is_empty() {
        s.push_str(&not_applicable(
            "No diversion figures were returned for this model.",
        ));
    }
    section("diversion", heading("diversion"), &s)
}

/// The tests and the analysis warnings, for the diagnostics section.
pub fn tests(a: &Analysis) -> String {
    let mut s = String::new();
    let mut rows = Vec::new();
    if let Some(t) = &a.single_index {
        rows.push(format!(
            "{}{}{}{}{}",
            label_cell(&t.name),
            num_cell(&format!("{:.4}", t.statistic)),
            num_cell(&t.df.to_string()),
            num_cell(&crate::report::pval(t.p_value)),
            label_cell(&format!(
                "likelihood ratio; unordered logit log-likelihood {:.4}; note: {}",
                t.unordered_log_likelihood, t.note
            ))
        ));
    }
    for t in a.family_test.iter().chain(a.wald.iter()) {
        rows.push(format!(
            "{}{}{}{}{}",
            label_cell(&t.name),
            num_cell(&format!("{:.4}", t.statistic)),
            num_cell(&t.df.to_string()),
            num_cell(&crate::report::pval(t.p_value)),
            label_cell("")
        ));
    }
    if !rows.is_empty() {
        s.push_str("<h3>tests</h3>\n");
        s.push_str(&table(
            "tests",
            &["test", "statistic", "df", "p", "note"],
            &rows,
        ));
    }
    if !a.warnings.is_empty() {
        s.push_str("<ul class=\"warn\">\n");
        for w in &a.warnings {
            let _ = writeln!(s, "<li>{}</li>", esc(w));
        }
        s.push_str("</ul>\n");
    }
    s
}
