//! "Elasticities": for each attribute the matrix of the alternative whose
//! value changes against each share, the characteristics' elasticities and
//! marginal effects, 0/1 variables' switch from 0 to 1, the effect on the
//! expected category (ordered families) and own elasticities point and arc.

use std::fmt::Write;

use super::{Applies, Input, Section};
use crate::report::heat::ELASTICITY_CUTS;
use crate::report::html::page::{
    esc, heat_legend, heat_matrix, label_cell, not_applicable, note, num_cell, table,
};
use crate::report::html::Chart;
use crate::report::text::matrix;
use crate::report::walk::{Role, Variable, Walk};

pub struct Elasticities;

const WHAT: &str =
    "elasticities of predicted shares (sample enumeration, weighted; ± delta-method s.e.)";
const CHARACTERISTICS: &str = "characteristics (the decision maker's value changes) → share";

/// The elastic attributes (0/1 flags have their own table).
fn attributes(w: &Walk) -> impl Iterator<Item = &Variable> {
    w.variables
        .iter()
        .filter(|v| v.role == Role::Attribute && !v.flag)
}

/// An attribute's table title.
fn title(v: &Variable) -> String {
    format!(
        "{}: 1% more {} of one alternative → % change in each share",
        v.name, v.name
    )
}

fn expected_title(w: &Walk) -> String {
    format!(
        "effect on the expected category (categories numbered 1 to {})",
        w.alternatives.len()
    )
}

impl Section for Elasticities {
    fn names(&self) -> (&'static str, &'static str) {
        ("elasticities", "Elasticities")
    }

    fn applies(&self, input: &Input) -> Applies {
        input.analysed()
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let Some(w) = &input.walk else {
            return String::new();
        };
        let mut s = note(WHAT);
        s.push_str(&heat_legend(&ELASTICITY_CUTS, true));
        for v in attributes(w) {
            let _ = writeln!(s, "<h3>{}</h3>", esc(&title(v)));
            s.push_str(&heat_matrix(&v.figures));
        }
        if let Some(m) = w.characteristic_elasticities() {
            let _ = writeln!(s, "<h3>{}</h3>", esc(CHARACTERISTICS));
            s.push_str(&heat_matrix(&m));
        }
        if let Some(m) = w.flags() {
            s.push_str("<h3>0/1 variables: change in each share when the flag switches from 0 to 1 in every situation</h3>\n");
            s.push_str(&note(
                "no elasticity: a 1% change means nothing for a flag (± delta-method s.e.)",
            ));
            s.push_str(&heat_matrix(&m));
        }
        if !w.expected_category.is_empty() {
            let _ = writeln!(s, "<h3>{}, per unit</h3>", expected_title(w));
            let rows: Vec<String> = w
                .expected_category
                .iter()
                .map(|e| {
                    format!(
                        "{}{}",
                        label_cell(&e.label),
                        num_cell(&crate::report::value_se(
                            e.figure.value,
                            e.figure.std_error,
                            " ± "
                        ))
                    )
                })
                .collect();
            s.push_str(&table("expected", &["variable", "effect ± s.e."], &rows));
        }
        if w.variables.is_empty() {
            s.push_str(&not_applicable(
                "The model has no attribute or characteristic to take an elasticity of.",
            ));
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let w = input.walk.as_ref()?;
        let mut s = format!("{WHAT}\n");
        for v in attributes(w) {
            let _ = writeln!(s, "  {}", title(v));
            matrix(&mut s, &v.figures);
        }
        if let Some(m) = w.characteristic_elasticities() {
            let _ = writeln!(s, "  {CHARACTERISTICS}");
            matrix(&mut s, &m);
        }
        if let Some(m) = w.characteristic_marginal_effects() {
            let _ = writeln!(
                s,
                "\naverage marginal effects of characteristics: change in each share per one unit more of the variable (± s.e.)"
            );
            matrix(&mut s, &m);
        }
        if !w.expected_category.is_empty() {
            let _ = writeln!(s, "  {}, per unit:", expected_title(w));
            for e in &w.expected_category {
                let _ = writeln!(
                    s,
                    "    {:<18}{}",
                    e.label,
                    crate::report::value_se(e.figure.value, e.figure.std_error, "±")
                );
            }
        }
        if let Some(m) = w.flags() {
            let _ = writeln!(
                s,
                "\n0/1 variables (no elasticity: a 1% change means nothing for a flag): change in each share when the flag switches from 0 to 1 in every situation (± delta-method s.e.)"
            );
            matrix(&mut s, &m);
        }
        if !w.own.is_empty() {
            let _ = writeln!(
                s,
                "\nown elasticities, point and arc ({:+.0}% change by re-simulation)",
                100.0 * w.arc_change
            );
            for e in &w.own {
                let _ = writeln!(
                    s,
                    "  {:<12} {:<14} point {:>9.4}   arc {:>9.4}",
                    e.variable, e.alternative, e.point, e.arc
                );
            }
        }
        Some(s)
    }
}
