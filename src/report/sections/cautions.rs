//! "Cautions": the general caution, the family's and the field's own, and on
//! the page the further cautions in full.

use std::fmt::Write;

use super::{Input, Section};
use crate::report::html::page::esc;
use crate::report::html::Chart;

pub struct Cautions;

fn capitalised(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

impl Section for Cautions {
    fn names(&self) -> (&'static str, &'static str) {
        ("cautions", "Cautions")
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let mut s = String::from("<ul class=\"cautions\">\n");
        let sentences = crate::report::caution_sentences(input.m.spec, &*input.m.fit.family);
        for c in sentences
            .iter()
            .map(String::as_str)
            .chain(crate::report::FURTHER_CAUTIONS)
        {
            // The heading says "Cautions": the line's own prefix is dropped here.
            let c = match c.strip_prefix("Cautions: ") {
                Some(rest) => capitalised(rest),
                None => c.to_string(),
            };
            let _ = writeln!(s, "<li>{}</li>", esc(&c));
        }
        s.push_str("</ul>\n");
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        Some(crate::report::text::closing(input.m.spec, input.m.fit))
    }
}
