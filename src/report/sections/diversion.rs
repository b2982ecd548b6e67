//! "Diversion": where demand goes when an alternative is withdrawn, and the
//! diversion ratios for a change in an attribute; not for ordered families,
//! whose categories are neither withdrawn nor added.

use std::fmt::Write;

use super::{Applies, Input, Section};
use crate::report::heat::SHARE_CUTS;
use crate::report::html::page::{esc, heat_legend, heat_matrix, not_applicable};
use crate::report::html::Chart;
use crate::report::text::matrix;
use crate::report::walk::{Holds, Matrix};

pub struct Diversion;

const WITHDRAWAL: &str = "diversion on withdrawal: the share of a withdrawn alternative's demand that moves to each other alternative";

/// The title of the diversion ratios for a change in the rows' attribute.
fn price_title(m: &Matrix) -> String {
    let a = match &m.rows.holds {
        Holds::Changed(a) => a.as_str(),
        _ => "the attribute",
    };
    format!("{a} diversion ratios -(dQ_to/dx)/(dQ_changed/dx) when one alternative's {a} changes")
}

impl Section for Diversion {
    fn names(&self) -> (&'static str, &'static str) {
        ("diversion", "Diversion")
    }

    fn applies(&self, input: &Input) -> Applies {
        let family = &input.m.fit.family;
        input.analysed_unless(|_| {
            family.abilities().ordered.then(|| format!(
                "Does not apply to the {} family: its categories are ordered ratings on one scale, neither withdrawn nor added, so no demand moves between them.",
                family.name()
            ))
        })
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let Some(w) = &input.walk else {
            return String::new();
        };
        let mut s = heat_legend(&SHARE_CUTS, false);
        if let Some(m) = &w.withdrawal {
            let _ = writeln!(s, "<h3>{}</h3>", esc(WITHDRAWAL));
            s.push_str(&heat_matrix(m));
        }
        if let Some(m) = &w.price_diversion {
            let _ = writeln!(s, "<h3>{}</h3>", esc(&price_title(m)));
            s.push_str(&heat_matrix(m));
        }
        if w.withdrawal.is_none() && w.price_diversion.is_none() {
            s.push_str(&not_applicable(
                "No diversion figures were returned for this model.",
            ));
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let w = input.walk.as_ref()?;
        let mut blocks = Vec::new();
        if let Some(m) = &w.withdrawal {
            let mut s = format!("{WITHDRAWAL}\n");
            matrix(&mut s, m);
            blocks.push(s);
        }
        if let Some(m) = &w.price_diversion {
            let mut s = format!("{}\n", price_title(m));
            matrix(&mut s, m);
            blocks.push(s);
        }
        (!blocks.is_empty()).then(|| blocks.join("\n"))
    }
}
