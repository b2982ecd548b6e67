//! "Demand curve": each alternative's own share as its own price attribute
//! is multiplied, over the sweeps the library returned, or why there is none.

use super::{Applies, Input, Section};
use crate::report::html::page::{figure, fixed, note, num_cell, table};
use crate::report::html::svg::{self, Series};
use crate::report::html::Chart;

pub struct DemandCurve;

impl Section for DemandCurve {
    fn names(&self) -> (&'static str, &'static str) {
        ("demand-curve", "Demand curve")
    }

    fn applies(&self, input: &Input) -> Applies {
        match &input.m.curves {
            Ok(_) => Applies::Yes,
            Err(why) => Applies::No(why.clone()),
        }
    }

    fn html(&self, input: &Input, charts: &mut Vec<Chart>) -> String {
        let Ok(c) = &input.m.curves else {
            return String::new();
        };
        let mut s = note(&format!(
        "\"{}\" is the price attribute (named by {}). Each line is one alternative's own share as its own {} is multiplied, everything else as in the data.",
        c.attribute, c.named_by, c.attribute
    ));
        let xs: Vec<f64> = c
            .sweeps
            .first()
            .map(|sw| sw.points.iter().map(|p| p.multiplier).collect())
            .unwrap_or_default();
        let series: Vec<Series> = c.sweeps.iter().filter_map(own_share).collect();
        let chart = svg::lines(
            &format!("Demand curves over {}", c.attribute),
            &format!("{} multiplied by", c.attribute),
            "own share",
            &xs,
            &series,
            Some(1.0),
        );
        s.push_str(&figure(&chart, "Own share against a multiple of the alternative's own price; the dashed line marks the data as they are (×1)."));
        charts.push(Chart {
            name: "demand-curve".into(),
            svg: chart,
        });
        let mut header: Vec<String> = vec!["multiplier".into()];
        header.extend(series.iter().map(|sr| sr.name.clone()));
        let rows: Vec<String> = xs
            .iter()
            .enumerate()
            .map(|(i, x)| {
                let mut r = num_cell(&format!("{x:.4}"));
                for sr in &series {
                    r.push_str(&num_cell(&fixed(
                        sr.ys.get(i).copied().unwrap_or(f64::NAN),
                        4,
                    )));
                }
                r
            })
            .collect();
        let header_refs: Vec<&str> = header.iter().map(String::as_str).collect();
        s.push_str(&table("curve", &header_refs, &rows));
        s
    }
}

/// The swept alternative's own share at each point.
fn own_share(sw: &crate::scenario::sweep::Sweep) -> Option<Series> {
    let alt = sw.alternative.as_ref()?;
    let k = sw.alternatives.iter().position(|a| a == alt)?;
    Some(Series {
        name: alt.clone(),
        ys: sw
            .points
            .iter()
            .map(|p| p.shares.get(k).copied().unwrap_or(f64::NAN))
            .collect(),
    })
}
