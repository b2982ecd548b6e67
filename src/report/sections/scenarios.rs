//! "Scenarios": each scenario's base and forecast shares with their bands
//! (chart and table), calibration, switching and warnings.

use std::fmt::Write;

use super::{Applies, Input, Section};
use crate::report::html::page::{esc, figure, fixed, label_cell, note, num_cell, table};
use crate::report::html::svg::{self, Pair};
use crate::report::html::Chart;
use crate::scenario::Forecast;

pub struct Scenarios;

impl Section for Scenarios {
    fn names(&self) -> (&'static str, &'static str) {
        ("scenarios", "Scenarios")
    }

    fn applies(&self, input: &Input) -> Applies {
        if input.m.forecasts.is_empty() {
            return Applies::No(
                "No scenario was given (add --scenario FILE, as many as you like).".into(),
            );
        }
        Applies::Yes
    }

    fn html(&self, input: &Input, charts: &mut Vec<Chart>) -> String {
        let mut s = String::new();
        for (k, (file, f)) in input.m.forecasts.iter().enumerate() {
            s.push_str(&one(k + 1, file, f, charts));
        }
        s
    }
}

/// One scenario as an article: heading, chart, shares table, calibration, switching, warnings.
fn one(k: usize, file: &str, f: &Forecast, charts: &mut Vec<Chart>) -> String {
    let id = format!("scenario-{k}");
    let mut s = format!(
        "<article class=\"scenario\" id=\"{id}\">\n<h3>{}</h3>\n",
        esc(&f.scenario)
    );
    s.push_str(&note(&format!(
        "from {file} · {} situations by sample enumeration · {}",
        f.situations,
        crate::report::forecast::bands(f)
    )));
    let pairs: Vec<Pair> = f
        .shares
        .iter()
        .map(|r| Pair {
            label: r.alternative.clone(),
            first: r.base,
            second: r.scenario,
            band: (f.draws > 0).then_some((r.low, r.high)),
        })
        .collect();
    let chart = svg::pairs(&f.scenario, ("base", "forecast"), &pairs);
    s.push_str(&figure(
        &chart,
        "Base shares (light) and forecast shares (dark) with the forecast's 95% band (whisker).",
    ));
    charts.push(Chart {
        name: id,
        svg: chart,
    });
    if let Some(c) = &f.calibration {
        s.push_str(&calibration(c));
    }
    s.push_str(&shares_table(f));
    s.push_str(&switching(f));
    if !f.warnings.is_empty() {
        s.push_str("<ul class=\"warn\">\n");
        for w in &f.warnings {
            let _ = writeln!(s, "<li>{}</li>", esc(w));
        }
        s.push_str("</ul>\n");
    }
    s.push_str("</article>\n");
    s
}

fn band(low: f64, high: f64, signed: bool) -> String {
    if low.is_nan() || high.is_nan() {
        "—".to_string()
    } else if signed {
        format!("{low:+.4} … {high:+.4}")
    } else {
        format!("{low:.4} … {high:.4}")
    }
}

fn shares_table(f: &Forecast) -> String {
    let volumes = f.shares.iter().any(|r| r.base_volume.is_some());
    let revenue = f.shares.iter().any(|r| r.base_revenue.is_some());
    let mut header = vec![
        "alternative",
        "base",
        "forecast",
        "change",
        "relative",
        "forecast 95%",
        "change 95%",
    ];
    if volumes {
        header.push("volume before → after");
    }
    if revenue {
        header.push("revenue before → after");
    }
    let rows: Vec<String> = f
        .shares
        .iter()
        .map(|r| {
            let relative = if r.relative_change.is_finite() {
                format!("{:+.1}%", 100.0 * r.relative_change)
            } else {
                "new".to_string()
            };
            let mut row = format!(
                "{}{}{}{}{}{}{}",
                label_cell(&r.alternative),
                num_cell(&format!("{:.4}", r.base)),
                num_cell(&format!("{:.4}", r.scenario)),
                num_cell(&format!("{:+.4}", r.change)),
                num_cell(&relative),
                num_cell(&band(r.low, r.high, false)),
                num_cell(&band(r.change_low, r.change_high, true))
            );
            if volumes {
                row.push_str(&num_cell(&format!(
                    "{} → {}",
                    fixed(r.base_volume.unwrap_or(f64::NAN), 1),
                    fixed(r.scenario_volume.unwrap_or(f64::NAN), 1)
                )));
            }
            if revenue {
                row.push_str(&num_cell(&format!(
                    "{} → {}",
                    fixed(r.base_revenue.unwrap_or(f64::NAN), 1),
                    fixed(r.scenario_revenue.unwrap_or(f64::NAN), 1)
                )));
            }
            row
        })
        .collect();
    table("forecast", &header, &rows)
}

fn calibration(c: &crate::scenario::calibrate::Calibrated) -> String {
    let mut s = note(&format!(
        "constants calibrated to target shares in {} iterations (largest gap {:.1e})",
        c.iterations, c.max_error
    ));
    let rows: Vec<String> = c
        .rows
        .iter()
        .map(|r| {
            format!(
                "{}{}{}{}{}{}",
                label_cell(&r.alternative),
                label_cell(&r.parameter),
                num_cell(&format!("{:.4}", r.target)),
                num_cell(&format!("{:.4}", r.estimated)),
                num_cell(&format!("{:.4}", r.calibrated)),
                num_cell(&format!("{:.4}", r.share_before))
            )
        })
        .collect();
    s.push_str(&table(
        "calibration",
        &[
            "alternative",
            "parameter",
            "target",
            "estimated",
            "calibrated",
            "share before",
        ],
        &rows,
    ));
    s
}

fn switching(f: &Forecast) -> String {
    let rows: Vec<String> = f
        .switching
        .iter()
        .filter(|r| r.share >= 5e-5)
        .map(|r| {
            format!(
                "{}{}{}",
                label_cell(&r.from),
                label_cell(&r.to),
                num_cell(&format!("{:.4}", r.share))
            )
        })
        .collect();
    if rows.is_empty() {
        return String::new();
    }
    let mut s = note("switching: share of all demand that moves (losses paired with gains within each situation)");
    s.push_str(&table("switching", &["from", "to", "share"], &rows));
    s
}
