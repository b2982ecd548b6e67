//! The design workbench's screen: the shared frame (tabs, message or prompt
//! line, status line), then the search's progress, why it failed, or the
//! view shown; the help overlay on top.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use super::{Desk, Stage};
use crate::progress::Tick;
use crate::tui::help;
use crate::tui::screen::{Chrome, Tab};
use crate::tui::theme::Theme;
use crate::tui::widgets::{left, panel};

pub fn draw(desk: &Desk, area: Rect, buf: &mut Buffer) {
    let t = &desk.theme;
    let ready = matches!(desk.stage, Stage::Ready(_));
    let tabs = desk
        .views
        .iter()
        .enumerate()
        .map(|(i, v)| {
            let look = if ready && i == desk.view {
                Tab::Shown
            } else {
                Tab::Other
            };
            (format!("{} {}", i + 1, v.title()), look)
        })
        .collect();
    let head = format!(" ‹{}› {}", desk.shown().title(), desk.plan.path.display());
    let chrome = Chrome {
        tabs,
        prompt: desk.prompt.as_ref(),
        status: desk.status.as_ref(),
        left: vec![format!("{head} · survey design"), head],
        hints: if ready {
            desk.shown().hints()
        } else {
            "? help  q quit "
        },
        theme: t,
    };
    let Some(body) = chrome.draw(area, buf) else {
        return;
    };
    match &desk.stage {
        Stage::Searching(latest) => searching(desk, *latest, body, buf),
        Stage::Failed(e) => Paragraph::new(vec![
            Line::from(Span::styled(e.clone(), t.warn())),
            Line::from(""),
            Line::from("Fix the design file and start again; q quits."),
        ])
        .wrap(Wrap { trim: true })
        .block(panel("no design", t))
        .render(body, buf),
        Stage::Ready(_) => {
            if let Some(sheet) = desk.sheet() {
                desk.shown().render(&sheet, body, buf);
            }
        }
    }
    if desk.help {
        help::render(&desk.help(), desk.help_scroll, t, area, buf);
    }
}

/// While the search runs: what is searched and how far it is.
fn searching(desk: &Desk, latest: Option<Tick>, area: Rect, buf: &mut Buffer) {
    let t = &desk.theme;
    let p = &desk.plan;
    let mut lines = vec![
        Line::from(vec![
            Span::raw("searching for the design of "),
            Span::styled(p.path.display().to_string(), t.bold()),
        ]),
        Line::from(""),
    ];
    let blocks = if p.blocks > 1 {
        format!(" in {} blocks", p.blocks)
    } else {
        String::new()
    };
    let prior = if p.bayesian() {
        format!("Bayesian, over {} prior draws", p.draws)
    } else {
        "at the fixed priors".to_string()
    };
    for (k, v) in [
        ("alternatives", p.alternatives.join(", ")),
        ("tasks", format!("{}{blocks}", p.tasks)),
        ("parameters", p.parameters().join(", ")),
        ("criterion", format!("D-error, {prior}")),
        ("starts", p.starts.to_string()),
    ] {
        lines.push(Line::from(vec![
            Span::styled(left(k, 14), t.dim()),
            Span::raw(v),
        ]));
    }
    lines.push(Line::from(""));
    lines.push(progress_line(
        latest,
        area.width.saturating_sub(4) as usize,
        t,
    ));
    Paragraph::new(lines)
        .wrap(Wrap { trim: true })
        .block(panel("searching", t))
        .render(area, buf);
}

/// "searching for the design (starts) 3 of 8 ████░░░░"
fn progress_line(latest: Option<Tick>, width: usize, t: &Theme) -> Line<'static> {
    let Some(tick) = latest.filter(|t| t.total > 0) else {
        return Line::from(Span::styled("starting…", t.dim()));
    };
    let text = format!("{} {} of {} ", tick.phase, tick.done, tick.total);
    let room = width.saturating_sub(text.chars().count()).min(40);
    let full = ((tick.done * room) / tick.total).min(room);
    Line::from(vec![
        Span::raw(text),
        Span::styled("█".repeat(full), t.bar_now()),
        Span::styled("░".repeat(room - full), t.dim()),
    ])
}
