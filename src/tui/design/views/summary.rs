//! The design view: what the design is (alternatives, tasks and blocks,
//! parameters), its D-error (Bayesian over the prior draws, or at the fixed
//! priors) and A-error, the level balance and the respondents it needs, and
//! beside them how the search went (each start's D-error before and after).

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use crate::experiment::Outcome;
use crate::report::experiment::{fig, people};
use crate::tui::design::part::{Page, Reply, Sheet};
use crate::tui::keys::Action;
use crate::tui::part::{Key, Scroll};
use crate::tui::theme::Theme;
use crate::tui::widgets::{left, panel, right};

/// The design view: it scrolls the search's starts.
#[derive(Debug, Default)]
pub struct Summary {
    pub scroll: Scroll,
}

const KEYS: &[Key] = &[Key::shared("↑↓  j k", "scroll the starts")];

impl Page for Summary {
    fn title(&self) -> &'static str {
        "design"
    }

    fn about(&self) -> &'static str {
        "D- and A-error, search"
    }

    fn keys(&self) -> &'static [Key] {
        KEYS
    }

    fn act(&mut self, sheet: &Sheet, action: Action, _reply: &mut Reply) {
        self.scroll.on(action, sheet.outcome.search.starts + 5);
    }

    fn render(&self, sheet: &Sheet, area: Rect, buf: &mut Buffer) {
        let t = sheet.theme;
        let o = sheet.outcome;
        let [facts_area, search_area] =
            Layout::horizontal([Constraint::Percentage(52), Constraint::Percentage(48)])
                .areas(area);
        let heading = o.title.clone().unwrap_or_else(|| "survey design".into());
        Paragraph::new(facts(o, t))
            .wrap(Wrap { trim: false })
            .block(panel(heading, t))
            .render(facts_area, buf);
        Paragraph::new(search(o, t))
            .wrap(Wrap { trim: false })
            .scroll((self.scroll.0, 0))
            .block(panel("search  ↑↓ scroll", t))
            .render(search_area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

fn fact(k: &str, v: String, t: &Theme) -> Line<'static> {
    Line::from(vec![Span::styled(left(k, 14), t.dim()), Span::raw(v)])
}

fn facts(o: &Outcome, t: &Theme) -> Vec<Line<'static>> {
    let per = o.tasks.len() / o.blocks.max(1);
    let blocks = if o.blocks == 1 { "block" } else { "blocks" };
    let mut lines = vec![
        fact("alternatives", o.alternatives.join(", "), t),
        fact(
            "tasks",
            format!("{} in {} {blocks} of {per}", o.tasks.len(), o.blocks),
            t,
        ),
        fact("parameters", o.parameters.join(", "), t),
        Line::from(""),
        Line::from(vec![
            Span::styled(left("D-error", 14), t.dim()),
            Span::styled(fig(o.d_error), t.bold()),
        ]),
    ];
    if o.bayesian {
        lines.push(fact("", format!("Bayesian, {} draws", o.draws), t));
        lines.push(fact(
            "",
            format!("{} at prior means", fig(o.d_error_at_means)),
            t,
        ));
    } else {
        lines.push(fact("", "at the fixed priors".into(), t));
    }
    lines.push(Line::from(vec![
        Span::styled(left("A-error", 14), t.dim()),
        Span::styled(fig(o.a_error), t.bold()),
    ]));
    lines.push(Line::from(""));
    let (balance, style) = if o.balanced {
        ("balanced in each block", t.good())
    } else {
        ("not balanced in every block", t.warn())
    };
    lines.push(Line::from(vec![
        Span::styled(left("levels", 14), t.dim()),
        Span::styled(balance, style),
    ]));
    match o.respondents {
        Some(n) => {
            lines.push(fact(
                "respondents",
                format!("at least {}", people(Some(n))),
                t,
            ));
            lines.push(fact("", "one block each, t = 1.96".into(), t));
        }
        None => lines.push(fact("respondents", "no figure".into(), t)),
    }
    lines
}

fn search(o: &Outcome, t: &Theme) -> Vec<Line<'static>> {
    let s = &o.search;
    let mut lines = vec![
        Line::from(format!("{} level-balanced random starts", s.starts)),
        Line::from(format!("best: start {} ◆", s.best_start)),
        Line::from(format!(
            "{} swaps, {} sweeps, {:.1} s",
            s.swaps_tried, s.sweeps, s.seconds
        )),
        Line::from(""),
        Line::from(Span::styled(
            format!(
                "{}{}{}",
                left("start", 6),
                right("D-error before", 14),
                right("after", 11)
            ),
            t.header(),
        )),
    ];
    for (i, (before, after)) in s.start_d_errors.iter().zip(&s.reached_d_errors).enumerate() {
        let best = i + 1 == s.best_start;
        let mark = if best { " ◆" } else { "" };
        let row = format!(
            "{}{}{}{mark}",
            left(&(i + 1).to_string(), 6),
            right(&fig(*before), 14),
            right(&fig(*after), 11)
        );
        lines.push(Line::from(Span::styled(
            row,
            if best { t.bold() } else { t.dim() },
        )));
    }
    lines
}
