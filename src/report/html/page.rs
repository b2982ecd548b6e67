//! The page shell of the HTML report: escaping, number formatting, the one
//! inline stylesheet (screen and print), sections, tables and heat cells.

use std::fmt::Write;

use crate::report::heat::{level, CORRELATION_CUTS, ELASTICITY_CUTS, SHARE_CUTS};
use crate::report::walk::{Cell, Matrix, Measure};

/// Escapes text for HTML and SVG content and attribute values.
pub fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

/// A number as the text report writes it (`report::num`), trimmed; a dash when missing.
pub fn short(x: f64) -> String {
    crate::report::num(x, 0).trim().to_string()
}

/// A number with fixed decimals, a dash when missing.
pub fn fixed(x: f64, decimals: usize) -> String {
    if x.is_finite() {
        format!("{x:.decimals$}")
    } else {
        "—".to_string()
    }
}

/// The inline stylesheet: no web fonts, no external files; print rules keep
/// tables whole, drop the contents list and keep the heat shading.
pub const STYLE: &str = r#"
:root { --ink: #1b1b1b; --muted: #555; --rule: #c8c8c8; }
body { font-family: system-ui, "Segoe UI", Helvetica, Arial, sans-serif; color: var(--ink); background: #fff; max-width: 60rem; margin: 0 auto; padding: 1.5rem; line-height: 1.45; }
h1 { font-size: 1.6rem; margin: 0 0 .2rem; }
h2 { font-size: 1.25rem; border-bottom: 2px solid var(--ink); padding-bottom: .15rem; margin-top: 2.2rem; }
h3 { font-size: 1.05rem; margin: 1.4rem 0 .4rem; }
p.sub, p.note, figcaption { color: var(--muted); font-size: .9rem; }
p.na { border-left: 4px solid var(--ink); padding: .3rem .7rem; background: #f3f3f3; }
nav ol { columns: 2; font-size: .9rem; }
table { border-collapse: collapse; margin: .5rem 0 1rem; font-size: .88rem; }
th, td { border-bottom: 1px solid var(--rule); padding: .22rem .55rem; text-align: right; vertical-align: top; }
th { border-bottom: 2px solid var(--ink); font-weight: 600; }
th:first-child, td:first-child, td.l, th.l { text-align: left; }
table.ratios th:nth-child(4), table.ratios th:nth-child(5), table.tests th:nth-child(5), table.switching th:nth-child(2), table.calibration th:nth-child(2) { text-align: left; }
td.num { font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.term td { font-weight: 600; background: #f3f3f3; text-align: left; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: .2rem 1rem; }
dl.facts dt { font-weight: 600; }
dl.facts dd { margin: 0; }
figure { margin: .6rem 0 1.2rem; }
figure svg { max-width: 100%; height: auto; }
.h0 { color: var(--muted); }
.h3, .h4 { font-weight: 700; }
.neg.h1 { background: #ffd7d7; } .neg.h2 { background: #ffafaf; } .neg.h3 { background: #ff875f; } .neg.h4 { background: #d70000; color: #fff; }
.pos.h1 { background: #d7ffff; } .pos.h2 { background: #afd7ff; } .pos.h3 { background: #5fafff; } .pos.h4 { background: #005faf; color: #fff; }
span.swatch { display: inline-block; padding: 0 .45rem; margin-left: .3rem; border: 1px solid var(--rule); }
ul.warn li, ul.cautions li { margin-bottom: .35rem; }
.scenario { border-top: 1px solid var(--rule); }
@media print {
  body { max-width: none; padding: 0; font-size: 10pt; }
  nav { display: none; }
  h2 { break-after: avoid; page-break-after: avoid; }
  table, figure, .scenario { break-inside: avoid; page-break-inside: avoid; }
  .neg, .pos { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  a { color: inherit; text-decoration: none; }
}
"#;

/// The whole document around the sections' HTML.
pub fn document(title: &str, body: &str) -> String {
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<meta name=\"generator\" content=\"sharecast {}\">\n<title>{}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n{body}</body>\n</html>\n",
        env!("CARGO_PKG_VERSION"),
        esc(title)
    )
}

/// A section with its id and heading; `inner` is HTML.
pub fn section(id: &str, heading: &str, inner: &str) -> String {
    format!(
        "<section id=\"{id}\">\n<h2>{}</h2>\n{inner}</section>\n",
        esc(heading)
    )
}

/// A paragraph that says plainly that a section does not apply, and why.
pub fn not_applicable(text: &str) -> String {
    format!("<p class=\"na\">{}</p>\n", esc(text))
}

/// A note paragraph (escaped).
pub fn note(text: &str) -> String {
    format!("<p class=\"note\">{}</p>\n", esc(text))
}

/// A chart in a figure with a caption.
pub fn figure(svg: &str, caption: &str) -> String {
    format!(
        "<figure>\n{svg}\n<figcaption>{}</figcaption>\n</figure>\n",
        esc(caption)
    )
}

/// A table from a header row and body rows of already-built cells (`<td>`s).
pub fn table(class: &str, header: &[&str], rows: &[String]) -> String {
    let mut s = format!("<table class=\"{class}\">\n<thead><tr>");
    for h in header {
        let _ = write!(s, "<th>{}</th>", esc(h));
    }
    s.push_str("</tr></thead>\n<tbody>\n");
    for r in rows {
        let _ = writeln!(s, "<tr>{r}</tr>");
    }
    s.push_str("</tbody>\n</table>\n");
    s
}

/// A left-aligned text cell.
pub fn label_cell(text: &str) -> String {
    format!("<td class=\"l\">{}</td>", esc(text))
}

/// A numeric cell.
pub fn num_cell(text: &str) -> String {
    format!("<td class=\"num\">{}</td>", esc(text))
}

/// A heat cell shaded like the workbench's matrices: the level by magnitude
/// on `cuts`, the sign by hue (the legend explains both).
pub fn heat_cell(value: f64, text: &str, cuts: &[f64; 4]) -> String {
    let l = level(value, cuts);
    let sign = if value < 0.0 { "neg" } else { "pos" };
    format!(
        "<td class=\"num {sign} h{l}\"><span class=\"v\">{}</span></td>",
        esc(text)
    )
}

/// The heat scale a matrix's measure is shaded on: elasticities on their
/// own, correlations on theirs, shares and changes in shares on the share scale.
pub fn cuts(measure: Measure) -> &'static [f64; 4] {
    match measure {
        Measure::PointElasticity | Measure::ArcElasticity { .. } => &ELASTICITY_CUTS,
        m if m.is_correlation() => &CORRELATION_CUTS,
        _ => &SHARE_CUTS,
    }
}

/// A matrix of the walk as a table of heat cells: the corner names both
/// axes, then the column labels; a dash where there is no figure.
pub fn heat_matrix(m: &Matrix) -> String {
    let corner = m.corner();
    let mut header: Vec<&str> = vec![&corner];
    header.extend(m.columns.labels.iter().map(String::as_str));
    let body: Vec<String> = m
        .rows
        .labels
        .iter()
        .enumerate()
        .map(|(r, label)| {
            let mut s = label_cell(label);
            for c in 0..m.columns.labels.len() {
                match m.cell(r, c) {
                    Cell::Value(f) => s.push_str(&heat_cell(
                        f.value,
                        &m.cell_text(r, c, " ± "),
                        cuts(m.measure),
                    )),
                    Cell::Missing | Cell::Same => s.push_str(&num_cell("—")),
                }
            }
            s
        })
        .collect();
    table("matrix", &header, &body)
}

/// The legend of a heat scale: a swatch per level with its lower cut (for a
/// signed scale, a warm and a cool swatch per level).
pub fn heat_legend(cuts: &[f64; 4], signed: bool) -> String {
    let mut s = String::from("<p class=\"note\">shading by magnitude:");
    for (l, c) in cuts.iter().enumerate() {
        let swatches = if signed {
            format!(
                "<span class=\"swatch neg h{0}\">−</span><span class=\"swatch pos h{0}\">+</span>",
                l + 1
            )
        } else {
            format!("<span class=\"swatch pos h{}\">&nbsp;</span>", l + 1)
        };
        let _ = write!(
            s,
            " {swatches}&nbsp;{}{c}",
            if signed { "|x| ≥ " } else { "≥ " }
        );
    }
    if signed {
        s.push_str(" · warm shades for negative values, cool for positive");
    }
    s.push_str("</p>\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escaping_covers_markup_and_quotes() {
        assert_eq!(
            esc("<a href=\"x\">&'"),
            "&lt;a href=&quot;x&quot;&gt;&amp;&#39;"
        );
    }

    #[test]
    fn heat_cells_carry_level_and_sign_without_glyphs() {
        let c = heat_cell(-0.6, "-0.600", &ELASTICITY_CUTS);
        assert!(c.contains("neg h3") && c.contains("-0.600"), "{c}");
        let faint = heat_cell(0.01, "0.010", &ELASTICITY_CUTS);
        assert!(faint.contains("pos h0"), "{faint}");
        // In HTML the colour and the legend carry the scale: no terminal shading glyphs.
        for g in crate::report::heat::GLYPHS.iter().skip(1) {
            assert!(!c.contains(g) && !heat_legend(&ELASTICITY_CUTS, true).contains(g));
        }
    }
}
