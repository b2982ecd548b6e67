//! The rehearsal view: `r` asks how many respondents to simulate, then the
//! worker simulates their answers from the priors' means (each answers one
//! block), writes them and a spec into a new folder of the system's
//! temporary directory, fits the logit and sets each estimate against its
//! truth (the prior mean): estimate, s.e., z and whether it lies within
//! 3.5 s.e. The view says where the files are and shows the fit's progress.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use crate::experiment::rehearse::{Recovery, WITHIN};
use crate::report::experiment::fig;
use crate::tui::design::jobs::MAX_RESPONDENTS;
use crate::tui::design::part::{Page, Rehearsing, Reply, Sheet};
use crate::tui::keys::Action;
use crate::tui::part::{Answer, Key, Scroll, Tone};
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, left, panel, right};
use crate::tui::worker::Report;

/// The rehearsal view: it scrolls.
#[derive(Debug, Default)]
pub struct Rehearsal {
    pub scroll: Scroll,
}

const KEYS: &[Key] = &[Key::command("r", "r", "simulate, fit, compare")];

/// The prompt's code.
const RESPONDENTS: u8 = 1;
/// The number of respondents the prompt suggests.
const SUGGESTED: usize = 500;

impl Page for Rehearsal {
    fn title(&self) -> &'static str {
        "rehearsal"
    }

    fn about(&self) -> &'static str {
        "recovery from simulation"
    }

    fn keys(&self) -> &'static [Key] {
        KEYS
    }

    fn hints(&self) -> &'static str {
        "r rehearse  ? help  q quit "
    }

    fn act(&mut self, sheet: &Sheet, action: Action, reply: &mut Reply) {
        match action {
            Action::Command('r') => {
                let suggested = SUGGESTED.max(sheet.plan.blocks).to_string();
                reply.ask(
                    RESPONDENTS,
                    "respondents to simulate (each answers one block):",
                    &suggested,
                );
            }
            a => {
                let height = sheet
                    .outcome
                    .rehearsal
                    .as_ref()
                    .map_or(0, |r| r.parameters.len())
                    + 12;
                self.scroll.on(a, height);
            }
        }
    }

    fn answered(&mut self, sheet: &Sheet, _ask: u8, text: &str, reply: &mut Reply) -> Answer {
        let blocks = sheet.plan.blocks;
        match text.trim().parse::<usize>() {
            Ok(n) if (blocks..=MAX_RESPONDENTS).contains(&n) => {
                let replacing = if sheet.rehearsing.is_some() {
                    " (instead of the one under way)"
                } else {
                    ""
                };
                reply.say(
                    Tone::Info,
                    format!("rehearsing with {n} simulated respondents{replacing}…"),
                );
                reply.rehearse = Some(n);
                Answer::Done
            }
            _ => {
                reply.ask(
                    RESPONDENTS,
                    format!(
                        "`{}` is not a number of respondents from {blocks} (one per block) to {MAX_RESPONDENTS}; respondents:",
                        text.trim()
                    ),
                    text,
                );
                Answer::Again
            }
        }
    }

    fn render(&self, sheet: &Sheet, area: Rect, buf: &mut Buffer) {
        let t = sheet.theme;
        let mut lines = Vec::new();
        if let Some(r) = sheet.rehearsing {
            lines.extend(running(r, t));
        }
        match &sheet.outcome.rehearsal {
            Some(r) => lines.extend(recovery(r, t)),
            None if sheet.rehearsing.is_none() => lines.extend(none_yet(t)),
            None => {}
        }
        Paragraph::new(lines)
            .wrap(Wrap { trim: false })
            .scroll((self.scroll.0, 0))
            .block(panel("rehearsal · r rehearse", t))
            .render(area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

fn none_yet(t: &Theme) -> Vec<Line<'static>> {
    vec![
        Line::from("No rehearsal yet: r runs one."),
        Line::from(""),
        Line::from(Span::styled(
            format!(
                "It simulates respondents answering the design from the priors' means (each answers one block), writes their answers and a spec into a new folder under {}, fits the logit to them and sets each estimate against its prior.",
                std::env::temp_dir().display()
            ),
            t.dim(),
        )),
    ]
}

/// A rehearsal under way: how many respondents, and the fit's progress.
fn running(r: &Rehearsing, t: &Theme) -> Vec<Line<'static>> {
    let doing = match r.latest {
        Some(Report::Step(s)) => format!(
            "fitting: {} iteration {}, log-likelihood {}",
            s.phase,
            s.iteration,
            fixed(s.log_likelihood, 3)
        ),
        Some(Report::Tick(k)) => format!("{} {} of {}", k.phase, k.done, k.total),
        None => "simulating the answers…".into(),
    };
    vec![
        Line::from(Span::styled(
            format!("rehearsing with {} simulated respondents", r.respondents),
            t.accent(),
        )),
        Line::from(doing),
        Line::from(""),
    ]
}

fn recovery(r: &Recovery, t: &Theme) -> Vec<Line<'static>> {
    let mut lines = vec![
        Line::from(format!(
            "{} simulated respondents, one block each · log-likelihood {} · rho-squared {}",
            r.respondents,
            fig(r.log_likelihood),
            fig(r.rho_squared)
        )),
        Line::from(""),
        Line::from(Span::styled(
            format!(
                "{}{}{}{}{}{}",
                left("parameter", 14),
                right("truth", 11),
                right("estimate", 11),
                right("s.e.", 11),
                right("z", 8),
                right(&format!("within {WITHIN} s.e."), 17)
            ),
            t.header(),
        )),
    ];
    for p in &r.parameters {
        let (within, style) = if p.within {
            ("yes", t.good())
        } else {
            ("no", t.warn())
        };
        lines.push(Line::from(vec![
            Span::styled(left(&p.parameter, 14), t.bold()),
            Span::raw(format!(
                "{}{}{}{}",
                right(&fig(p.truth), 11),
                right(&fig(p.estimate), 11),
                right(&fig(p.standard_error), 11),
                right(&fixed(p.z, 2), 8)
            )),
            Span::styled(right(within, 17), style),
        ]));
    }
    lines.push(Line::from(""));
    let verdict = if r.all_within {
        Span::styled(
            format!("every prior is recovered within {WITHIN} standard errors"),
            t.good(),
        )
    } else {
        Span::styled(
            format!("some priors are not recovered within {WITHIN} standard errors"),
            t.warn(),
        )
    };
    lines.push(Line::from(verdict));
    lines.push(Line::from(""));
    lines.push(Line::from(vec![
        Span::styled(left("answers", 9), t.dim()),
        Span::raw(r.answers.clone()),
    ]));
    lines.push(Line::from(vec![
        Span::styled(left("spec", 9), t.dim()),
        Span::raw(r.spec.clone()),
    ]));
    lines.push(Line::from(Span::styled(
        "the spec opens in the workbench like any other: sharecast explore SPEC",
        t.dim(),
    )));
    lines
}
