//! "Tastes that move together": for random coefficients listed under
//! `[model].correlated`, the spread of each underlying normal, how the
//! normals correlate (± delta-method s.e.), how the coefficients themselves
//! correlate where some are lognormal, and the test that they are
//! independent; all read from the walk (`walk::Correlated`).

use std::fmt::Write;

use super::{Applies, Input, Section};
use crate::report::heat::CORRELATION_CUTS;
use crate::report::html::page::{esc, heat_legend, heat_matrix, label_cell, note, num_cell, table};
use crate::report::html::Chart;
use crate::report::text::matrix;
use crate::report::walk::{Correlated, Test};
use crate::report::{pval, value_se};

pub struct CorrelatedTastes;

/// What the section shows, above everything else.
fn opening(c: &Correlated) -> String {
    format!(
        "{}: each decision maker's are drawn from correlated normals (for a lognormal coefficient, its logarithm is the normal one); value ± delta-method s.e.",
        c.coefficients.join(", ")
    )
}

const SPREADS: &str = "spread of each underlying normal (its standard deviation)";
const NORMALS: &str = "correlations of the underlying normals";
const OWN: &str = "correlations of the coefficients themselves";
const OWN_HOW: &str = "where a coefficient is lognormal, its correlations follow from the lognormal's closed-form moments (exact, not simulated); between two normal coefficients they are the normals' own";

/// "cost (lognormal)".
fn named(c: &Correlated, i: usize) -> String {
    match c.distributions.get(i) {
        Some(d) => format!("{} ({d})", c.coefficients[i]),
        None => c.coefficients[i].clone(),
    }
}

/// The independence test's line: statistic, degrees of freedom and p.
fn test_line(t: &Test) -> String {
    format!(
        "{}: statistic {:.4}, {} df, p {}",
        t.name,
        t.statistic,
        t.df,
        pval(t.p_value)
    )
}

impl Section for CorrelatedTastes {
    fn names(&self) -> (&'static str, &'static str) {
        ("correlated-tastes", "Tastes that move together")
    }

    fn applies(&self, input: &Input) -> Applies {
        let family = &input.m.fit.family;
        if family.random_coefficients().is_empty() {
            return Applies::No(format!(
                "The {} family has no random coefficients, so none can move together.",
                family.name()
            ));
        }
        input.analysed_unless(|w| {
            w.correlated.is_none().then(|| {
                "The random coefficients are drawn independently of one another; list them under [model].correlated to estimate how they move together.".to_string()
            })
        })
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let Some(c) = input.walk.as_ref().and_then(|w| w.correlated.as_ref()) else {
            return String::new();
        };
        let mut s = note(&opening(c));
        let _ = writeln!(s, "<h3>{}</h3>", esc(SPREADS));
        let rows: Vec<String> = c
            .spreads
            .iter()
            .enumerate()
            .map(|(i, x)| {
                label_cell(&named(c, i))
                    + &num_cell(&value_se(x.figure.value, x.figure.std_error, " ± "))
            })
            .collect();
        s.push_str(&table("spreads", &["coefficient", "spread ± s.e."], &rows));
        s.push_str(&heat_legend(&CORRELATION_CUTS, true));
        let _ = writeln!(s, "<h3>{}</h3>", esc(NORMALS));
        s.push_str(&heat_matrix(&c.normals));
        if let Some(m) = &c.own {
            let _ = writeln!(s, "<h3>{}</h3>", esc(OWN));
            s.push_str(&note(OWN_HOW));
            s.push_str(&heat_matrix(m));
        }
        if let Some(t) = &c.independence {
            s.push_str(&note(&test_line(t)));
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let c = input.walk.as_ref()?.correlated.as_ref()?;
        let mut s = format!("tastes that move together: {}\n", opening(c));
        let _ = writeln!(s, "  {SPREADS}");
        let width = (0..c.coefficients.len())
            .map(|i| named(c, i).chars().count())
            .max()
            .unwrap_or(8)
            + 3;
        for (i, x) in c.spreads.iter().enumerate() {
            let _ = writeln!(
                s,
                "    {:<width$}{}",
                named(c, i),
                value_se(x.figure.value, x.figure.std_error, " ± ")
            );
        }
        let _ = writeln!(s, "  {NORMALS}");
        matrix(&mut s, &c.normals);
        if let Some(m) = &c.own {
            let _ = writeln!(s, "  {OWN}: {OWN_HOW}");
            matrix(&mut s, m);
        }
        if let Some(t) = &c.independence {
            let _ = writeln!(s, "  {}", test_line(t));
        }
        Some(s)
    }
}
