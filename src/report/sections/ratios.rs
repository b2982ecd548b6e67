//! "Value ratios": each [[ratio]] as willingness to pay with its unit, what
//! it is for, its delta-method and Krinsky-Robb intervals, and how it varies
//! across decision makers where a term does, and what a ratio is when that
//! needs saying (its note).

use std::fmt::Write;

use super::{Applies, Input, Section};
use crate::report::html::page::{label_cell, note, num_cell, table};
use crate::report::html::Chart;
use crate::report::walk::Ratio;

pub struct ValueRatios;

const WHAT: &str =
    "willingness to pay, positive when the change named is desirable (value ± delta-method s.e.)";

fn html_row(r: &Ratio) -> String {
    let kr = match &r.krinsky_robb {
        None => "— … — (no draws)".to_string(),
        Some(k) => format!("{:.4} … {:.4}", k.low, k.high),
    };
    format!(
        "{}{}{}{}{}{}{}",
        label_cell(&if r.distribution.is_some() {
            format!("{} (median across decision makers)", r.name)
        } else {
            r.name.clone()
        }),
        num_cell(&format!("{:.4}", r.value.value)),
        num_cell(&format!("{:.4}", r.value.std_error)),
        label_cell(r.unit.as_deref().unwrap_or("")),
        label_cell(&r.for_what()),
        num_cell(&format!("{:.4} … {:.4}", r.delta.0, r.delta.1)),
        num_cell(&kr)
    )
}

fn text_ratio(s: &mut String, r: &Ratio) {
    let kr = match &r.krinsky_robb {
        None => "— … — (no draws)".to_string(),
        Some(k) => format!(
            "{:.4} … {:.4} ({} draws, seed {})",
            k.low, k.high, k.draws, k.seed
        ),
    };
    let _ = writeln!(
        s,
        "  {:<18}{:>10.4} ± {:<9.4} {}",
        r.name,
        r.value.value,
        r.value.std_error,
        r.unit.as_deref().unwrap_or("")
    );
    let _ = writeln!(
        s,
        "  {:<18}for {} · 95% delta {:.4} … {:.4} · Krinsky-Robb {kr}",
        "",
        r.for_what(),
        r.delta.0,
        r.delta.1
    );
    if let Some(n) = &r.note {
        let _ = writeln!(s, "  {:<18}{n}", "");
    }
    if let Some(dist) = &r.distribution {
        let q: Vec<String> = dist
            .quantiles
            .iter()
            .map(|x| format!("{:.0}% {:.4}", 100.0 * x.level, x.value))
            .collect();
        let _ = writeln!(
            s,
            "  {:<18}varies across decision makers: the value is the median · {} · above zero {:.1}% ({} simulated, seed {})",
            "",
            q.join("  "),
            100.0 * dist.share_positive,
            dist.draws,
            dist.seed
        );
    }
}

impl Section for ValueRatios {
    fn names(&self) -> (&'static str, &'static str) {
        ("value-ratios", "Value ratios")
    }

    fn applies(&self, input: &Input) -> Applies {
        input.analysed_unless(|w| {
            w.ratios.is_empty().then(|| {
                "The spec declares no [[ratio]], so there is no value ratio (willingness to pay) to show.".to_string()
            })
        })
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let Some(w) = &input.walk else {
            return String::new();
        };
        let mut s = note(WHAT);
        let rows: Vec<String> = w.ratios.iter().map(html_row).collect();
        s.push_str(&table(
            "ratios",
            &[
                "ratio",
                "value",
                "s.e.",
                "unit",
                "for",
                "95% delta",
                "95% Krinsky-Robb",
            ],
            &rows,
        ));
        for r in &w.ratios {
            if let Some(n) = &r.note {
                s.push_str(&note(&format!("{}: {n}", r.name)));
            }
        }
        if let Some(k) = w.ratios.iter().find_map(|r| r.krinsky_robb) {
            s.push_str(&note(&format!(
                "Krinsky-Robb intervals from {} parameter draws (seed {}).",
                k.draws, k.seed
            )));
        }
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let w = input.walk.as_ref()?;
        let mut s = format!("value ratios: {WHAT}\n");
        for r in &w.ratios {
            text_ratio(&mut s, r);
        }
        Some(s)
    }
}
