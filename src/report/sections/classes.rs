//! "Segments the data find": for a latent class model, whether the decision
//! makers are a panel, how many random starts reached the best
//! log-likelihood (with a warning when few did or some ran off), each
//! class's tastes side by side under its share, the membership model, what
//! each class chooses, and the class shares by the values of each
//! membership column; all read from the walk (`walk::LatentClasses`).

use std::fmt::Write;

use super::{Applies, Input, Section};
use crate::report::html::page::{esc, fixed, label_cell, note, num_cell, table};
use crate::report::html::Chart;
use crate::report::walk::{class_count, Across, Estimated, LatentClasses, Row};
use crate::report::{errors_label, num, plus_minus, red};

pub struct Segments;

const TASTES: &str = "each class's tastes";
const SHARE: &str = "share of decision makers";
const SHARED: &str = "shared by every class";
const MEMBERSHIP: &str = "who is in which class: the membership model";
const MEMBERSHIP_HOW: &str = "each class against class 1, the largest: a positive coefficient on a column makes the class likelier than class 1 the more of the column a decision maker has; the constant sets those odds where every column is 0";
const CHOOSES: &str = "what each class chooses: predicted shares";
const BY_HOW: &str = "membership model: the class shares the membership model gives the decision makers in each band, averaged; given choices: their class probabilities after their own choices, averaged";

/// A figure in a class's column: value ± s.e., or the value and "fixed".
fn figure(e: &Estimated) -> String {
    if e.fixed {
        format!("{} (fixed)", num(e.value, 0).trim())
    } else {
        plus_minus(e.value, e.std_error)
    }
}

/// The line above the tastes table.
fn errors_line(input: &Input) -> String {
    format!(
        "value ± standard error {}; a parameter every class shares stands once across the columns",
        errors_label(input.m.fit)
    )
}

/// One row's cells on the page (the shared figure spans the classes).
fn html_row(r: &Row, columns: usize) -> String {
    let mut s = label_cell(&r.name);
    match &r.across {
        Across::Shared(e) => {
            let _ = write!(
                s,
                "<td class=\"num\" colspan=\"{columns}\">{} · {SHARED}</td>",
                esc(&figure(e))
            );
        }
        Across::PerClass(cells) => {
            for c in cells {
                s.push_str(&num_cell(&c.as_ref().map(figure).unwrap_or_default()));
            }
        }
    }
    s
}

/// The side-by-side table: the classes and their shares in the head, a
/// heading row per term, then its parameters.
fn tastes_html(c: &LatentClasses) -> String {
    let k = c.classes.len();
    let mut s = String::from("<table class=\"classes\">\n<thead><tr><th>term ↓ / class →</th>");
    for class in &c.classes {
        let _ = write!(s, "<th>{}</th>", esc(&class.name));
    }
    let _ = write!(s, "</tr>\n<tr class=\"shares\"><th>{SHARE}</th>");
    for class in &c.classes {
        let _ = write!(
            s,
            "<th>{}</th>",
            esc(&plus_minus(class.share.value, class.share.std_error))
        );
    }
    s.push_str("</tr></thead>\n<tbody>\n");
    for b in &c.tastes {
        let _ = writeln!(
            s,
            "<tr class=\"term\"><td class=\"l\" colspan=\"{}\">{}</td></tr>",
            k + 1,
            esc(&b.term)
        );
        for r in &b.rows {
            let _ = writeln!(s, "<tr>{}</tr>", html_row(r, k));
        }
    }
    s.push_str("</tbody>\n</table>\n");
    s
}

/// The membership, predicted-share and by-column tables.
fn rest_html(c: &LatentClasses, alternatives: &[String]) -> String {
    let mut s = format!("<h3>{}</h3>\n{}", esc(MEMBERSHIP), note(MEMBERSHIP_HOW));
    let against = c.against_first();
    let mut head = vec!["row ↓ / class →"];
    head.extend(against.iter().map(String::as_str));
    let rows: Vec<String> = c.membership.iter().map(|r| html_row(r, 0)).collect();
    s.push_str(&table("membership", &head, &rows));
    let _ = writeln!(s, "<h3>{}</h3>", esc(CHOOSES));
    let mut head = vec!["alternative ↓ / class →"];
    head.extend(c.classes.iter().map(|x| x.name.as_str()));
    let rows: Vec<String> = alternatives
        .iter()
        .enumerate()
        .map(|(j, a)| {
            let cells: String = c
                .classes
                .iter()
                .map(|x| num_cell(&x.predicted.get(j).map_or("—".into(), |p| fixed(*p, 4))))
                .collect();
            label_cell(a) + &cells
        })
        .collect();
    s.push_str(&table("class-choices", &head, &rows));
    for by in &c.by_column {
        let _ = writeln!(s, "<h3>class shares by {}</h3>", esc(&by.column));
        s.push_str(&note(BY_HOW));
        let mut head = vec![by.column.clone(), "decision makers".into()];
        for x in &c.classes {
            head.push(format!("{}: membership model", x.name));
            head.push(format!("{}: given choices", x.name));
        }
        let head: Vec<&str> = head.iter().map(String::as_str).collect();
        let rows: Vec<String> = by
            .bands
            .iter()
            .map(|b| {
                let mut r = label_cell(&b.label) + &num_cell(&b.decision_makers.to_string());
                for (p, q) in b.prior.iter().zip(&b.posterior) {
                    r.push_str(&num_cell(&fixed(*p, 4)));
                    r.push_str(&num_cell(&fixed(*q, 4)));
                }
                r
            })
            .collect();
        s.push_str(&table("class-bands", &head, &rows));
    }
    s
}

/// The walk's classes, when there are some.
fn walked<'a>(input: &'a Input) -> Option<&'a LatentClasses> {
    input.walk.as_ref()?.classes.as_ref()
}

impl Section for Segments {
    fn names(&self) -> (&'static str, &'static str) {
        ("classes", "Segments the data find")
    }

    fn applies(&self, input: &Input) -> Applies {
        match class_count(input.m.spec) {
            0 => {
                return Applies::No(format!(
                    "The {} model has no latent classes: every decision maker has the same tastes or draws them from one distribution. A latent class model (family = \"latent-class\", classes = 2 or more) looks for segments.",
                    input.m.fit.family.name()
                ))
            }
            1 => {
                return Applies::No(
                    "One class: the model is the logit, with no segments to compare; set [model].classes to 2 or more.".into(),
                )
            }
            _ => {}
        }
        input.analysed_unless(|w| {
            w.classes
                .is_none()
                .then(|| "The analysis returned no class figures.".to_string())
        })
    }

    fn html(&self, input: &Input, _charts: &mut Vec<Chart>) -> String {
        let Some(c) = walked(input) else {
            return String::new();
        };
        let mut s = note(c.structure_line());
        if let Some(line) = c.starts_line() {
            s.push_str(&note(&line));
        }
        if !c.warnings.is_empty() {
            s.push_str("<ul class=\"warn\">\n");
            for w in &c.warnings {
                let _ = writeln!(s, "<li>{}</li>", esc(w));
            }
            s.push_str("</ul>\n");
        }
        let _ = writeln!(s, "<h3>{}</h3>", esc(TASTES));
        s.push_str(&note(&errors_line(input)));
        s.push_str(&tastes_html(c));
        s.push_str(&rest_html(c, &input.m.spec.alternative_names()));
        s
    }

    fn text(&self, input: &Input) -> Option<String> {
        let c = walked(input)?;
        let mut s = format!("segments the data find · {}\n", c.structure_line());
        if let Some(line) = c.starts_line() {
            let _ = writeln!(s, "  {line}");
        }
        for w in &c.warnings {
            let _ = writeln!(s, "  {}", red(&format!("! {w}"), input.colour));
        }
        let _ = writeln!(s, "  {TASTES} · {}", errors_line(input));
        text_tables(&mut s, c, &input.m.spec.alternative_names());
        Some(s)
    }
}

/// Cells in columns of `w` after a label column of `lw`.
fn text_line(s: &mut String, label: &str, lw: usize, cells: &[String], w: usize) {
    let _ = write!(s, "  {label:<lw$}");
    for c in cells {
        let _ = write!(s, "{c:>w$}");
    }
    let _ = writeln!(s);
}

/// A row's cells in the terminal report.
fn text_cells(r: &Row) -> Vec<String> {
    match &r.across {
        Across::Shared(e) => vec![format!("{} · {SHARED}", figure(e))],
        Across::PerClass(cells) => cells
            .iter()
            .map(|c| c.as_ref().map(figure).unwrap_or_default())
            .collect(),
    }
}

/// The terminal report's tables: tastes, membership, predicted shares and
/// the shares by each membership column.
fn text_tables(s: &mut String, c: &LatentClasses, alternatives: &[String]) {
    let names: Vec<String> = c.classes.iter().map(|x| x.name.clone()).collect();
    let shares: Vec<String> = c
        .classes
        .iter()
        .map(|x| plus_minus(x.share.value, x.share.std_error))
        .collect();
    let rows = c.tastes.iter().flat_map(|b| &b.rows).chain(&c.membership);
    let w = rows
        .clone()
        .flat_map(|r| match &r.across {
            Across::PerClass(_) => text_cells(r),
            Across::Shared(_) => Vec::new(),
        })
        .chain(shares.iter().cloned())
        .map(|x| x.chars().count())
        .max()
        .unwrap_or(8)
        + 3;
    let lw = rows
        .map(|r| r.name.chars().count() + 2)
        .chain([SHARE.len(), 24])
        .max()
        .unwrap_or(24)
        + 2;
    text_line(s, "term ↓ / class →", lw, &names, w);
    text_line(s, SHARE, lw, &shares, w);
    for b in &c.tastes {
        let _ = writeln!(s, "  ┌ {}", b.term);
        for r in &b.rows {
            text_line(s, &format!("│ {}", r.name), lw, &text_cells(r), w);
        }
    }
    let _ = writeln!(s, "  {MEMBERSHIP} · {MEMBERSHIP_HOW}");
    text_line(s, "row ↓ / class →", lw, &c.against_first(), w);
    for r in &c.membership {
        text_line(s, &r.name, lw, &text_cells(r), w);
    }
    let _ = writeln!(s, "  {CHOOSES}");
    text_line(s, "alternative ↓ / class →", lw, &names, w);
    for (j, a) in alternatives.iter().enumerate() {
        let cells: Vec<String> = c
            .classes
            .iter()
            .map(|x| x.predicted.get(j).map_or("—".into(), |p| fixed(*p, 4)))
            .collect();
        text_line(s, a, lw, &cells, w);
    }
    for by in &c.by_column {
        let _ = writeln!(
            s,
            "  class shares by {} (membership model / given choices) · {BY_HOW}",
            by.column
        );
        let mut head = vec!["decision makers".to_string()];
        head.extend(names.iter().cloned());
        text_line(s, &by.column, lw, &head, w);
        for b in &by.bands {
            let mut cells = vec![b.decision_makers.to_string()];
            cells.extend(
                b.prior
                    .iter()
                    .zip(&b.posterior)
                    .map(|(p, q)| format!("{} / {}", fixed(*p, 4), fixed(*q, 4))),
            );
            text_line(s, &b.label, lw, &cells, w);
        }
    }
}
