//! The estimates view's drawing: the parameter table with its group
//! headings and interval strips, the cut-point axis, the random
//! coefficients' spreads (and the grid of correlated ones), the family's
//! derived figures, and the value ratios; in willingness-to-pay space a
//! line saying so and each row's unit; latent classes side by side
//! (`classes`).

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use super::{fit_robust, ordered, Shown, State};
use crate::estimate::Fit;
use crate::report::walk::Space;
use crate::report::{num, pval};
use crate::tui::app::Loaded;
use crate::tui::part::Ctx;
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, interval_strip, left, panel, right};

/// Short numbers for interval ends: four significant digits.
fn short(x: f64) -> String {
    if !x.is_finite() {
        return "—".into();
    }
    let a = x.abs();
    let d = if a >= 100.0 {
        1
    } else if a >= 10.0 {
        2
    } else if a >= 1.0 {
        3
    } else if a >= 0.001 {
        4
    } else {
        return format!("{x:.1e}");
    };
    format!("{x:.d$}")
}

pub fn render(st: &State, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let fit = &l.model.fit;
    let robust = st.robust.unwrap_or_else(|| fit_robust(fit));
    let ratios = l.analysis.ready().map(|a| a.ratios.as_slice());
    let ratio_h = match ratios {
        Some([]) => 0,
        Some(r) => (r.len() + r.iter().filter(|x| x.note.is_some()).count()) as u16 + 3,
        None => 3,
    };
    let [table, bottom] =
        Layout::vertical([Constraint::Min(6), Constraint::Length(ratio_h)]).areas(area);
    let errors = if robust {
        if fit.design.obs.group.is_some() {
            "value ± s.e. clustered by decision maker"
        } else {
            "value ± robust s.e. by situation"
        }
    } else {
        "value ± s.e. from the Hessian"
    };
    let title = match super::side_by_side(st, l) {
        Some(_) => format!("estimates · classes side by side · {errors}"),
        None => format!("estimates · {errors} · {}", st.sort.label()),
    };
    let block = panel(title, t);
    let inner = block.inner(table);
    block.render(table, buf);
    let (lines, cursor_line, pinned) = table_lines(st, l, inner.width as usize, t);
    let height = inner.height as usize;
    let offset = cursor_line.saturating_sub(height.saturating_sub(pinned));
    let visible: Vec<Line> = if offset > 0 {
        let mut lines = lines;
        let rest = lines.split_off(pinned);
        lines.extend(rest.into_iter().skip(offset));
        lines
    } else {
        lines
    };
    Paragraph::new(visible).render(inner, buf);

    if ratio_h > 0 {
        ratio_panel(l, ratios, t, bottom, buf);
    }
}

/// The value ratios with their delta-method and Krinsky-Robb intervals, and
/// a ratio's note below it where it has one.
fn ratio_panel(
    l: &Loaded,
    ratios: Option<&[crate::analysis::ratios::RatioRow]>,
    t: &Theme,
    bottom: Rect,
    buf: &mut Buffer,
) {
    let block = panel("value ratios", t);
    let inner = block.inner(bottom);
    block.render(bottom, buf);
    let mut lines = vec![Line::from(Span::styled(
        format!(
            "{}{}{}{}{}  unit",
            left("ratio (WTP)", 20),
            right("value", 10),
            right("s.e.", 9),
            right("delta 95%", 18),
            right("Krinsky-Robb 95%", 19)
        ),
        t.header(),
    ))];
    match ratios {
        Some(rs) => {
            for r in rs {
                lines.push(Line::from(vec![
                    Span::raw(format!(
                        "{}{}{}{}{}",
                        left(&r.name, 20),
                        right(&fixed(r.value, 4), 10),
                        right(&fixed(r.std_error, 4), 9),
                        right(&format!("{}…{}", short(r.ci_low), short(r.ci_high)), 18),
                        right(&format!("{}…{}", short(r.kr_low), short(r.kr_high)), 19),
                    )),
                    Span::styled(
                        format!(
                            "  {}{}",
                            if r.distribution.is_some() {
                                "median across decision makers · "
                            } else {
                                ""
                            },
                            r.unit.as_deref().unwrap_or("")
                        ),
                        t.dim(),
                    ),
                ]));
                if let Some(n) = &r.note {
                    lines.push(Line::from(Span::styled(format!("  ↳ {n}"), t.dim())));
                }
            }
        }
        None => {
            let msg = match &l.analysis {
                crate::tui::app::Pending::Failed(e) => e.clone(),
                _ => l.analysing(),
            };
            lines.push(Line::from(Span::styled(msg, t.dim())));
        }
    }
    Paragraph::new(lines).render(inner, buf);
}

/// The table's header and rows (with group headings), then the cut-point
/// axis, the random coefficients' spreads and the family's derived figures;
/// the line the cursor is on and how many lines stay on top when scrolling.
fn table_lines(st: &State, l: &Loaded, w: usize, t: &Theme) -> (Vec<Line<'static>>, usize, usize) {
    let fit = &l.model.fit;
    if let Some(c) = super::side_by_side(st, l) {
        let names = l.model.spec.alternative_names();
        return super::classes::lines(c, fit, &names, st, t);
    }
    let rows = ordered(&l.model.spec, fit, st);
    let longest = rows
        .iter()
        .map(|(_, r)| r.name.chars().count())
        .max()
        .unwrap_or(0);
    let (nw, ew, tw, pw, iw) = ((longest + 3).clamp(15, 26), 19, 7, 8, 16);
    let uw = rows
        .iter()
        .filter_map(|(_, r)| r.unit.as_ref().map(|u| u.chars().count() + 2))
        .max()
        .unwrap_or(0)
        .min(44)
        .min(w.saturating_sub(nw + ew + tw + pw + iw + 16));
    let strip_w = w.saturating_sub(nw + ew + tw + pw + iw + uw + 2).max(5);
    let mut lines = Vec::new();
    if let Some(space) = Space::of(&l.model.spec, fit) {
        lines.push(Line::from(Span::styled(space.brief(), t.accent())));
    }
    lines.push(header((nw, ew, tw, pw, iw, uw, strip_w), t));
    let pinned = lines.len();
    let mut cursor_line = 0;
    for (i, (head, r)) in rows.iter().enumerate() {
        if let Some(h) = head {
            let against = if r.null != 0.0 {
                format!("  (t and p against {})", r.null)
            } else {
                String::new()
            };
            lines.push(Line::from(Span::styled(
                format!("▸ {h}{against}"),
                t.accent(),
            )));
        }
        if i == st.cursor {
            cursor_line = lines.len();
        }
        lines.push(row_line(
            r,
            i == st.cursor,
            (nw, ew, tw, pw, iw, uw, strip_w),
            t,
        ));
        if let Some(m) = r.median {
            lines.push(Line::from(Span::styled(
                format!(
                    "    ↳ median across decision makers {}",
                    crate::report::plus_minus(m.value, m.std_error)
                ),
                t.dim(),
            )));
        }
    }
    lines.extend(extras(&rows, l, w, t));
    (lines, cursor_line, pinned)
}

/// The columns' widths: name, value, t, p, interval, unit (0 without), strip.
type Widths = (usize, usize, usize, usize, usize, usize, usize);

/// The table's header: each column's heading in its width.
fn header((nw, ew, tw, pw, iw, uw, strip_w): Widths, t: &Theme) -> Line<'static> {
    let unit = if uw > 0 {
        "  price scale or value in"
    } else {
        ""
    };
    let strip = if strip_w >= 34 {
        "0 ┆ 95% interval, each row to its own scale"
    } else if strip_w >= 16 {
        "own scale per row"
    } else {
        "own scale"
    };
    Line::from(Span::styled(
        format!(
            "{}{}{}{}{}{}  {}",
            left("parameter", nw),
            right("value ± s.e.", ew),
            right("t", tw),
            right("p", pw),
            right("95% interval", iw),
            left(unit, uw),
            left(strip, strip_w)
        ),
        t.header(),
    ))
}

/// One parameter's row: name, value ± s.e., t, p, interval, unit and its strip.
fn row_line(
    r: &Shown,
    at_cursor: bool,
    (nw, ew, tw, pw, iw, uw, strip_w): Widths,
    t: &Theme,
) -> Line<'static> {
    let value = if r.fixed {
        format!("{} fixed", num(r.estimate, 0).trim())
    } else {
        format!(
            "{} ± {}",
            num(r.estimate, 0).trim(),
            num(r.std_error, 0).trim()
        )
    };
    let interval = format!("{}…{}", short(r.low), short(r.high));
    let text = format!(
        "{}{}{}{}{}",
        left(
            &format!("{} {}", if at_cursor { '›' } else { ' ' }, r.name),
            nw
        ),
        right(&value, ew),
        right(&fixed(r.t, 2), tw),
        right(&pval(r.p), pw),
        right(&interval, iw),
    );
    let style = if at_cursor {
        t.selected()
    } else {
        Default::default()
    };
    let mut spans = vec![Span::styled(text, style)];
    if uw > 0 {
        let unit = format!("  {}", r.unit.as_deref().unwrap_or(""));
        spans.push(Span::styled(left(&unit, uw), t.dim()));
    }
    spans.push(Span::raw("  "));
    spans.extend(interval_strip(r.low, r.estimate, r.high, strip_w, t).spans);
    Line::from(spans)
}

/// What follows the rows: the cut-point axis, spreads and derived figures.
fn extras(rows: &[(Option<String>, Shown)], l: &Loaded, w: usize, t: &Theme) -> Vec<Line<'static>> {
    let fit = &l.model.fit;
    let mut lines = Vec::new();
    if fit.family.abilities().ordered {
        let cuts: Vec<(f64, f64, f64)> = rows
            .iter()
            .filter(|(_, r)| r.term == "cut-points")
            .map(|(_, r)| (r.low, r.estimate, r.high))
            .collect();
        let mut cuts = cuts;
        cuts.sort_by(|a, b| a.1.total_cmp(&b.1));
        lines.push(Line::from(""));
        lines.extend(crate::tui::cutaxis::lines(
            &cuts,
            &l.model.spec.alternative_names(),
            w.saturating_sub(2),
        ));
    }
    let space = Space::of(&l.model.spec, fit);
    lines.extend(spreads(fit, space.as_ref(), w.saturating_sub(2), t));
    if let Some(c) = l.walk.as_ref().and_then(|w| w.correlated.as_ref()) {
        lines.extend(super::tastes::grid(c, w.saturating_sub(2), t));
    }
    if let Some(a) = l.analysis.ready() {
        lines.extend(derived(&a.derived, t));
    }
    lines
}

/// The family's derived figures (the multinomial probit's error covariance
/// and correlations), one block per group; a correlation gets a bar from -1
/// to 1 with `┃` at zero.
fn derived(rows: &[crate::analysis::DerivedRow], t: &Theme) -> Vec<Line<'static>> {
    let mut out = Vec::new();
    let mut group: Option<&str> = None;
    let name_w = rows
        .iter()
        .map(|r| r.name.chars().count())
        .max()
        .unwrap_or(4)
        + 3;
    for r in rows {
        if group != Some(r.group.as_str()) {
            out.push(Line::from(""));
            out.push(Line::from(Span::styled(
                format!("▸ {}", r.group),
                t.accent(),
            )));
            group = Some(&r.group);
        }
        let bar = if r.name.starts_with("corr(") && r.value.is_finite() {
            const W: usize = 21;
            let at = (((r.value.clamp(-1.0, 1.0) + 1.0) / 2.0) * (W - 1) as f64).round() as usize;
            (0..W)
                .map(|k| {
                    if k == at {
                        '●'
                    } else if k == W / 2 {
                        '┃'
                    } else {
                        '·'
                    }
                })
                .collect::<String>()
        } else {
            String::new()
        };
        out.push(Line::from(format!(
            "  {}{} ± {}   {bar}",
            left(&r.name, name_w),
            right(&fixed(r.value, 4), 9),
            fixed(r.std_error, 4)
        )));
    }
    out
}

/// Each random coefficient's distribution across decision makers as a row of
/// bars between its 0.5% and 99.5% points, zero marked `┃` where it falls
/// inside, and the share below zero.
fn spreads(fit: &Fit, space: Option<&Space>, width: usize, t: &Theme) -> Vec<Line<'static>> {
    let terms = fit.family.random_coefficients();
    if terms.is_empty() {
        return Vec::new();
    }
    let mut out = vec![
        Line::from(""),
        Line::from(Span::styled(
            "▸ random coefficients across decision makers (0.5% … 99.5%; ┃ zero)",
            t.accent(),
        )),
    ];
    let name_w = terms
        .iter()
        .map(|x| fit.names[x.location].chars().count())
        .max()
        .unwrap_or(4)
        + 3;
    let bins = width.saturating_sub(name_w + 40).clamp(8, 48);
    for term in &terms {
        let h = crate::analysis::random::histogram(term, &fit.beta, bins);
        let top = h.shares.iter().copied().fold(0.0, f64::max).max(1e-300);
        const BARS: [char; 8] = ['▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];
        let zero = (h.low < 0.0 && h.high > 0.0)
            .then(|| ((-h.low / (h.high - h.low)) * bins as f64) as usize);
        let bars: String = h
            .shares
            .iter()
            .enumerate()
            .map(|(b, x)| {
                if Some(b) == zero {
                    '┃'
                } else {
                    BARS[((x / top) * 7.0).round().clamp(0.0, 7.0) as usize]
                }
            })
            .collect();
        let mut line = Line::from(format!(
            "  {}{} {bars} {}   below 0: {:.1}%",
            left(&fit.names[term.location], name_w),
            right(&short(h.low), 8),
            short(h.high),
            100.0 * h.below_zero
        ));
        if let Some(reads) = space.and_then(|s| s.reads(term.location)) {
            line.push_span(Span::styled(format!("   {reads}"), t.dim()));
        }
        out.push(line);
    }
    out
}
