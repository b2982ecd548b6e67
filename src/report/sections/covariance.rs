//! "Shared unobserved traits": the figures a family derives from its
//! parameters (the multinomial probit's error covariance and correlations),
//! one table per group, or why there are none.

use std::fmt::Write;

use super::random::fig;
use super::{Applies, Input, Section};
use crate::report::html::page::{label_cell, note, num_cell, table};
use crate::report::html::Chart;

pub struct ErrorCovariance;

impl Section for ErrorCovariance {
    fn names(&self) -> (&'static str, &'static str) {
        ("error-covariance", "Shared unobserved traits")
    }

    fn applies(&self, input: &Input) -> Applies {
        input.analysed_unless(|w| {
            w.derived.is_empty().then(|| format!(
                "The {} model as specified estimates no covariance between the alternatives' unobserved parts; a multinomial probit with [errors].structure = \"full\" does.",
                input.m.fit.family.name()
            ))
        })
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let Some(w) = &input.walk else {
            return String::new();
        };
        let mut s = note("Which alternatives share unobserved traits: the covariance and correlations of the utilities' error differences implied by the estimates (value ± delta-method s.e.). A positive correlation between two differences means the two alternatives draw from the base together.");
        for g in &w.derived {
            let rows: Vec<String> = g
                .rows
                .iter()
                .map(|r| {
                    format!(
                        "{}{}",
                        label_cell(&r.label),
                        num_cell(&fig(r.figure.value, r.figure.std_error))
                    )
                })
                .collect();
            s.push_str(&table("derived", &[&g.name, "value"], &rows));
        }
        for line in input.m.fit.family.structure(input.m.spec) {
            s.push_str(&note(&line));
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let w = input.walk.as_ref()?;
        let blocks: Vec<String> = w
            .derived
            .iter()
            .map(|g| {
                let mut s = format!(
                    "{} (implied by the estimates; ± delta-method s.e.)\n",
                    g.name
                );
                for r in &g.rows {
                    let _ = writeln!(
                        s,
                        "  {:<28} {}",
                        r.label,
                        crate::report::value_se(r.figure.value, r.figure.std_error, "±")
                    );
                }
                s
            })
            .collect();
        Some(blocks.join("\n"))
    }
}
