//! "What was fitted": the spec, the model and its structure (each line of
//! the family's `structure` under its own label), the data and the search.

use std::fmt::Write;

use super::{Input, Section};
use crate::report::html::page::{esc, note};
use crate::report::html::Chart;

pub struct Fitted;

/// A fact line of the description list.
fn fact(s: &mut String, term: &str, value: &str) {
    let _ = writeln!(s, "<dt>{}</dt><dd>{}</dd>", esc(term), esc(value));
}

/// A structure line's label and fact: the family writes "label: fact"
/// ("simulation: 500 halton draws ..."); a line without a label is a "structure".
fn labelled(line: &str) -> (&str, &str) {
    match line.split_once(": ") {
        Some((label, fact)) if !label.is_empty() && !fact.is_empty() => (label, fact),
        _ => ("structure", line),
    }
}

impl Section for Fitted {
    fn names(&self) -> (&'static str, &'static str) {
        ("fitted", "What was fitted")
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let m = input.m;
        let (spec, fit) = (m.spec, m.fit);
        let st = &fit.stats;
        let mut s = String::from("<dl class=\"facts\">\n");
        fact(&mut s, "spec", &m.spec_label);
        fact(&mut s, "model", fit.family.name());
        let names = spec.alternatives_listed();
        if fit.family.abilities().ordered {
            let n = spec.alternatives.len();
            fact(
                &mut s,
                "ordered categories",
                &format!("{n} (lowest first): {names}"),
            );
        } else {
            let n = spec.alternatives.len();
            fact(&mut s, "alternatives", &format!("{n}: {names}"));
            if let Some(b) = spec.base_name() {
                fact(&mut s, "base", b);
            }
        }
        for line in fit.family.structure(spec) {
            let (label, value) = labelled(&line);
            fact(&mut s, label, value);
        }
        fact(&mut s, "data", &spec.data.file_written);
        fact(&mut s, "situations", &st.situations.to_string());
        if fit.design.obs.group.is_some() {
            fact(&mut s, "decision makers", &st.groups.to_string());
        }
        fact(
            &mut s,
            "parameters estimated",
            &st.estimated_parameters.to_string(),
        );
        let status = if st.converged {
            "converged"
        } else {
            "DID NOT CONVERGE"
        };
        fact(
            &mut s,
            "search",
            &format!(
                "{status}: {} quasi-Newton iterations, {} Newton steps, gradient norm {:.2e}",
                st.iterations, st.newton_steps, st.gradient_norm
            ),
        );
        s.push_str("</dl>\n");
        for n in &m.notes {
            s.push_str(&note(n));
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let (spec, fit) = (input.m.spec, input.m.fit);
        let mut s = String::new();
        let st = &fit.stats;
        let title = spec.title.as_deref().unwrap_or("(untitled model)");
        let _ = writeln!(s, "━━ sharecast ━━ {title}");
        let shape = if fit.family.abilities().ordered {
            format!("{} ordered categories", spec.alternatives.len())
        } else {
            match spec.base_name() {
                Some(b) => format!("{} alternatives · base `{b}`", spec.alternatives.len()),
                None => format!("{} alternatives · no base", spec.alternatives.len()),
            }
        };
        let _ = writeln!(
            s,
            "model    {} · {shape} · {} parameters estimated",
            spec.family, st.estimated_parameters
        );
        for line in fit.family.structure(spec) {
            let _ = writeln!(s, "         {line}");
        }
        let groups = if fit.design.obs.group.is_some() {
            format!(" · {} decision makers", st.groups)
        } else {
            String::new()
        };
        let _ = writeln!(
            s,
            "data     {} · {} situations{groups}",
            spec.data.file_written, st.situations
        );
        let status = if st.converged {
            "converged".to_string()
        } else {
            crate::report::red("DID NOT CONVERGE", input.colour)
        };
        let _ = writeln!(
            s,
            "search   {status}: {} quasi-Newton iterations, {} Newton steps, {} passes over the data, {:.3} s (gradient norm {:.2e})",
            st.iterations, st.newton_steps, st.passes, st.seconds, st.gradient_norm
        );
        Some(s)
    }
}
