//! The estimates view: the parameter table grouped by spec term, with a
//! strip per row that shows where the interval lies against zero, the
//! choice of classical or robust errors, sorting, and the value ratios.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::analysis::random::{log_median, Figure};
use crate::estimate::{Fit, ParameterRow};
use crate::report::walk::MEAN_OF_LOG;
use crate::report::{num, pval};
use crate::tui::app::Loaded;
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, View};
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, interval_strip, left, panel, right};

#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Sort {
    #[default]
    Spec,
    LargestT,
    Name,
}

impl Sort {
    pub fn label(self) -> &'static str {
        match self {
            Sort::Spec => "spec order",
            Sort::LargestT => "largest |t| first",
            Sort::Name => "by name",
        }
    }
}

#[derive(Clone, Debug)]
pub struct State {
    pub cursor: usize,
    /// `None`: the errors the fit's inference uses; else robust (true) or classical.
    pub robust: Option<bool>,
    pub sort: Sort,
    pub grouped: bool,
}

impl Default for State {
    fn default() -> Self {
        State {
            cursor: 0,
            robust: None,
            sort: Sort::Spec,
            grouped: true,
        }
    }
}

/// A parameter row as shown: the chosen standard error and what follows from it.
#[derive(Clone, Debug, PartialEq)]
pub struct Shown {
    pub name: String,
    pub term: String,
    pub estimate: f64,
    pub std_error: f64,
    pub t: f64,
    pub p: f64,
    pub low: f64,
    pub high: f64,
    pub fixed: bool,
    /// The value t and p test against (1 for a nest scale).
    pub null: f64,
    /// Where the value is the mean of the logarithm of a (negative-)lognormal
    /// coefficient: the coefficient's median across decision makers ± s.e.
    pub median: Option<Figure>,
}

/// Whether the fit's own t, p and intervals use robust errors.
pub fn fit_robust(fit: &Fit) -> bool {
    fit.stats.inference == "robust"
}

/// The row under the chosen errors, as the library computes it (`ParameterRow::inference`).
pub fn shown(r: &ParameterRow, robust: bool, fit_is_robust: bool) -> Shown {
    let inf = r.inference(robust);
    let se = inf.std_error;
    let (t, p, low, high) = if robust == fit_is_robust {
        (r.t_stat, r.p_value, r.ci_low, r.ci_high)
    } else {
        (inf.t_stat, inf.p_value, inf.ci_low, inf.ci_high)
    };
    Shown {
        name: r.name.clone(),
        term: r.term.clone(),
        estimate: r.estimate,
        std_error: se,
        t,
        p,
        low,
        high,
        fixed: r.fixed,
        null: r.null,
        median: None,
    }
}

/// The rows in display order: (group heading, row) where a heading starts a group.
pub fn ordered(fit: &Fit, st: &State) -> Vec<(Option<String>, Shown)> {
    let robust = st.robust.unwrap_or_else(|| fit_robust(fit));
    let logs = fit.family.random_coefficients();
    let rows: Vec<Shown> = fit
        .parameters
        .iter()
        .enumerate()
        .map(|(k, r)| {
            let mut s = shown(r, robust, fit_robust(fit));
            let log = logs.iter().find(|t| t.location == k);
            s.median = log.and_then(|t| log_median(t, s.estimate, s.std_error));
            if s.median.is_some() {
                s.name = format!("{} ({MEAN_OF_LOG})", s.name);
            }
            s
        })
        .collect();
    let mut terms: Vec<String> = Vec::new();
    for r in &rows {
        if st.grouped && !terms.contains(&r.term) {
            terms.push(r.term.clone());
        }
    }
    if !st.grouped {
        terms.push(String::new());
    }
    let mut out = Vec::new();
    for term in terms {
        let mut group: Vec<Shown> = rows
            .iter()
            .filter(|r| !st.grouped || r.term == term)
            .cloned()
            .collect();
        match st.sort {
            Sort::Spec => {}
            Sort::LargestT => group.sort_by(|a, b| b.t.abs().total_cmp(&a.t.abs())),
            Sort::Name => group.sort_by(|a, b| a.name.cmp(&b.name)),
        }
        for (i, r) in group.into_iter().enumerate() {
            let head = (st.grouped && i == 0).then(|| term.clone());
            out.push((head, r));
        }
    }
    out
}

/// The estimates view: the cursor, the errors shown, the order and grouping.
#[derive(Debug, Default)]
pub struct Estimates {
    pub state: State,
}

/// The view's own keys and what the shared keys do on it.
const KEYS: &[Key] = &[
    Key::command("e", "e", "Hessian/clustered s.e."),
    Key::command("s", "s", "sort: spec, |t|, name"),
    Key::command("t", "t", "group by spec term"),
];

impl View for Estimates {
    fn title(&self) -> &'static str {
        "estimates"
    }

    fn about(&self) -> &'static str {
        "parameters, ratios"
    }

    fn keys(&self) -> &'static [Key] {
        KEYS
    }

    fn hints(&self) -> &'static str {
        "e errors  s sort  t terms  ? help  q quit "
    }

    fn act(&mut self, ctx: &Ctx, a: Action, _reply: &mut Reply) {
        let Some(l) = ctx.loaded() else {
            return;
        };
        let n = l.model.fit.parameters.len();
        let robust_now = fit_robust(&l.model.fit);
        let st = &mut self.state;
        match a {
            Action::Up => st.cursor = st.cursor.saturating_sub(1),
            Action::Down => st.cursor = (st.cursor + 1).min(n.saturating_sub(1)),
            Action::Top => st.cursor = 0,
            Action::Bottom => st.cursor = n.saturating_sub(1),
            Action::Command('e') => st.robust = Some(!st.robust.unwrap_or(robust_now)),
            Action::Command('s') => {
                st.sort = match st.sort {
                    Sort::Spec => Sort::LargestT,
                    Sort::LargestT => Sort::Name,
                    Sort::Name => Sort::Spec,
                }
            }
            Action::Command('t') => st.grouped = !st.grouped,
            _ => {}
        }
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        render(&self.state, ctx, area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

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

fn render(st: &State, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let fit = &l.model.fit;
    let robust = st.robust.unwrap_or_else(|| fit_robust(fit));
    let ratios = l.analysis.ready().map(|a| a.ratios.as_slice());
    let ratio_h = match ratios {
        Some([]) => 0,
        Some(r) => r.len() as u16 + 3,
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
    let title = format!("estimates · {errors} · {}", st.sort.label());
    let block = panel(title, t);
    let inner = block.inner(table);
    block.render(table, buf);
    let (lines, cursor_line) = table_lines(st, l, inner.width as usize, t);
    let height = inner.height as usize;
    let offset = cursor_line.saturating_sub(height.saturating_sub(1));
    let visible: Vec<Line> = if offset > 0 {
        std::iter::once(lines[0].clone())
            .chain(lines.into_iter().skip(offset + 1))
            .collect()
    } else {
        lines
    };
    Paragraph::new(visible).render(inner, buf);

    if ratio_h > 0 {
        ratio_panel(l, ratios, t, bottom, buf);
    }
}

/// The value ratios with their delta-method and Krinsky-Robb intervals.
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
            }
        }
        None => {
            let msg = match &l.analysis {
                crate::tui::app::Pending::Failed(e) => e.clone(),
                _ => "computing…".into(),
            };
            lines.push(Line::from(Span::styled(msg, t.dim())));
        }
    }
    Paragraph::new(lines).render(inner, buf);
}

/// The table's header and rows (with group headings), then the cut-point
/// axis, the random coefficients' spreads and the family's derived figures;
/// and the line the cursor is on.
fn table_lines(st: &State, l: &Loaded, w: usize, t: &Theme) -> (Vec<Line<'static>>, usize) {
    let fit = &l.model.fit;
    let rows = ordered(fit, st);
    let longest = rows
        .iter()
        .map(|(_, r)| r.name.chars().count())
        .max()
        .unwrap_or(0);
    let (nw, ew, tw, pw, iw) = ((longest + 3).clamp(15, 26), 19, 7, 8, 16);
    let strip_w = w.saturating_sub(nw + ew + tw + pw + iw + 2).max(5);
    let mut lines = vec![Line::from(Span::styled(
        format!(
            "{}{}{}{}{}  {}",
            left("parameter", nw),
            right("value ± s.e.", ew),
            right("t", tw),
            right("p", pw),
            right("95% interval", iw),
            left(
                if strip_w >= 34 {
                    "0 ┆ 95% interval, each row to its own scale"
                } else if strip_w >= 16 {
                    "own scale per row"
                } else {
                    "own scale"
                },
                strip_w
            )
        ),
        t.header(),
    ))];
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
            (nw, ew, tw, pw, iw, strip_w),
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
    (lines, cursor_line)
}

/// One parameter's row: name, value ± s.e., t, p, interval and its strip.
fn row_line(
    r: &Shown,
    at_cursor: bool,
    (nw, ew, tw, pw, iw, strip_w): (usize, usize, usize, usize, usize, usize),
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
    let mut spans = vec![Span::styled(text, style), Span::raw("  ")];
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
    lines.extend(spreads(fit, w.saturating_sub(2), t));
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
fn spreads(fit: &Fit, width: usize, t: &Theme) -> Vec<Line<'static>> {
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
        out.push(Line::from(format!(
            "  {}{} {bars} {}   below 0: {:.1}%",
            left(&fit.names[term.location], name_w),
            right(&short(h.low), 8),
            short(h.high),
            100.0 * h.below_zero
        )));
    }
    out
}
