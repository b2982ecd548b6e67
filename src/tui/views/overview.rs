//! The overview view: the data (situations, decision makers, alternatives with
//! observed and predicted shares and availability), the fit statistics and
//! search, then the findings: how the fit was obtained, diagnostics, the
//! analysis warnings and the cautions line.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use crate::tui::app::{Loaded, Pending};
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, Scroll, View};
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, left, panel, right};

/// The overview: it scrolls its findings.
#[derive(Debug, Default)]
pub struct Overview {
    pub scroll: Scroll,
}

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

    fn act(&mut self, ctx: &Ctx, action: Action, _reply: &mut Reply) {
        self.scroll.on(action, findings_height(ctx));
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        render(ctx, self.scroll.0, area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

fn render(ctx: &Ctx, scroll: u16, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let j = l.model.spec.alternatives.len();
    let top_h = ((j + 6).max(11) as u16 + 2).min(area.height.saturating_sub(5));
    let [top, bottom] =
        Layout::vertical([Constraint::Length(top_h), Constraint::Min(3)]).areas(area);
    let [data, stats] =
        Layout::horizontal([Constraint::Percentage(52), Constraint::Percentage(48)]).areas(top);
    data_panel(l, t, data, buf);
    fit_panel(l, t, stats, buf);
    let lines = findings(ctx);
    Paragraph::new(lines)
        .wrap(Wrap { trim: true })
        .scroll((scroll, 0))
        .block(panel("findings  ↑↓ scroll", t))
        .render(bottom, buf);
}

/// The data: files, situations, decision makers, weights and shares.
fn data_panel(l: &Loaded, t: &Theme, area: Rect, buf: &mut Buffer) {
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
        Line::from(Span::styled(
            format!(
                "{}{}{}{}",
                left("alternative", 12),
                right("observed", 9),
                right("predicted", 10),
                right("avail", 6)
            ),
            t.header(),
        )),
    ];
    for (a, alt) in spec.alternatives.iter().enumerate() {
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
