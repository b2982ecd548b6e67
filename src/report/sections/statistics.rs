//! "How well it fits": log-likelihoods, rho², AIC and BIC, and what the zero model is.

use std::fmt::Write;

use super::{Input, Section};
use crate::report::html::page::{label_cell, note, num_cell, table};
use crate::report::html::Chart;

pub struct Statistics;

const ZERO_MODEL: &str =
    "zero model: every coefficient 0, so each situation's available alternatives are equally likely";

impl Section for Statistics {
    fn names(&self) -> (&'static str, &'static str) {
        ("fit-statistics", "How well it fits")
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let st = &input.m.fit.stats;
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
        s.push_str(&note(ZERO_MODEL));
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let st = &input.m.fit.stats;
        let mut s = String::new();
        let _ = writeln!(s, "how well it fits");
        let _ = writeln!(
            s,
            "  log-likelihood {:>14.4}   zero model {:>19.4}   constants only {:>14.4}",
            st.log_likelihood, st.null_log_likelihood, st.constants_log_likelihood
        );
        let _ = writeln!(
            s,
            "  rho² vs zero   {:>14.4}   rho² vs constants {:>12.4}   adjusted rho² {:>15.4}",
            st.rho_squared, st.rho_squared_constants, st.adjusted_rho_squared
        );
        let _ = writeln!(
            s,
            "  AIC            {:>14.4}   BIC             {:>14.4}",
            st.aic, st.bic
        );
        let _ = writeln!(s, "  ({ZERO_MODEL})");
        Some(s)
    }
}
