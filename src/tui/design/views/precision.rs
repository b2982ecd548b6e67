//! The precision view: each parameter's prior, the standard error the design
//! is expected to give (one respondent answering every task, at the prior
//! means) and the respondents it needs for a t-ratio of 1.96, answering
//! every task or one block each.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use crate::experiment::outcome::{Precision as Row, T_RATIO};
use crate::experiment::Outcome;
use crate::report::experiment::{fig, people};
use crate::tui::design::part::{Page, Reply, Sheet};
use crate::tui::keys::Action;
use crate::tui::part::{Key, Scroll};
use crate::tui::theme::Theme;
use crate::tui::widgets::{left, panel, right};

/// The precision view: it scrolls.
#[derive(Debug, Default)]
pub struct Precision {
    pub scroll: Scroll,
}

impl Page for Precision {
    fn title(&self) -> &'static str {
        "precision"
    }

    fn about(&self) -> &'static str {
        "s.e. and sample sizes"
    }

    fn keys(&self) -> &'static [Key] {
        &[]
    }

    fn act(&mut self, sheet: &Sheet, action: Action, _reply: &mut Reply) {
        self.scroll
            .on(action, sheet.outcome.standard_errors.len() + 8);
    }

    fn render(&self, sheet: &Sheet, area: Rect, buf: &mut Buffer) {
        let t = sheet.theme;
        let o = sheet.outcome;
        let mut lines = vec![Line::from(Span::styled(
            format!(
                "{}{}{}{}{}",
                left("parameter", 18),
                right("prior", 18),
                right("expected s.e.", 15),
                right("all tasks", 11),
                right("one block", 11)
            ),
            t.header(),
        ))];
        lines.extend(o.standard_errors.iter().map(|r| row(r, t)));
        lines.push(Line::from(""));
        lines.extend(notes(o, t));
        Paragraph::new(lines)
            .wrap(Wrap { trim: false })
            .scroll((self.scroll.0, 0))
            .block(panel("expected precision and respondents needed", t))
            .render(area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

fn row(r: &Row, t: &Theme) -> Line<'static> {
    let prior = if r.prior.sd > 0.0 {
        format!("{} ± {}", fig(r.prior.mean), fig(r.prior.sd))
    } else {
        fig(r.prior.mean)
    };
    Line::from(vec![
        Span::styled(left(&r.parameter, 18), t.bold()),
        Span::raw(format!(
            "{}{}{}{}",
            right(&prior, 18),
            right(&r.standard_error.map_or("—".into(), fig), 15),
            right(&people(r.sample_size), 11),
            right(&people(r.respondents), 11)
        )),
    ])
}

fn notes(o: &Outcome, t: &Theme) -> Vec<Line<'static>> {
    let per = o.tasks.len() / o.blocks.max(1);
    let mut lines = vec![
        Line::from(Span::styled(
            format!(
                "expected s.e.: for one respondent answering all {} tasks, at the prior means",
                o.tasks.len()
            ),
            t.dim(),
        )),
        Line::from(Span::styled(
            format!(
                "respondents for a t-ratio of {T_RATIO}: (t × s.e. / |prior|)², answering all tasks, or one block of {per} tasks each"
            ),
            t.dim(),
        )),
        Line::from(Span::styled(
            "a parameter whose prior is 0 has no such number (—)",
            t.dim(),
        )),
    ];
    if let Some(n) = o.respondents {
        lines.push(Line::from(""));
        lines.push(Line::from(vec![
            Span::raw("the design needs at least "),
            Span::styled(people(Some(n)), t.bold()),
            Span::raw(" respondents answering one block each; plan on more"),
        ]));
    }
    lines
}
