//! The workbench's state, the messages that change it, and `update`: the one
//! entry point for every change (keys and worker results alike). Views keep
//! their own small updates beside their rendering and are called from here.

use std::path::PathBuf;

use ratatui::crossterm::event::KeyEvent;

use super::keys::{self, Action, Context};
pub use super::screen::View;
use super::theme::Theme;
use super::worker::Job;
pub use super::worker::{Model, Pending};
use super::{curve, estimates, whatif};
use crate::analysis::compare::{self, Comparison};
use crate::analysis::Analysis;
use crate::estimate::{Fit, Step};
use crate::scenario::sweep::Sweep;
use crate::scenario::Forecast;

/// One opened model and the per-model state of the views that depend on its spec.
#[derive(Clone, Debug)]
pub struct Loaded {
    pub model: Model,
    pub analysis: Pending<Analysis>,
    pub whatif: whatif::WhatIf,
    pub curve: curve::Curve,
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

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Ask {
    /// A change for the what-if lever.
    Value,
    /// Where to save the what-if as a scenario file.
    Save,
    /// Where to export the forecast.
    Export,
}

#[derive(Clone, Debug, PartialEq)]
pub enum Prompt {
    Line {
        ask: Ask,
        text: String,
    },
    /// The file exists: y replaces it.
    Overwrite {
        ask: Ask,
        path: PathBuf,
    },
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Tone {
    Info,
    Good,
    Bad,
}

#[derive(Clone, Debug)]
pub struct Status {
    pub text: String,
    pub tone: Tone,
}

/// Everything on screen comes from here.
#[derive(Clone, Debug)]
pub struct App {
    pub paths: Vec<PathBuf>,
    pub stage: Stage,
    pub models: Vec<Loaded>,
    pub current: usize,
    pub view: View,
    pub help: bool,
    pub help_scroll: u16,
    pub prompt: Option<Prompt>,
    pub status: Option<Status>,
    pub quit: bool,
    pub theme: Theme,
    pub estimates: estimates::State,
    /// Elasticities: which variable, and arc rather than point values.
    pub variable: usize,
    pub arc: bool,
    /// Vertical scroll of the overview, diversion and compare views.
    pub scroll: [u16; 7],
    pub comparison: Option<Comparison>,
    /// Bumped for every background request; results carrying an older one are dropped.
    pub generation: u64,
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
    Analysed {
        index: usize,
        result: Result<Box<Analysis>, String>,
    },
    Band {
        index: usize,
        generation: u64,
        result: Result<Box<Forecast>, String>,
    },
    Curve {
        index: usize,
        generation: u64,
        result: Result<Box<Sweep>, String>,
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
            view: View::Overview,
            help: false,
            help_scroll: 0,
            prompt: None,
            status: None,
            quit: false,
            theme,
            estimates: estimates::State::default(),
            variable: 0,
            arc: false,
            scroll: [0; 7],
            comparison: None,
            generation: 0,
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

    pub fn loaded_mut(&mut self) -> Option<&mut Loaded> {
        self.models.get_mut(self.current)
    }

    pub fn next_generation(&mut self) -> u64 {
        self.generation += 1;
        self.generation
    }

    pub fn say(&mut self, tone: Tone, text: impl Into<String>) {
        self.status = Some(Status {
            text: text.into(),
            tone,
        });
    }

    /// The context keys are read in.
    pub fn context(&self) -> Context {
        match (&self.prompt, self.help, &self.stage) {
            (Some(Prompt::Line { .. }), _, _) => Context::Typing,
            (Some(Prompt::Overwrite { .. }), _, _) => Context::Confirm,
            (None, true, _) => Context::Help,
            (None, false, Stage::Ready) => Context::View(self.view),
            _ => Context::Waiting,
        }
    }
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
        Msg::Analysed { index, result } => {
            if let Some(l) = app.models.get_mut(index) {
                l.analysis = match result {
                    Ok(a) => Pending::Ready(a),
                    Err(e) => Pending::Failed(e),
                };
            }
            Vec::new()
        }
        Msg::Band {
            index,
            generation,
            result,
        } => {
            if let Some(l) = app.models.get_mut(index) {
                l.whatif.banded(generation, result);
            }
            Vec::new()
        }
        Msg::Curve {
            index,
            generation,
            result,
        } => {
            if let Some(l) = app.models.get_mut(index) {
                l.curve.arrived(generation, result);
            }
            Vec::new()
        }
    }
}

fn opened(app: &mut App, index: usize, model: Model) -> Vec<Job> {
    if index != app.models.len() {
        return Vec::new();
    }
    let mut l = Loaded {
        whatif: whatif::WhatIf::new(&model.spec),
        curve: curve::Curve::new(&model.spec),
        analysis: Pending::Waiting,
        model: model.clone(),
    };
    let mut jobs = vec![Job::Analyse { index, model }];
    let g = app.next_generation();
    jobs.extend(l.whatif.refresh(index, &l.model, g));
    let g = app.next_generation();
    jobs.extend(l.curve.request(index, &l.model, g));
    app.models.push(l);
    if app.models.len() == app.paths.len() {
        app.stage = Stage::Ready;
        if app.models.len() > 1 {
            let fits: Vec<&Fit> = app.models.iter().map(|l| l.model.fit.as_ref()).collect();
            app.comparison = Some(compare::compare(&fits));
        }
    }
    jobs
}

fn act(app: &mut App, a: Action) -> Vec<Job> {
    match a {
        Action::Quit => {
            app.quit = true;
            return Vec::new();
        }
        Action::ToggleHelp => {
            app.help = !app.help;
            app.help_scroll = 0;
            return Vec::new();
        }
        Action::Close if !matches!(app.prompt, Some(Prompt::Overwrite { .. })) => {
            if app.prompt.take().is_some() {
                app.say(Tone::Info, "cancelled");
            }
            app.help = false;
            return Vec::new();
        }
        _ => {}
    }
    if app.prompt.is_some() {
        return super::prompt::on(app, a);
    }
    if app.help {
        match a {
            Action::Up => app.help_scroll = app.help_scroll.saturating_sub(1),
            Action::Down => app.help_scroll = (app.help_scroll + 1).min(40),
            _ => {}
        }
        return Vec::new();
    }
    let n = View::ALL.len();
    let before = app.view;
    match a {
        Action::NextView => app.view = View::ALL[(app.view.index() + 1) % n],
        Action::PrevView => app.view = View::ALL[(app.view.index() + n - 1) % n],
        Action::GoTo(v) => app.view = v,
        Action::NextModel => {
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
        _ => return on_view(app, a),
    }
    // A message belongs to the view it was said on: it goes when the view changes.
    if app.view != before {
        app.status = None;
    }
    Vec::new()
}

fn on_view(app: &mut App, a: Action) -> Vec<Job> {
    let v = app.view.index();
    let scroll = |app: &mut App| {
        let most = match app.view {
            View::Overview => super::overview::findings_height(app),
            View::Compare => super::compare::height(app),
            _ => 0,
        }
        .saturating_sub(1) as u16;
        match a {
            Action::Up => app.scroll[v] = app.scroll[v].saturating_sub(1),
            Action::Down => app.scroll[v] = (app.scroll[v] + 1).min(most),
            Action::Top => app.scroll[v] = 0,
            Action::Bottom => app.scroll[v] = most,
            _ => {}
        }
    };
    match app.view {
        View::Estimates => estimates::on(app, a),
        View::Elasticities => {
            let count = super::elasticities::variables(app).len().max(1);
            match a {
                Action::Right | Action::BigRight => app.variable = (app.variable + 1) % count,
                Action::Left | Action::BigLeft => app.variable = (app.variable + count - 1) % count,
                Action::Alternate => app.arc = !app.arc,
                _ => {}
            }
        }
        View::WhatIf => return whatif::on(app, a),
        View::Curve => return curve::on(app, a),
        View::Overview | View::Diversion | View::Compare => scroll(app),
    }
    Vec::new()
}
