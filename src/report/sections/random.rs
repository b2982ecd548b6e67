//! "Tastes across decision makers": each random coefficient's implied
//! distribution as the library computed it (`analysis::random`), or why the
//! family has none; in willingness-to-pay space, what each coefficient is
//! (the price scale or a value).

use std::fmt::Write;

use super::{Applies, Input, Section};
use crate::report::html::page::{label_cell, note, num_cell, table};
use crate::report::html::Chart;

pub struct Tastes;

/// A figure with four decimals and its error.
pub(super) fn fig(v: f64, se: f64) -> String {
    if se.is_finite() {
        format!("{v:.4} ± {se:.4}")
    } else {
        format!("{v:.4}")
    }
}

fn cell(v: f64, se: f64) -> String {
    crate::report::value_se(v, se, "±")
}

impl Section for Tastes {
    fn names(&self) -> (&'static str, &'static str) {
        ("random-coefficients", "Tastes across decision makers")
    }

    fn applies(&self, input: &Input) -> Applies {
        if input.m.fit.family.random_coefficients().is_empty() {
            return Applies::No(format!(
                "The {} family gives every decision maker the same coefficients; tastes that vary across people need family \"mixed\".",
                input.m.fit.family.name()
            ));
        }
        input.analysed()
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let Some(w) = &input.walk else {
            return String::new();
        };
        let mut s = note("Each random coefficient's distribution across decision makers, implied by its location and spread (value ± delta-method s.e.).");
        let rows: Vec<String> = w
            .random
            .iter()
            .map(|x| {
                let r = &x.row;
                let q: Vec<String> = r
                    .quantiles
                    .iter()
                    .map(|x| format!("{:.0}%: {:.4}", 100.0 * x.level, x.value))
                    .collect();
                let what = match &x.reads {
                    Some(reads) => format!(" — {reads}"),
                    None => String::new(),
                };
                format!(
                    "{}{}{}{}{}{}{}",
                    label_cell(&format!("{} ({}){what}", r.coefficient, r.distribution)),
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
        for line in input.m.fit.family.structure(input.m.spec) {
            s.push_str(&note(&line));
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let w = input.walk.as_ref()?;
        if w.random.is_empty() {
            return None;
        }
        let mut s = String::from("random coefficients across decision makers (implied by each location and spread; ± delta-method s.e.)\n");
        for x in &w.random {
            let r = &x.row;
            let what = match &x.reads {
                Some(reads) => format!(" · {reads}"),
                None => String::new(),
            };
            let spread = if r.correlated {
                format!(
                    "Cholesky diagonal {:.4}, its normal's s.d. {:.4}",
                    r.spread, r.underlying_std_dev
                )
            } else {
                format!("spread {:.4}", r.spread)
            };
            let _ = writeln!(
                s,
                "  {} · {} ({} {:.4}, {spread}){what}",
                r.coefficient, r.distribution, x.location_label, r.location
            );
            let _ = writeln!(
                s,
                "      mean {}   std. dev. {}   median {}",
                cell(r.mean.value, r.mean.std_error),
                cell(r.std_dev.value, r.std_dev.std_error),
                cell(r.median.value, r.median.std_error)
            );
            let q: Vec<String> = r
                .quantiles
                .iter()
                .map(|x| format!("{:.0}% {}", 100.0 * x.level, cell(x.value, f64::NAN)))
                .collect();
            let _ = writeln!(
                s,
                "      above 0 {:.1}%   below 0 {:.1}%   {}",
                100.0 * r.share_positive.value,
                100.0 * r.share_negative.value,
                q.join("   ")
            );
        }
        Some(s)
    }
}
