//! The workbench's state, the messages that change it, and `update`: the one
//! entry point for every change (keys and worker results alike). The app
//! keeps only what the views share (the opened models and their analyses,
//! the prompt, the message line, which view is shown); each view keeps its
//! own state and is reached through the `View` trait alone.

use std::path::PathBuf;

use ratatui::crossterm::event::KeyEvent;

use super::keys::{self, Action, Context};
use super::part::{Answer, Ctx, Reply, View};
pub use super::part::{Prompt, Status, Tone};
use super::shell::{Left, Shell};
use super::theme::Theme;
use super::worker::Job;
pub use super::worker::{Model, Pending};
use crate::analysis::Analysis;
use crate::estimate::Step;
use crate::progress::Tick;
use crate::report::walk::Walk;

/// One opened model, its analysis and the analysis walked once for display
/// (which several views read).
#[derive(Clone, Debug)]
pub struct Loaded {
    pub model: Model,
    pub analysis: Pending<Analysis>,
    pub walk: Option<Box<Walk>>,
    /// While the analysis runs: the phase it reported last.
    pub progress: Option<Tick>,
}

impl Loaded {
    /// What the analysis is doing, for a view waiting on it.
    pub fn analysing(&self) -> String {
        match self.progress {
            Some(t) if t.total > 0 => format!("analysing: {} {}/{}…", t.phase, t.done, t.total),
            _ => "analysing…".to_string(),
        }
    }
}

/// While a spec is loaded and fitted.
#[derive(Clone, Debug)]
pub struct Loading {
    pub index: usize,
    pub of: usize,
    pub path: PathBuf,
    pub steps: Vec<Step>,
}

#[derive(Clone, Debug)]
pub enum Stage {
    Loading(Loading),
    Failed(String),
    Ready,
}

/// Everything on screen comes from here.
pub struct App {
    pub paths: Vec<PathBuf>,
    pub stage: Stage,
    pub models: Vec<Loaded>,
    pub current: usize,
    /// The views, in the order of the tabs and the number keys (`views::all`).
    pub views: Vec<Box<dyn View>>,
    /// The view shown: an index into `views`.
    pub view: usize,
    pub help: bool,
    pub help_scroll: u16,
    pub prompt: Option<Prompt>,
    pub status: Option<Status>,
    pub quit: bool,
    pub theme: Theme,
}

/// What the workbench reacts to.
#[derive(Debug)]
pub enum Msg {
    Key(KeyEvent),
    Resize,
    Loading {
        index: usize,
        path: PathBuf,
    },
    Progress {
        index: usize,
        step: Step,
    },
    Opened {
        index: usize,
        model: Model,
    },
    Failed(String),
    /// The analysis of model `index` reports progress.
    Ticked {
        index: usize,
        tick: Tick,
    },
    /// The analysis of model `index`, walked once for display.
    Analysed {
        index: usize,
        result: Result<(Box<Analysis>, Box<Walk>), String>,
    },
    /// A view's job reports its progress.
    Report {
        view: &'static str,
        index: usize,
        generation: u64,
        report: super::worker::Report,
    },
    /// A view's job finished.
    Done {
        view: &'static str,
        index: usize,
        generation: u64,
        result: Result<Box<dyn std::any::Any + Send>, String>,
    },
}

impl App {
    fn empty(paths: Vec<PathBuf>, theme: Theme) -> App {
        let first = paths.first().cloned().unwrap_or_default();
        App {
            stage: Stage::Loading(Loading {
                index: 0,
                of: paths.len(),
                path: first,
                steps: Vec::new(),
            }),
            paths,
            models: Vec::new(),
            current: 0,
            views: super::views::all(),
            view: 0,
            help: false,
            help_scroll: 0,
            prompt: None,
            status: None,
            quit: false,
            theme,
        }
    }

    /// A workbench that will open these specs; the job asks the worker to fit them.
    pub fn new(paths: Vec<PathBuf>, load: Option<PathBuf>, theme: Theme) -> (App, Vec<Job>) {
        let job = Job::Open {
            paths: paths.clone(),
            load,
        };
        (App::empty(paths, theme), vec![job])
    }

    /// A workbench on models fitted already (tests, or a caller with its own fits).
    pub fn with_models(models: Vec<Model>, theme: Theme) -> (App, Vec<Job>) {
        let mut app = App::empty(models.iter().map(|m| m.path.clone()).collect(), theme);
        let mut jobs = Vec::new();
        for (index, model) in models.into_iter().enumerate() {
            jobs.extend(update(&mut app, Msg::Opened { index, model }));
        }
        (app, jobs)
    }

    pub fn loaded(&self) -> Option<&Loaded> {
        self.models.get(self.current)
    }

    /// What the views read.
    pub fn ctx(&self) -> Ctx<'_> {
        Ctx {
            models: &self.models,
            current: self.current,
            paths: &self.paths,
            theme: &self.theme,
        }
    }

    /// The view shown.
    pub fn shown(&self) -> &dyn View {
        self.views[self.view].as_ref()
    }

    /// The view of type `T`, for tests and callers that read a view's state.
    pub fn part<T: View>(&self) -> Option<&T> {
        self.views
            .iter()
            .find_map(|v| v.as_any().downcast_ref::<T>())
    }

    /// The position of the view titled `title`.
    pub fn view_index(&self, title: &str) -> Option<usize> {
        self.views.iter().position(|v| v.title() == title)
    }

    pub fn say(&mut self, tone: Tone, text: impl Into<String>) {
        self.status = Some(Status {
            text: text.into(),
            tone,
        });
    }

    /// The context keys are read in.
    pub fn context(&self) -> Context<'_> {
        match (&self.prompt, self.help, &self.stage) {
            (Some(Prompt::Line { .. }), _, _) => Context::Typing,
            (Some(Prompt::Overwrite { .. }), _, _) => Context::Confirm,
            (None, true, _) => Context::Help,
            (None, false, Stage::Ready) if self.shown().typing() => Context::Filter,
            (None, false, Stage::Ready) => Context::View {
                keys: self.shown().keys(),
                views: self.views.len(),
            },
            _ => Context::Waiting,
        }
    }
}

/// What the views read, beside the views themselves (to call one mutably).
fn parts(app: &mut App) -> (Ctx<'_>, &mut [Box<dyn View>]) {
    let ctx = Ctx {
        models: &app.models,
        current: app.current,
        paths: &app.paths,
        theme: &app.theme,
    };
    (ctx, &mut app.views)
}

/// Applies one message; returns the jobs for the worker.
pub fn update(app: &mut App, msg: Msg) -> Vec<Job> {
    match msg {
        Msg::Key(key) => match keys::action(app.context(), key) {
            Some(a) => act(app, a),
            None => Vec::new(),
        },
        Msg::Resize => Vec::new(),
        Msg::Loading { index, path } => {
            app.stage = Stage::Loading(Loading {
                index,
                of: app.paths.len(),
                path,
                steps: Vec::new(),
            });
            Vec::new()
        }
        Msg::Progress { index, step } => {
            if let Stage::Loading(l) = &mut app.stage {
                if l.index == index {
                    if l.steps.len() >= 500 {
                        l.steps.remove(0);
                    }
                    l.steps.push(step);
                }
            }
            Vec::new()
        }
        Msg::Opened { index, model } => opened(app, index, model),
        Msg::Failed(message) => {
            app.stage = Stage::Failed(message);
            Vec::new()
        }
        Msg::Ticked { index, tick } => {
            if let Some(l) = app.models.get_mut(index) {
                if matches!(l.analysis, Pending::Waiting) {
                    l.progress = Some(tick);
                }
            }
            Vec::new()
        }
        Msg::Analysed { index, result } => {
            if let Some(l) = app.models.get_mut(index) {
                l.progress = None;
                (l.analysis, l.walk) = match result {
                    Ok((a, w)) => (Pending::Ready(a), Some(w)),
                    Err(e) => (Pending::Failed(e), None),
                };
            }
            Vec::new()
        }
        Msg::Report {
            view,
            index,
            generation,
            report,
        } => {
            if let Some(v) = app.views.iter_mut().find(|v| v.title() == view) {
                v.reported(index, generation, report);
            }
            Vec::new()
        }
        Msg::Done {
            view,
            index,
            generation,
            result,
        } => {
            if let Some(v) = app.views.iter_mut().find(|v| v.title() == view) {
                v.arrived(index, generation, result);
            }
            Vec::new()
        }
    }
}

fn opened(app: &mut App, index: usize, model: Model) -> Vec<Job> {
    if index != app.models.len() {
        return Vec::new();
    }
    app.models.push(Loaded {
        analysis: Pending::Waiting,
        walk: None,
        progress: None,
        model: model.clone(),
    });
    if app.models.len() == app.paths.len() {
        app.stage = Stage::Ready;
    }
    let mut jobs = vec![Job::Analyse { index, model }];
    let (ctx, views) = parts(app);
    for v in views.iter_mut() {
        jobs.extend(v.opened(&ctx, index));
    }
    jobs
}

fn act(app: &mut App, a: Action) -> Vec<Job> {
    let mut shell = Shell {
        quit: &mut app.quit,
        help: &mut app.help,
        help_scroll: &mut app.help_scroll,
        prompt: &mut app.prompt,
        status: &mut app.status,
        view: &mut app.view,
        views: app.views.len(),
    };
    match shell.on(a) {
        Left::Nothing => Vec::new(),
        Left::Prompt => on_prompt(app, a),
        Left::View if a == Action::NextModel => {
            next_model(app);
            Vec::new()
        }
        Left::View => on_view(app, a),
    }
}

fn next_model(app: &mut App) {
    if app.models.len() > 1 {
        app.current = (app.current + 1) % app.models.len();
        let text = format!(
            "{} of {} models: {}",
            crate::analysis::compare::model_id(app.current),
            app.models.len(),
            app.paths[app.current].display()
        );
        app.say(Tone::Info, text);
    } else {
        app.say(
            Tone::Info,
            "one model is open: pass several specs to switch",
        );
    }
}

/// An action for the view shown; a view that does not apply to the model takes none.
fn on_view(app: &mut App, a: Action) -> Vec<Job> {
    let applies = app
        .loaded()
        .is_some_and(|l| app.shown().applies(&l.model).is_ok());
    if !applies {
        return Vec::new();
    }
    let mut reply = Reply::default();
    let shown = app.view;
    let (ctx, views) = parts(app);
    views[shown].act(&ctx, a, &mut reply);
    follow(app, shown, reply)
}

/// Carries out what a view asked for.
fn follow(app: &mut App, from: usize, reply: Reply) -> Vec<Job> {
    let Reply {
        mut jobs,
        status,
        ask,
        go,
    } = reply;
    if let Some(s) = status {
        app.status = Some(s);
    }
    if let Some((ask, question, text)) = ask {
        app.prompt = Some(Prompt::Line {
            view: from,
            ask,
            question,
            text,
        });
    }
    if let Some((title, focus)) = go {
        if let Some(to) = app.view_index(title) {
            app.view = to;
            let mut more = Reply::default();
            let (ctx, views) = parts(app);
            views[to].focus(&ctx, &focus, &mut more);
            jobs.extend(follow(app, to, more));
        }
    }
    jobs
}

/// Keys while a prompt is open: typing, accepting, and the explicit `y`.
fn on_prompt(app: &mut App, a: Action) -> Vec<Job> {
    let Some(prompt) = app.prompt.clone() else {
        return Vec::new();
    };
    match prompt {
        Prompt::Line {
            view,
            ask,
            question,
            mut text,
        } => {
            match a {
                Action::Char(c) => text.push(c),
                Action::Backspace => {
                    text.pop();
                }
                Action::Enter => return accept(app, view, ask, &text),
                _ => {}
            }
            app.prompt = Some(Prompt::Line {
                view,
                ask,
                question,
                text,
            });
            Vec::new()
        }
        Prompt::Overwrite { view, ask, path } => {
            app.prompt = None;
            if a != Action::Yes {
                app.say(Tone::Info, format!("kept {} as it was", path.display()));
                return Vec::new();
            }
            let mut reply = Reply::default();
            let (ctx, views) = parts(app);
            if let Some(v) = views.get_mut(view) {
                v.confirmed(&ctx, ask, &path, &mut reply);
            }
            follow(app, view, reply)
        }
    }
}

fn accept(app: &mut App, view: usize, ask: u8, text: &str) -> Vec<Job> {
    let mut reply = Reply::default();
    let (ctx, views) = parts(app);
    let Some(v) = views.get_mut(view) else {
        app.prompt = None;
        return Vec::new();
    };
    match v.answered(&ctx, ask, text, &mut reply) {
        Answer::Done => app.prompt = None,
        Answer::Again => {}
        Answer::Overwrite(path) => app.prompt = Some(Prompt::Overwrite { view, ask, path }),
    }
    follow(app, view, reply)
}
