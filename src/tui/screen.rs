//! The whole screen drawn from `&App`: the tabs (one per registered view),
//! the current view (or the fit's progress, or why it failed, or why the view
//! does not apply to the model), the message or prompt line, the status line
//! with the view's hints, the help overlay, and the "enlarge the terminal"
//! notice. The frame (`Chrome`) is shared with the design workbench.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use super::app::{App, Loading, Prompt, Stage, Status, Tone};
use super::theme::Theme;
use super::widgets::{left, panel, right};
use super::{help, keys};

/// The smallest terminal the workbench draws in.
pub const MIN_WIDTH: u16 = 80;
pub const MIN_HEIGHT: u16 = 24;

/// How a tab is drawn.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Tab {
    /// The view shown.
    Shown,
    Other,
    /// A view that does not apply (struck through).
    Inapplicable,
}

/// The frame around a view, shared by the model and the design workbench:
/// the tabs, the message or prompt line and the status line.
pub struct Chrome<'a> {
    pub tabs: Vec<(String, Tab)>,
    pub prompt: Option<&'a Prompt>,
    pub status: Option<&'a Status>,
    /// The status line's left part, longest first: the first that fits is shown.
    pub left: Vec<String>,
    pub hints: &'a str,
    pub theme: &'a Theme,
}

impl Chrome<'_> {
    /// Draws the frame; returns the area left for the view, or None (after
    /// asking for a larger terminal) when the terminal is too small.
    pub fn draw(&self, area: Rect, buf: &mut Buffer) -> Option<Rect> {
        if area.width < MIN_WIDTH || area.height < MIN_HEIGHT {
            too_small(self.theme, area, buf);
            return None;
        }
        let [tabs, body, message, status] = Layout::vertical([
            Constraint::Length(1),
            Constraint::Min(10),
            Constraint::Length(1),
            Constraint::Length(1),
        ])
        .areas(area);
        render_tabs(&self.tabs, self.theme, tabs, buf);
        render_message(self.prompt, self.status, self.theme, message, buf);
        render_status(&self.left, self.hints, self.theme, status, buf);
        Some(body)
    }
}

fn too_small(t: &Theme, area: Rect, buf: &mut Buffer) {
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
}

impl Widget for &App {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let t = &self.theme;
        let chrome = Chrome {
            tabs: tabs(self),
            prompt: self.prompt.as_ref(),
            status: self.status.as_ref(),
            left: status_left(self),
            hints: match &self.stage {
                Stage::Ready => self.shown().hints(),
                _ => "? help  q quit ",
            },
            theme: t,
        };
        let Some(body) = chrome.draw(area, buf) else {
            return;
        };
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
        if self.help {
            help::render(&keys::help(&self.views), self.help_scroll, t, area, buf);
        }
    }
}

/// One tab per registered view: struck through where it does not apply to the model.
fn tabs(app: &App) -> Vec<(String, Tab)> {
    let ready = matches!(app.stage, Stage::Ready);
    app.views
        .iter()
        .enumerate()
        .map(|(i, v)| {
            let applies = app.loaded().is_none_or(|l| v.applies(&l.model).is_ok());
            let look = if ready && i == app.view {
                Tab::Shown
            } else if applies {
                Tab::Other
            } else {
                Tab::Inapplicable
            };
            (format!("{} {}", i + 1, v.title()), look)
        })
        .collect()
}

fn render_tabs(tabs: &[(String, Tab)], t: &Theme, area: Rect, buf: &mut Buffer) {
    let mut spans = Vec::new();
    for (label, look) in tabs {
        let style = match look {
            Tab::Shown => t.selected(),
            Tab::Other => t.dim(),
            Tab::Inapplicable => t.dim().add_modifier(ratatui::style::Modifier::CROSSED_OUT),
        };
        spans.push(Span::styled(label.clone(), style));
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

fn render_message(
    prompt: Option<&Prompt>,
    status: Option<&Status>,
    t: &Theme,
    area: Rect,
    buf: &mut Buffer,
) {
    let line = match prompt {
        Some(Prompt::Line { question, text, .. }) => Line::from(vec![
            Span::styled(format!("{question} "), t.accent()),
            Span::styled(format!("{text}▏"), t.bold()),
            Span::styled("  Enter accepts · Esc cancels", t.dim()),
        ]),
        Some(Prompt::Overwrite { path, .. }) => Line::from(vec![
            Span::styled(format!("{} exists: ", path.display()), t.warn()),
            Span::styled("y replaces it, any other key keeps it", t.bold()),
        ]),
        None => match status {
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

fn render_status(left_texts: &[String], hints: &str, t: &Theme, area: Rect, buf: &mut Buffer) {
    let w = area.width as usize;
    let hw = hints.chars().count();
    let lw = w.saturating_sub(hw + 1);
    let left_text = left_texts
        .iter()
        .find(|c| c.chars().count() <= lw)
        .or(left_texts.last())
        .cloned()
        .unwrap_or_default();
    let text = format!("{} {}", left(&left_text, lw), hints);
    Line::from(Span::styled(left(&text, w), t.selected())).render(area, buf);
}

/// The status line's left part: the view, the spec, the family and which of
/// several models; on a narrow terminal the family goes first, then the model
/// count, so that the view and the spec stay readable.
fn status_left(app: &App) -> Vec<String> {
    let Some(l) = app.loaded() else {
        let paths: Vec<String> = app.paths.iter().map(|p| p.display().to_string()).collect();
        return vec![format!(" {}", paths.join(", "))];
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
    vec![
        format!("{head}{family}{models}"),
        format!("{head}{models}"),
        head,
    ]
}
