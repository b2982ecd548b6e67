//! The design's reports (`sharecast design`, `sharecast report DESIGN.toml`):
//! the sections of a survey design, each one module behind `DesignSection`,
//! listed once in `REGISTRY` (page order); the terminal text and the HTML
//! page are both built from that list. Nothing here computes a figure.

mod balance;
mod cautions;
mod precision;
mod rehearsal;
mod summary;
mod tasks;

use std::fmt::Write;

use crate::experiment::Outcome;
use crate::report::html::page;

/// Every section of a design's report, in page order.
pub const REGISTRY: &[&dyn DesignSection] = &[
    &summary::Summary,
    &precision::Precision,
    &rehearsal::Rehearsal,
    &balance::Balance,
    &tasks::Tasks,
    &cautions::Cautions,
];

/// One section of a design's reports.
pub trait DesignSection: Sync {
    /// The page anchor and the heading.
    fn names(&self) -> (&'static str, &'static str);
    /// Whether it applies; `Err(why)` is said in its place on the page.
    fn applies(&self, o: &Outcome) -> Result<(), String> {
        let _ = o;
        Ok(())
    }
    /// Its HTML inside the `<section>`.
    fn html(&self, o: &Outcome) -> String;
    /// Its block of the terminal text (None: the terminal leaves it out).
    fn text(&self, o: &Outcome) -> Option<String>;
}

/// A figure with four significant digits; a dash when missing or infinite.
pub fn fig(x: f64) -> String {
    if !x.is_finite() {
        return "—".into();
    }
    let a = x.abs();
    if a != 0.0 && !(1e-4..1e6).contains(&a) {
        return format!("{x:.3e}");
    }
    let d = if a >= 1.0 {
        (3 - a.log10().floor() as i64).max(0) as usize
    } else if a == 0.0 {
        0
    } else {
        (3 - a.log10().floor() as i64) as usize
    };
    format!("{x:.d$}")
}

/// A level as written in the design file (2, 0.5, 7.25).
pub fn level(x: f64) -> String {
    format!("{x}")
}

/// A count of respondents: rounded up; a dash when there is none.
pub fn people(x: Option<f64>) -> String {
    match x {
        Some(v) if v.is_finite() => format!("{}", v.ceil().max(1.0) as u64),
        _ => "—".into(),
    }
}

/// What a design file asks for, before any search (`sharecast check DESIGN.toml`).
pub fn plan_summary(plan: &crate::experiment::Plan) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "design file {}", plan.path.display());
    let _ = writeln!(s, "  alternatives   {}", plan.alternatives.join(", "));
    let _ = writeln!(
        s,
        "  tasks          {} in {} block(s) of {}",
        plan.tasks,
        plan.blocks,
        plan.per_block()
    );
    let _ = writeln!(s, "  parameters     {}", plan.parameters().join(", "));
    let columns: Vec<&str> = plan.columns.iter().map(|c| c.name.as_str()).collect();
    let _ = writeln!(s, "  columns        task, block, {}", columns.join(", "));
    let criterion = if plan.bayesian() {
        format!("Bayesian D-error over {} prior draws", plan.draws)
    } else {
        "D-error at the fixed priors".into()
    };
    let _ = writeln!(
        s,
        "  criterion      {criterion}; {} random starts from seed {}",
        plan.starts, plan.seed
    );
    let _ = writeln!(
        s,
        "  rules          {} [[forbid]] rule(s)",
        plan.forbids.len()
    );
    s
}

/// The terminal report of a design.
pub fn text(o: &Outcome) -> String {
    let mut s = String::new();
    for sec in REGISTRY {
        if sec.applies(o).is_err() {
            continue;
        }
        if let Some(block) = sec.text(o) {
            let _ = writeln!(s, "{}\n", block.trim_end());
        }
    }
    s
}

/// The page's title.
pub fn title(o: &Outcome) -> String {
    match &o.title {
        Some(t) => format!("Survey design: {t}"),
        None => "Survey design".into(),
    }
}

/// The HTML page of a design.
pub fn html(o: &Outcome) -> String {
    let mut body = format!("<h1>{}</h1>\n", page::esc(&title(o)));
    body.push_str("<nav><ol>\n");
    for sec in REGISTRY {
        let (id, heading) = sec.names();
        let _ = writeln!(
            body,
            "<li><a href=\"#{id}\">{}</a></li>",
            page::esc(heading)
        );
    }
    body.push_str("</ol></nav>\n");
    for sec in REGISTRY {
        let (id, heading) = sec.names();
        let inner = match sec.applies(o) {
            Ok(()) => sec.html(o),
            Err(why) => page::not_applicable(&why),
        };
        body.push_str(&page::section(id, heading, &inner));
    }
    page::document(&title(o), &body)
}
