//! The whole screen drawn from `&App`: the tabs (one per registered view),
//! the current view (or the fit's progress, or why it failed, or why the view
//! does not apply to the model), the message or prompt line, the status line
//! with the view's hints, the help overlay, and the "enlarge the terminal"
//! notice.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use super::app::{App, Loading, Prompt, Stage, Tone};
use super::help;
use super::widgets::{left, panel, right};

/// The smallest terminal the workbench draws in.
pub const MIN_WIDTH: u16 = 80;
pub const MIN_HEIGHT: u16 = 24;

impl Widget for &App {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let t = &self.theme;
        if area.width < MIN_WIDTH || area.height < MIN_HEIGHT {
            let msg = vec![
                Line::from(Span::styled("sharecast explore", t.accent())),
                Line::from(""),
                Line::from(format!(
                    "Please enlarge the terminal to at least {MIN_WIDTH} × {MIN_HEIGHT}"
                )),
                Line::from(format!("(it is {} × {} now).", area.width, area.height)),
                Line::from(""),
                Line::from("q quits"),
            ];
            let y = area.y + area.height.saturating_sub(6) / 2;
            let r = Rect {
                y,
                height: area.height.saturating_sub(y - area.y),
                ..area
            };
            Paragraph::new(msg)
                .alignment(ratatui::layout::Alignment::Center)
                .wrap(Wrap { trim: true })
                .render(r, buf);
            return;
        }
        let [tabs, body, message, status] = Layout::vertical([
            Constraint::Length(1),
            Constraint::Min(10),
            Constraint::Length(1),
            Constraint::Length(1),
        ])
        .areas(area);
        render_tabs(self, tabs, buf);
        match &self.stage {
            Stage::Loading(l) => render_loading(self, l, body, buf),
            Stage::Failed(e) => {
                Paragraph::new(vec![
                    Line::from(Span::styled(e.clone(), t.warn())),
                    Line::from(""),
                    Line::from("Fix the spec or the data and start again; q quits."),
                ])
                .wrap(Wrap { trim: true })
                .block(panel("could not open", t))
                .render(body, buf);
            }
            Stage::Ready => render_view(self, body, buf),
        }
        render_message(self, message, buf);
        render_status(self, status, buf);
        if self.help {
            help::render(self, area, buf);
        }
    }
}

fn render_tabs(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    let mut spans = Vec::new();
    let ready = matches!(app.stage, Stage::Ready);
    for (i, v) in app.views.iter().enumerate() {
        let label = format!("{} {}", i + 1, v.title());
        let applies = app.loaded().is_none_or(|l| v.applies(&l.model).is_ok());
        let style = if ready && i == app.view {
            t.selected()
        } else if applies {
            t.dim()
        } else {
            t.dim().add_modifier(ratatui::style::Modifier::CROSSED_OUT)
        };
        spans.push(Span::styled(label, style));
        spans.push(Span::raw(" "));
    }
    let used: usize = spans.iter().map(|s| s.content.chars().count()).sum();
    let brand = "sharecast";
    if (area.width as usize) > used + brand.len() {
        spans.push(Span::raw(
            " ".repeat(area.width as usize - used - brand.len()),
        ));
        spans.push(Span::styled(brand, t.accent()));
    }
    Line::from(spans).render(area, buf);
}

/// The view shown, or why it does not apply to the model.
fn render_view(app: &App, area: Rect, buf: &mut Buffer) {
    let view = app.shown();
    let Some(l) = app.loaded() else {
        return;
    };
    match view.applies(&l.model) {
        Ok(()) => view.render(&app.ctx(), area, buf),
        Err(why) => Paragraph::new(why)
            .wrap(Wrap { trim: true })
            .block(panel(view.title(), &app.theme))
            .render(area, buf),
    }
}

fn render_loading(app: &App, l: &Loading, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    let mut lines = vec![
        Line::from(vec![
            Span::raw("fitting "),
            Span::styled(l.path.display().to_string(), t.bold()),
            Span::raw(format!("   ({} of {})", l.index + 1, l.of.max(1))),
        ]),
        Line::from(""),
    ];
    match l.steps.last() {
        None => lines.push(Line::from("loading the data…")),
        Some(s) => {
            for (k, v) in [
                ("phase", s.phase.to_string()),
                ("iteration", s.iteration.to_string()),
                ("log-likelihood", format!("{:.6}", s.log_likelihood)),
                ("gradient norm", format!("{:.3e}", s.gradient_norm)),
            ] {
                lines.push(Line::from(vec![
                    Span::raw(left(k, 16)),
                    Span::styled(right(&v, 20), t.bold()),
                ]));
            }
            lines.push(Line::from(""));
            lines.push(Line::from(Span::styled(
                format!(
                    "{}{}{}",
                    left("iteration", 12),
                    right("log-likelihood", 20),
                    right("gradient", 14)
                ),
                t.header(),
            )));
            let room = (area.height as usize).saturating_sub(lines.len() + 2);
            let from = l.steps.len().saturating_sub(room);
            for s in &l.steps[from..] {
                lines.push(Line::from(Span::styled(
                    format!(
                        "{}{}{}",
                        left(&format!("{} {}", s.phase, s.iteration), 12),
                        right(&format!("{:.4}", s.log_likelihood), 20),
                        right(&format!("{:.2e}", s.gradient_norm), 14)
                    ),
                    t.dim(),
                )));
            }
        }
    }
    Paragraph::new(lines)
        .block(panel("opening", t))
        .render(area, buf);
}

fn render_message(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    let line = match &app.prompt {
        Some(Prompt::Line { question, text, .. }) => Line::from(vec![
            Span::styled(format!("{question} "), t.accent()),
            Span::styled(format!("{text}▏"), t.bold()),
            Span::styled("  Enter accepts · Esc cancels", t.dim()),
        ]),
        Some(Prompt::Overwrite { path, .. }) => Line::from(vec![
            Span::styled(format!("{} exists: ", path.display()), t.warn()),
            Span::styled("y replaces it, any other key keeps it", t.bold()),
        ]),
        None => match &app.status {
            Some(s) => {
                let style = match s.tone {
                    Tone::Info => Default::default(),
                    Tone::Good => t.good(),
                    Tone::Bad => t.warn(),
                };
                Line::from(Span::styled(s.text.clone(), style))
            }
            None => Line::from(""),
        },
    };
    line.render(area, buf);
}

fn render_status(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    let hints = match &app.stage {
        Stage::Ready => app.shown().hints(),
        _ => "? help  q quit ",
    };
    let w = area.width as usize;
    let hw = hints.chars().count();
    let lw = w.saturating_sub(hw + 1);
    let left_text = status_left(app, lw);
    let text = format!("{} {}", left(&left_text, lw), hints);
    Line::from(Span::styled(left(&text, w), t.selected())).render(area, buf);
}

/// The status line's left part: the view, the spec, the family and which of
/// several models; on a narrow terminal the family goes first, then the model
/// count, so that the view and the spec stay readable.
fn status_left(app: &App, room: usize) -> String {
    let Some(l) = app.loaded() else {
        let paths: Vec<String> = app.paths.iter().map(|p| p.display().to_string()).collect();
        return format!(" {}", paths.join(", "));
    };
    let head = format!(" ‹{}› {}", app.shown().title(), l.model.path.display());
    let family = format!(" · {}", l.model.spec.family);
    let models = if app.models.len() > 1 {
        format!(
            " · {} of {} models",
            crate::analysis::compare::model_id(app.current),
            app.models.len()
        )
    } else {
        String::new()
    };
    [format!("{head}{family}{models}"), format!("{head}{models}")]
        .into_iter()
        .find(|c| c.chars().count() <= room)
        .unwrap_or(head)
}
