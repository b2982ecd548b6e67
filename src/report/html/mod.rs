//! The HTML report (`sharecast report`): one self-contained page laying out
//! results the library returned — the fit, its analysis, scenario forecasts
//! and demand curves — with inline hand-made SVG charts, section by section
//! from `report::sections::REGISTRY`. Nothing here computes a statistic;
//! sections that do not apply to a family say so.

pub mod page;
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

/// The sections' ids and headings in page order, from the registry
/// (the contents list and the tests read these).
pub use crate::report::sections::SECTIONS;

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
    let input = crate::report::sections::Input::new(m);
    body.push_str(&crate::report::sections::html(&input, &mut charts));
    body.push_str(&format!(
        "<footer><p class=\"note\">Written by sharecast {}. The page needs no network: its charts are drawn in the page itself.</p></footer>\n",
        env!("CARGO_PKG_VERSION")
    ));
    Page {
        html: page::document(&title, &body),
        charts,
    }
}

/// The contents list, in the registry's order.
fn contents() -> String {
    let mut s = String::from("<nav aria-label=\"contents\">\n<ol>\n");
    for (id, heading) in SECTIONS {
        s.push_str(&format!(
            "<li><a href=\"#{id}\">{}</a></li>\n",
            page::esc(heading)
        ));
    }
    s.push_str("</ol>\n</nav>\n");
    s
}
