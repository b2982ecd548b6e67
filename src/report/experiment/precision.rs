//! "Expected precision": each parameter's prior, its standard error expected
//! for one respondent answering every task, and the respondents it needs
//! for a t-ratio of 1.96.

use std::fmt::Write;

use super::{fig, people, DesignSection};
use crate::experiment::outcome::Precision as Row;
use crate::experiment::Outcome;
use crate::report::html::page::{label_cell, note, num_cell, table};

pub struct Precision;

fn prior(r: &Row) -> String {
    if r.prior.sd > 0.0 {
        format!("{} ± {}", fig(r.prior.mean), fig(r.prior.sd))
    } else {
        fig(r.prior.mean)
    }
}

fn explain(o: &Outcome) -> String {
    let per = o.tasks.len() / o.blocks.max(1);
    let mut s = format!(
        "Standard errors expected for one respondent answering all {} tasks, at the prior means. Respondents needed for a t-ratio of 1.96: (1.96 × s.e. / |prior|)², for respondents answering every task",
        o.tasks.len()
    );
    if o.blocks > 1 {
        let _ = write!(
            s,
            ", and for respondents answering one block of {per} tasks each ({} times as many)",
            o.blocks
        );
    }
    s.push_str(". A parameter whose prior is 0 has no such number.");
    if let Some(n) = o.respondents {
        let _ = write!(
            s,
            " The design needs at least {} respondents for every parameter; plan on more.",
            people(Some(n))
        );
    }
    s
}

impl DesignSection for Precision {
    fn names(&self) -> (&'static str, &'static str) {
        ("precision", "Expected precision and sample sizes")
    }

    fn html(&self, o: &Outcome) -> String {
        let rows: Vec<String> = o
            .standard_errors
            .iter()
            .map(|r| {
                [
                    label_cell(&r.parameter),
                    num_cell(&prior(r)),
                    num_cell(&r.standard_error.map_or("—".into(), fig)),
                    num_cell(&people(r.sample_size)),
                    num_cell(&people(r.respondents)),
                ]
                .concat()
            })
            .collect();
        let mut s = table(
            "precision",
            &[
                "parameter",
                "prior",
                "expected s.e.",
                "answering all tasks",
                "answering one block",
            ],
            &rows,
        );
        s.push_str(&note(&explain(o)));
        s
    }

    fn text(&self, o: &Outcome) -> Option<String> {
        let mut s = String::from(
            "Expected precision (one respondent, all tasks) and respondents for t = 1.96\n",
        );
        let _ = writeln!(
            s,
            "  {:<16} {:>16} {:>12} {:>12} {:>12}",
            "parameter", "prior", "s.e.", "all tasks", "one block"
        );
        for r in &o.standard_errors {
            let _ = writeln!(
                s,
                "  {:<16} {:>16} {:>12} {:>12} {:>12}",
                r.parameter,
                prior(r),
                r.standard_error.map_or("—".into(), fig),
                people(r.sample_size),
                people(r.respondents)
            );
        }
        let _ = writeln!(s, "  {}", explain(o));
        Some(s)
    }
}
