//! The HTML report (`sharecast report`): one self-contained page laying out
//! results the library returned — the fit, its analysis, scenario forecasts
//! and demand curves — with inline hand-made SVG charts. Nothing here
//! computes a statistic; sections that do not apply to a family say so.

mod analysis;
mod fitted;
pub mod page;
mod random;
mod scenarios;
pub mod svg;

use crate::analysis::Analysis;
use crate::estimate::Fit;
use crate::scenario::sweep::Sweep;
use crate::scenario::Forecast;
use crate::spec::Spec;

/// Demand curves over a price attribute: one sweep per alternative where it
/// enters, and what named it as the price.
#[derive(Clone, Debug)]
pub struct Curves {
    pub attribute: String,
    /// Where the price was named ("scenario `…` (price = …)", "[[ratio]] `…`").
    pub named_by: String,
    pub sweeps: Vec<Sweep>,
}

/// Everything the page shows, as the library returned it.
pub struct Material<'a> {
    pub spec: &'a Spec,
    pub fit: &'a Fit,
    /// How the spec is named on the page (the path given on the command line).
    pub spec_label: String,
    pub analysis: Option<&'a Analysis>,
    /// Each scenario's forecast, in the order given, with the file it came from.
    pub forecasts: Vec<(String, Forecast)>,
    /// Demand curves, or why there are none.
    pub curves: std::result::Result<Curves, String>,
    /// Notes on how the figures were obtained (a restored fit, ...).
    pub notes: Vec<String>,
}

/// One chart, also written on its own with `--charts DIR`.
#[derive(Clone, Debug)]
pub struct Chart {
    /// File stem (`estimates`, `scenario-1`, ...).
    pub name: String,
    pub svg: String,
}

/// The page and its charts.
pub struct Page {
    pub html: String,
    pub charts: Vec<Chart>,
}

/// The sections in page order: id and heading (the contents list and the tests use these).
pub const SECTIONS: [(&str, &str); 13] = [
    ("fitted", "What was fitted"),
    ("fit-statistics", "How well it fits"),
    ("estimates", "Estimates"),
    ("random-coefficients", "Tastes across decision makers"),
    ("error-covariance", "Shared unobserved traits"),
    ("value-ratios", "Value ratios"),
    ("elasticities", "Elasticities"),
    ("diversion", "Diversion"),
    ("shares", "Observed and predicted shares"),
    ("scenarios", "Scenarios"),
    ("demand-curve", "Demand curve"),
    ("diagnostics", "Diagnostics"),
    ("cautions", "Cautions"),
];

/// Builds the page.
pub fn page(m: &Material) -> Page {
    let mut charts = Vec::new();
    let title = m
        .spec
        .title
        .clone()
        .unwrap_or_else(|| "(untitled model)".to_string());
    let mut body = format!(
        "<header>\n<h1>{}</h1>\n<p class=\"sub\">sharecast report · {} model of {} · spec {}</p>\n</header>\n",
        page::esc(&title),
        page::esc(m.fit.family.name()),
        page::esc(&m.spec.data.file_written),
        page::esc(&m.spec_label)
    );
    body.push_str(&contents());
    body.push_str(&fitted::what_was_fitted(m));
    body.push_str(&fitted::statistics(m));
    body.push_str(&fitted::estimates(m, &mut charts));
    body.push_str(&random::random_coefficients(m));
    body.push_str(&random::error_covariance(m));
    body.push_str(&analysis::ratios(m));
    body.push_str(&analysis::elasticities(m));
    body.push_str(&analysis::diversion(m));
    body.push_str(&fitted::shares(m, &mut charts));
    body.push_str(&scenarios::scenarios(m, &mut charts));
    body.push_str(&scenarios::demand_curve(m, &mut charts));
    body.push_str(&fitted::diagnostics(m));
    body.push_str(&fitted::cautions(m));
    body.push_str(&format!(
        "<footer><p class=\"note\">Written by sharecast {}. The page needs no network: its charts are drawn in the page itself.</p></footer>\n",
        env!("CARGO_PKG_VERSION")
    ));
    Page {
        html: page::document(&title, &body),
        charts,
    }
}

/// The contents list.
fn contents() -> String {
    let mut s = String::from("<nav aria-label=\"contents\">\n<ol>\n");
    for (id, heading) in SECTIONS {
        s.push_str(&format!("<li><a href=\"#{id}\">{heading}</a></li>\n"));
    }
    s.push_str("</ol>\n</nav>\n");
    s
}

/// The heading of a section by id.
fn heading(id: &str) -> &'static str {
    SECTIONS
        .iter()
        .find(|(i, _)| *i == id)
        .map(|(_, h)| *h)
        .unwrap_or("")
}
