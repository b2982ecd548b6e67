//! The overview view: the data (situations, decision makers, alternatives with
//! observed and predicted shares and availability; with many alternatives
//! their count and the largest few, or those the filter keeps), the fit
//! statistics and search, then the findings: how the fit was obtained,
//! diagnostics, the analysis warnings and the cautions line.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use crate::tui::app::{Loaded, Pending};
use crate::tui::filter::{self, Filter, Took};
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, Scroll, View};
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, left, panel, right};

/// The overview: it scrolls its findings and filters its alternatives.
#[derive(Debug, Default)]
pub struct Overview {
    pub scroll: Scroll,
    pub filter: Filter,
}

/// Alternatives listed in full up to this many; beyond it, the largest few.
const FEW: usize = 5;

impl View for Overview {
    fn title(&self) -> &'static str {
        "overview"
    }

    fn about(&self) -> &'static str {
        "data, fit, findings"
    }

    fn keys(&self) -> &'static [Key] {
        &[]
    }

    fn typing(&self) -> bool {
        self.filter.typing()
    }

    fn act(&mut self, ctx: &Ctx, action: Action, _reply: &mut Reply) {
        if self.filter.on(action) == Took::Not {
            self.scroll.on(action, findings_height(ctx));
        }
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        render(self, ctx, area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

fn render(view: &Overview, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let names = l.model.spec.alternative_names();
    let kept = view.filter.kept(&names);
    let area = view.filter.split(area, kept.len(), names.len(), t, buf);
    let listed = listed(l, &kept);
    // With more alternatives than FEW, a line says how many and which are shown.
    let j = listed.len() + usize::from(names.len() > FEW || view.filter.active());
    let top_h = ((j + 6).max(11) as u16 + 2).min(area.height.saturating_sub(5));
    let [top, bottom] =
        Layout::vertical([Constraint::Length(top_h), Constraint::Min(3)]).areas(area);
    let [data, stats] =
        Layout::horizontal([Constraint::Percentage(52), Constraint::Percentage(48)]).areas(top);
    data_panel(l, (&listed, kept.len()), t, data, buf);
    fit_panel(l, t, stats, buf);
    let lines = findings(ctx);
    Paragraph::new(lines)
        .wrap(Wrap { trim: true })
        .scroll((view.scroll.0, 0))
        .block(panel("findings  ↑↓ scroll", t))
        .render(bottom, buf);
}

/// The alternatives listed: all of those kept when they are few, in spec
/// order; else the FEW largest by predicted share.
fn listed(l: &Loaded, kept: &[usize]) -> Vec<usize> {
    if kept.len() <= FEW {
        return kept.to_vec();
    }
    let shares = &l.model.fit.shares;
    let by = filter::largest(kept, |a| shares.get(a).map_or(f64::NAN, |r| r.predicted));
    by.into_iter().take(FEW).collect()
}

/// The data: files, situations, decision makers, weights and shares of the
/// `listed` alternatives (`kept` of them match the filter).
fn data_panel(
    l: &Loaded,
    (listed, kept): (&[usize], usize),
    t: &Theme,
    area: Rect,
    buf: &mut Buffer,
) {
    let spec = &l.model.spec;
    let fit = &l.model.fit;
    let obs = &l.model.ds.obs;
    let s = &fit.stats;
    let layout = spec.data.layout.name();
    let mut lines = vec![
        Line::from(vec![
            Span::styled("spec  ", t.dim()),
            Span::raw(l.model.path.display().to_string()),
        ]),
        Line::from(vec![
            Span::styled("data  ", t.dim()),
            Span::raw(spec.data.file_written.clone()),
        ]),
        Line::from(vec![
            Span::styled(format!("{}", s.situations), t.bold()),
            Span::raw(format!(" choice situations ({layout} layout)")),
        ]),
        Line::from(match (&obs.group, &spec.data.group) {
            (Some(_), Some(col)) => vec![
                Span::styled(format!("{}", s.groups), t.bold()),
                Span::raw(format!(" decision makers (`{col}`)")),
            ],
            _ => vec![Span::raw("no decision makers given")],
        }),
        Line::from(match &spec.data.weight {
            Some(w) => format!("weights `{w}`, total {:.1}", obs.weight_total),
            None => "unweighted".to_string(),
        }),
    ];
    let n = spec.alternatives.len();
    if n > FEW || kept < n {
        lines.push(count_line(n, listed.len(), kept, t));
    }
    lines.push(Line::from(Span::styled(
        format!(
            "{}{}{}{}",
            left("alternative", 12),
            right("observed", 9),
            right("predicted", 10),
            right("avail", 6)
        ),
        t.header(),
    )));
    for &a in listed {
        let Some(alt) = spec.alternatives.get(a) else {
            continue;
        };
        let avail = obs.available_count(a);
        let share = fit.shares.get(a);
        let pct = 100.0 * avail as f64 / obs.situations.max(1) as f64;
        let mut name = alt.name.clone();
        if a == spec.base {
            name.push_str(" ◆");
        }
        lines.push(Line::from(format!(
            "{}{}{}{}",
            left(&name, 12),
            right(&fixed(share.map(|r| r.observed).unwrap_or(f64::NAN), 4), 9),
            right(
                &fixed(share.map(|r| r.predicted).unwrap_or(f64::NAN), 4),
                10
            ),
            right(&format!("{pct:.0}%"), 6),
        )));
    }
    Paragraph::new(lines)
        .block(panel("data · ◆ base · weighted shares", t))
        .render(area, buf);
}

/// How many alternatives there are and which are listed.
fn count_line(n: usize, listed: usize, kept: usize, t: &Theme) -> Line<'static> {
    let head = if kept < n {
        format!("{kept} of {n} match")
    } else {
        format!("{n} alternatives")
    };
    let tail = if listed < kept {
        format!(" · the {listed} largest")
    } else {
        String::new()
    };
    Line::from(vec![
        Span::styled(head, t.bold()),
        Span::styled(tail, t.dim()),
    ])
}

/// The fit: statistics, the search, and the hit rate once the analysis is in.
fn fit_panel(l: &Loaded, t: &Theme, area: Rect, buf: &mut Buffer) {
    let spec = &l.model.spec;
    let s = &l.model.fit.stats;
    let row = |label: &str, value: String| {
        Line::from(vec![
            Span::raw(left(label, 20)),
            Span::styled(right(&value, 14), t.bold()),
        ])
    };
    let search = if s.converged {
        Span::styled("converged ✓", t.good())
    } else {
        Span::styled("NOT converged ✗", t.warn())
    };
    let mut lines = vec![
        Line::from(format!(
            "{} · base {} · K = {}",
            spec.family, spec.alternatives[spec.base].name, s.estimated_parameters
        )),
        row("log-likelihood", fixed(s.log_likelihood, 3)),
        row("  zero model", fixed(s.null_log_likelihood, 3)),
        row("  constants only", fixed(s.constants_log_likelihood, 3)),
        Line::from(vec![
            Span::raw("rho² vs zero "),
            Span::styled(fixed(s.rho_squared, 4), t.bold()),
            Span::raw(" · adj. "),
            Span::styled(fixed(s.adjusted_rho_squared, 4), t.bold()),
        ]),
        row("rho² vs constants", fixed(s.rho_squared_constants, 4)),
        Line::from(vec![
            Span::raw("AIC "),
            Span::styled(fixed(s.aic, 2), t.bold()),
            Span::raw(" · BIC "),
            Span::styled(fixed(s.bic, 2), t.bold()),
        ]),
        Line::from(vec![
            search,
            Span::raw(format!(" {:.2} s · |g| {:.1e}", s.seconds, s.gradient_norm)),
        ]),
        Line::from(format!(
            "search: {} + {} Newton, {} passes",
            s.iterations, s.newton_steps, s.passes
        )),
    ];
    match &l.analysis {
        Pending::Ready(a) => {
            let v = &a.validation;
            lines.push(Line::from(format!(
                "hit rate {} · P(choice) {}",
                fixed(v.hit_rate, 4),
                fixed(v.mean_chosen_probability, 4)
            )));
            if let Some(h) = &v.holdout {
                lines.push(Line::from(format!(
                    "hold-out LL {}, zero {}",
                    fixed(h.log_likelihood, 1),
                    fixed(h.null_log_likelihood, 1)
                )));
            }
        }
        Pending::Waiting => lines.push(Line::from(Span::styled(l.analysing(), t.dim()))),
        Pending::Failed(e) => lines.push(Line::from(Span::styled(e.clone(), t.warn()))),
    }
    Paragraph::new(lines)
        .block(panel("fit", t))
        .render(area, buf);
}

/// The findings: how the fit was obtained, diagnostics, warnings, the cautions.
fn findings(ctx: &Ctx) -> Vec<Line<'static>> {
    let Some(l) = ctx.loaded() else {
        return Vec::new();
    };
    let t = ctx.theme;
    let fit = &l.model.fit;
    let mut lines = Vec::new();
    if let Some(n) = &l.model.note {
        lines.push(Line::from(Span::styled(format!("ℹ {n}"), t.bold())));
    }
    for line in fit.family.structure(&l.model.spec) {
        lines.push(Line::from(vec![
            Span::styled("◇ ", t.bold()),
            Span::raw(line),
        ]));
    }
    if fit.diagnostics.is_empty() {
        lines.push(Line::from(vec![
            Span::styled("diagnostics: none", t.good()),
            Span::raw(" — the Hessian is well conditioned and no coefficient runs off"),
        ]));
    }
    for d in &fit.diagnostics {
        let kind = d
            .code
            .clone()
            .or_else(|| {
                serde_json::to_value(d.kind)
                    .ok()
                    .and_then(|v| v.as_str().map(String::from))
            })
            .unwrap_or_default()
            .replace('_', " ");
        lines.push(Line::from(vec![
            Span::styled(format!("⚠ {kind}: "), t.warn()),
            Span::raw(d.message.clone()),
        ]));
    }
    if let Pending::Ready(a) = &l.analysis {
        for w in &a.warnings {
            lines.push(Line::from(vec![
                Span::styled("⚠ ", t.warn()),
                Span::raw(w.clone()),
            ]));
        }
    }
    lines.push(Line::from(Span::styled(
        crate::report::cautions(&l.model.spec, &*l.model.fit.family),
        t.dim(),
    )));
    lines
}

/// Roughly how many screen lines the findings take (for the scroll limit).
pub fn findings_height(ctx: &Ctx) -> usize {
    findings(ctx).iter().map(|l| l.width() / 60 + 1).sum()
}
