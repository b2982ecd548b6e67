//! The one list of report sections. Each section is one module implementing
//! `Section` (id, heading, whether it applies, its HTML and, where the
//! terminal report has it, its text); `REGISTRY` lists them once, in page
//! order. The HTML page, its contents list and the text report are all built
//! from that list.

mod cautions;
mod classes;
mod correlated;
mod covariance;
mod curve;
mod diagnostics;
mod diversion;
mod elasticities;
mod estimates;
mod fitted;
mod random;
mod ratios;
mod scenarios;
mod shares;
mod statistics;

use crate::estimate::simcheck::DrawsCheck;
use crate::report::html::{Chart, Material};
use crate::report::walk::{self, Estimates, Walk};

/// Every section, in page order.
pub const REGISTRY: &[&dyn Section] = &[
    &fitted::Fitted,
    &statistics::Statistics,
    &estimates::EstimatesSection,
    &classes::Segments,
    &random::Tastes,
    &correlated::CorrelatedTastes,
    &covariance::ErrorCovariance,
    &ratios::ValueRatios,
    &elasticities::Elasticities,
    &diversion::Diversion,
    &shares::Shares,
    &scenarios::Scenarios,
    &curve::DemandCurve,
    &diagnostics::Diagnostics,
    &cautions::Cautions,
];

/// Whether a section applies to a fit and its material.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Applies {
    Yes,
    /// It does not, and why (the page says so in the section's place; the
    /// text report leaves the section out).
    No(String),
}

/// What every section reads: the material, the analysis and estimates
/// walked once, and the text report's own extras.
pub struct Input<'a> {
    pub m: &'a Material<'a>,
    /// The analysis walked (none when it was skipped).
    pub walk: Option<Walk>,
    pub estimates: Estimates,
    /// The text report may colour warnings.
    pub colour: bool,
    /// The simulation check (`fit --draws-check`), for the text report.
    pub draws_check: Option<&'a DrawsCheck>,
}

impl<'a> Input<'a> {
    pub fn new(m: &'a Material<'a>) -> Input<'a> {
        Input {
            m,
            walk: m.analysis.map(|a| Walk::new(m.spec, m.fit, a)),
            estimates: walk::estimates(m.spec, m.fit),
            colour: false,
            draws_check: None,
        }
    }

    /// `Yes` when the analysis was computed; said in a section's place otherwise.
    pub fn analysed(&self) -> Applies {
        self.analysed_unless(|_| None)
    }

    /// `Yes` when the analysis was computed and `why_not` finds nothing
    /// missing in it; otherwise why not.
    pub fn analysed_unless(&self, why_not: impl FnOnce(&Walk) -> Option<String>) -> Applies {
        match &self.walk {
            None => Applies::No("The analysis was skipped, so this section is empty.".into()),
            Some(w) => why_not(w).map_or(Applies::Yes, Applies::No),
        }
    }
}

/// One section of the reports.
pub trait Section: Sync {
    /// The page anchor and the heading on the page and in its contents
    /// list: `("elasticities", "Elasticities")`.
    fn names(&self) -> (&'static str, &'static str);
    /// The page anchor (`#elasticities`).
    fn id(&self) -> &'static str {
        self.names().0
    }
    /// The heading.
    fn heading(&self) -> &'static str {
        self.names().1
    }
    /// Whether the section applies, decided from `fit.family.abilities()`,
    /// the family's answers and the material, never from a family's name.
    fn applies(&self, input: &Input) -> Applies {
        let _ = input;
        Applies::Yes
    }
    /// The section's HTML inside its `<section>` (called only when it applies);
    /// charts it draws are pushed to `charts`.
    fn html(&self, input: &Input, charts: &mut Vec<Chart>) -> String;
    /// The terminal report's block (called only when it applies), or None
    /// where the terminal report has no such section.
    fn text(&self, input: &Input) -> Option<String> {
        let _ = input;
        None
    }
}

/// The sections' ids and headings in page order, as (id, heading) pairs
/// (`for (id, heading) in SECTIONS`).
#[derive(Clone, Copy, Debug)]
pub struct Contents;

/// The registry's ids and headings.
pub const SECTIONS: Contents = Contents;

type Pair = (&'static str, &'static str);

fn pair(s: &&dyn Section) -> Pair {
    s.names()
}

impl IntoIterator for Contents {
    type Item = Pair;
    type IntoIter =
        std::iter::Map<std::slice::Iter<'static, &'static dyn Section>, fn(&&dyn Section) -> Pair>;
    fn into_iter(self) -> Self::IntoIter {
        REGISTRY.iter().map(pair as fn(&&dyn Section) -> Pair)
    }
}

/// Every section's HTML in page order.
pub fn html(input: &Input, charts: &mut Vec<Chart>) -> String {
    let mut body = String::new();
    for s in REGISTRY {
        let inner = match s.applies(input) {
            Applies::Yes => s.html(input, charts),
            Applies::No(why) => crate::report::html::page::not_applicable(&why),
        };
        body.push_str(&crate::report::html::page::section(
            s.id(),
            s.heading(),
            &inner,
        ));
    }
    body
}

/// Every section's text block in page order, a blank line between blocks.
pub fn text(input: &Input) -> String {
    let blocks: Vec<String> = REGISTRY
        .iter()
        .filter(|s| s.applies(input) == Applies::Yes)
        .filter_map(|s| s.text(input))
        .collect();
    blocks.join("\n")
}
