//! "Rehearsal": the priors against the estimates of the logit fitted to
//! simulated answers (`design --simulate N`), when it was run.

use std::fmt::Write;

use super::{fig, DesignSection};
use crate::experiment::Outcome;
use crate::report::html::page::{label_cell, note, num_cell, table};

pub struct Rehearsal;

fn verdict(o: &Outcome) -> String {
    let Some(r) = &o.rehearsal else {
        return String::new();
    };
    let off: Vec<&str> = r
        .parameters
        .iter()
        .filter(|p| !p.within)
        .map(|p| p.parameter.as_str())
        .collect();
    let head = format!(
        "{} simulated respondents (answers in {}, spec in {}); log-likelihood {}, rho-squared {}.",
        r.respondents,
        r.answers,
        r.spec,
        fig(r.log_likelihood),
        fig(r.rho_squared)
    );
    if off.is_empty() {
        format!("{head} Every prior is recovered within 3.5 standard errors.")
    } else {
        format!(
            "{head} Not recovered within 3.5 standard errors: {}.",
            off.join(", ")
        )
    }
}

impl DesignSection for Rehearsal {
    fn names(&self) -> (&'static str, &'static str) {
        ("rehearsal", "Rehearsal")
    }

    fn applies(&self, o: &Outcome) -> Result<(), String> {
        match o.rehearsal {
            Some(_) => Ok(()),
            None => {
                Err("No rehearsal was run (`sharecast design … --simulate N` runs one).".into())
            }
        }
    }

    fn html(&self, o: &Outcome) -> String {
        let Some(r) = &o.rehearsal else {
            return String::new();
        };
        let rows: Vec<String> = r
            .parameters
            .iter()
            .map(|p| {
                [
                    label_cell(&p.parameter),
                    num_cell(&fig(p.truth)),
                    num_cell(&fig(p.estimate)),
                    num_cell(&fig(p.standard_error)),
                    num_cell(&format!("{:.2}", p.z)),
                    label_cell(if p.within { "yes" } else { "no" }),
                ]
                .concat()
            })
            .collect();
        let mut s = table(
            "rehearsal",
            &[
                "parameter",
                "truth (prior mean)",
                "estimate",
                "s.e.",
                "z",
                "within 3.5 s.e.",
            ],
            &rows,
        );
        s.push_str(&note(&verdict(o)));
        s
    }

    fn text(&self, o: &Outcome) -> Option<String> {
        let r = o.rehearsal.as_ref()?;
        let mut s = String::from("Rehearsal: the priors recovered from simulated answers\n");
        let _ = writeln!(
            s,
            "  {:<16} {:>12} {:>12} {:>12} {:>8}",
            "parameter", "truth", "estimate", "s.e.", "z"
        );
        for p in &r.parameters {
            let _ = writeln!(
                s,
                "  {:<16} {:>12} {:>12} {:>12} {:>8.2}{}",
                p.parameter,
                fig(p.truth),
                fig(p.estimate),
                fig(p.standard_error),
                p.z,
                if p.within { "" } else { "  (beyond 3.5 s.e.)" }
            );
        }
        let _ = writeln!(s, "  {}", verdict(o));
        Some(s)
    }
}
