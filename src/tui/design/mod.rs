//! The workbench on a survey design file (`sharecast explore DESIGN.toml`),
//! in the same Elm split as the model workbench: `Desk` the state the views
//! share (the design file, the search's outcome with its rehearsal, which
//! view is shown, the prompt and the message line), `update` the one entry
//! point for keys and worker results; `part` what a design view is, `views`
//! the views and their one list, `jobs` the search and the rehearsal run on
//! the shared worker, `screen` the frame and the search's progress. The frame,
//! key map, help overlay, theme and worker are the model workbench's.

pub mod jobs;
pub mod part;
mod screen;
pub mod views;

use std::sync::Arc;

use crate::experiment::rehearse::Recovery;
use crate::experiment::{Outcome, Plan};
use crate::progress::Tick;
use crate::tui::app::Msg;
use crate::tui::keys::{self, Action, Context};
use crate::tui::part::{Answer, Prompt, Status, Tone};
use crate::tui::shell::{Left, Shell};
use crate::tui::theme::Theme;
use crate::tui::worker::{Job, Report};
use part::{Page, Rehearsing, Reply, Sheet};

/// Where the design stands.
#[derive(Clone, Debug)]
pub enum Stage {
    /// The search runs; its latest tick.
    Searching(Option<Tick>),
    /// The search failed (the run ends in this error).
    Failed(String),
    Ready(Box<Outcome>),
}

/// Everything on the design workbench's screen comes from here.
pub struct Desk {
    pub plan: Arc<Plan>,
    pub stage: Stage,
    pub rehearsing: Option<Rehearsing>,
    /// The views, in the order of the tabs and the number keys (`views::all`).
    pub views: Vec<Box<dyn Page>>,
    /// The view shown: an index into `views`.
    pub view: usize,
    pub help: bool,
    pub help_scroll: u16,
    pub prompt: Option<Prompt>,
    pub status: Option<Status>,
    pub quit: bool,
    pub theme: Theme,
    /// The generation of the newest job (results of older ones are dropped).
    generation: u64,
    /// The generation of the search.
    searched: u64,
}

impl Desk {
    /// A workbench on a checked design file; the job asks the worker to search.
    pub fn new(plan: Plan, theme: Theme) -> (Desk, Vec<Job>) {
        let plan = Arc::new(plan);
        let desk = Desk {
            plan: plan.clone(),
            stage: Stage::Searching(None),
            rehearsing: None,
            views: views::all(),
            view: 0,
            help: false,
            help_scroll: 0,
            prompt: None,
            status: None,
            quit: false,
            theme,
            generation: 1,
            searched: 1,
        };
        (desk, vec![jobs::search(plan, 1)])
    }

    /// The search's outcome, once it is in.
    pub fn outcome(&self) -> Option<&Outcome> {
        match &self.stage {
            Stage::Ready(o) => Some(o),
            _ => None,
        }
    }

    /// What the views read, once the outcome is in.
    pub fn sheet(&self) -> Option<Sheet<'_>> {
        Some(Sheet {
            plan: &self.plan,
            outcome: self.outcome()?,
            rehearsing: self.rehearsing.as_ref(),
            theme: &self.theme,
        })
    }

    /// The view shown.
    pub fn shown(&self) -> &dyn Page {
        self.views[self.view].as_ref()
    }

    /// The view of type `T`, for tests and callers that read a view's state.
    pub fn part<T: Page>(&self) -> Option<&T> {
        self.views
            .iter()
            .find_map(|v| v.as_any().downcast_ref::<T>())
    }

    pub fn say(&mut self, tone: Tone, text: impl Into<String>) {
        self.status = Some(Status {
            text: text.into(),
            tone,
        });
    }

    /// The help: the shared keys, the design views and their own keys.
    pub fn help(&self) -> Vec<keys::HelpSection> {
        keys::sections(&part::listings(&self.views), "design views", false)
    }

    /// The context keys are read in.
    pub fn context(&self) -> Context<'_> {
        match (&self.prompt, self.help, &self.stage) {
            (Some(Prompt::Line { .. }), _, _) => Context::Typing,
            (Some(Prompt::Overwrite { .. }), _, _) => Context::Confirm,
            (None, true, _) => Context::Help,
            (None, false, Stage::Ready(_)) => Context::View {
                keys: self.shown().keys(),
                views: self.views.len(),
            },
            _ => Context::Waiting,
        }
    }
}

/// What the views read, beside the views themselves (to call one mutably).
fn parts(desk: &mut Desk) -> Option<(Sheet<'_>, &mut [Box<dyn Page>])> {
    let Stage::Ready(outcome) = &desk.stage else {
        return None;
    };
    let sheet = Sheet {
        plan: &desk.plan,
        outcome,
        rehearsing: desk.rehearsing.as_ref(),
        theme: &desk.theme,
    };
    Some((sheet, &mut desk.views))
}

/// Applies one message; returns the jobs for the worker. The design
/// workbench sends no fits or analyses, so their messages never reach it.
pub fn update(desk: &mut Desk, msg: Msg) -> Vec<Job> {
    match msg {
        Msg::Key(key) => match keys::action(desk.context(), key) {
            Some(a) => act(desk, a),
            None => Vec::new(),
        },
        Msg::Report {
            view,
            generation,
            report,
            ..
        } => {
            reported(desk, view, generation, report);
            Vec::new()
        }
        Msg::Done {
            view,
            generation,
            result,
            ..
        } => {
            if view == jobs::SEARCH && generation == desk.searched {
                desk.stage = match result.and_then(take::<Outcome>) {
                    Ok(o) => Stage::Ready(o),
                    Err(e) => Stage::Failed(e),
                };
            } else if view == jobs::REHEARSAL && desk.rehearsing_now(generation) {
                rehearsed(desk, result.and_then(take::<Recovery>));
            }
            Vec::new()
        }
        _ => Vec::new(),
    }
}

fn take<T: 'static>(r: Box<dyn std::any::Any + Send>) -> Result<Box<T>, String> {
    r.downcast::<T>()
        .map_err(|_| "internal error: a job returned something else".to_string())
}

impl Desk {
    fn rehearsing_now(&self, generation: u64) -> bool {
        self.rehearsing
            .as_ref()
            .is_some_and(|r| r.generation == generation)
    }
}

fn reported(desk: &mut Desk, view: &str, generation: u64, report: Report) {
    if view == jobs::SEARCH && generation == desk.searched {
        if let (Stage::Searching(latest), Report::Tick(t)) = (&mut desk.stage, report) {
            *latest = Some(t);
        }
    } else if view == jobs::REHEARSAL {
        if let Some(r) = desk.rehearsing.as_mut() {
            if r.generation == generation {
                r.latest = Some(report);
            }
        }
    }
}

/// A rehearsal's result: its recovery goes into the outcome.
fn rehearsed(desk: &mut Desk, result: Result<Box<Recovery>, String>) {
    desk.rehearsing = None;
    match result {
        Ok(recovery) => {
            let folder = std::path::Path::new(&recovery.spec)
                .parent()
                .map(|p| p.display().to_string())
                .unwrap_or_default();
            if let Stage::Ready(o) = &mut desk.stage {
                o.rehearsal = Some(*recovery);
            }
            desk.say(
                Tone::Good,
                format!("rehearsed: answers and spec in {folder}"),
            );
        }
        Err(e) => desk.say(Tone::Bad, format!("the rehearsal failed: {e}")),
    }
}

fn act(desk: &mut Desk, a: Action) -> Vec<Job> {
    let mut shell = Shell {
        quit: &mut desk.quit,
        help: &mut desk.help,
        help_scroll: &mut desk.help_scroll,
        prompt: &mut desk.prompt,
        status: &mut desk.status,
        view: &mut desk.view,
        views: desk.views.len(),
    };
    match shell.on(a) {
        Left::Nothing => Vec::new(),
        Left::Prompt => on_prompt(desk, a),
        Left::View if a == Action::NextModel => {
            desk.say(
                Tone::Info,
                "one design is open: m switches models when specs are open",
            );
            Vec::new()
        }
        Left::View => on_view(desk, a),
    }
}

/// An action for the view shown.
fn on_view(desk: &mut Desk, a: Action) -> Vec<Job> {
    let shown = desk.view;
    let mut reply = Reply::default();
    let Some((sheet, views)) = parts(desk) else {
        return Vec::new();
    };
    views[shown].act(&sheet, a, &mut reply);
    follow(desk, shown, reply)
}

/// Carries out what a view asked for.
fn follow(desk: &mut Desk, from: usize, reply: Reply) -> Vec<Job> {
    if let Some(s) = reply.status {
        desk.status = Some(s);
    }
    if let Some((ask, question, text)) = reply.ask {
        desk.prompt = Some(Prompt::Line {
            view: from,
            ask,
            question,
            text,
        });
    }
    match (reply.rehearse, desk.outcome()) {
        (Some(n), Some(o)) => {
            let outcome = o.clone();
            desk.generation += 1;
            let generation = desk.generation;
            desk.rehearsing = Some(Rehearsing {
                respondents: n,
                generation,
                latest: None,
            });
            vec![jobs::rehearsal(desk.plan.clone(), outcome, n, generation)]
        }
        _ => Vec::new(),
    }
}

/// Keys while the prompt is open: typing and accepting.
fn on_prompt(desk: &mut Desk, a: Action) -> Vec<Job> {
    let Some(Prompt::Line {
        view,
        ask,
        question,
        mut text,
    }) = desk.prompt.take()
    else {
        return Vec::new();
    };
    match a {
        Action::Char(c) => text.push(c),
        Action::Backspace => {
            text.pop();
        }
        Action::Enter => {
            let mut reply = Reply::default();
            let answer = match parts(desk) {
                Some((sheet, views)) => match views.get_mut(view) {
                    Some(v) => v.answered(&sheet, ask, &text, &mut reply),
                    None => Answer::Done,
                },
                None => Answer::Done,
            };
            if matches!(answer, Answer::Again) {
                desk.prompt = Some(Prompt::Line {
                    view,
                    ask,
                    question,
                    text,
                });
            }
            return follow(desk, view, reply);
        }
        _ => {}
    }
    desk.prompt = Some(Prompt::Line {
        view,
        ask,
        question,
        text,
    });
    Vec::new()
}

impl crate::tui::Bench for Desk {
    fn update(&mut self, msg: Msg) -> Vec<Job> {
        update(self, msg)
    }

    fn quitting(&self) -> bool {
        self.quit
    }

    fn say(&mut self, tone: Tone, text: String) {
        Desk::say(self, tone, text);
    }

    fn draw(&self, area: ratatui::layout::Rect, buf: &mut ratatui::buffer::Buffer) {
        screen::draw(self, area, buf);
    }

    fn failure(&self) -> Option<String> {
        match &self.stage {
            Stage::Failed(message) => Some(message.clone()),
            _ => None,
        }
    }
}
