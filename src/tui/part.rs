//! What a workbench view is: the `View` trait every view implements (its
//! title, keys and help lines, whether it applies to the loaded model, how it
//! turns actions into jobs, and how it draws itself), the read-only `Ctx` it
//! sees, and the `Reply` through which it asks the app for anything shared
//! (a message, a prompt, another view). The list of views is `views::all`.

use std::any::Any;
use std::path::{Path, PathBuf};

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

use super::app::Loaded;
use super::keys::Action;
use super::theme::Theme;
use super::worker::{Job, Model};

/// One line of a view's help: the keys as shown, what they do, and the
/// characters that trigger the view's own command (`""` for a line that only
/// explains what the shared movement keys do on this view).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Key {
    pub chars: &'static str,
    pub label: &'static str,
    pub help: &'static str,
}

impl Key {
    /// A command of the view's own, triggered by any of `chars`.
    pub const fn command(chars: &'static str, label: &'static str, help: &'static str) -> Key {
        Key { chars, label, help }
    }

    /// What a shared key (arrows, Enter, ...) does on this view.
    pub const fn shared(label: &'static str, help: &'static str) -> Key {
        Key {
            chars: "",
            label,
            help,
        }
    }
}

/// What a view reads of the app: the models opened so far (with their
/// analyses), which one is shown, how many will be opened, and the theme.
pub struct Ctx<'a> {
    pub models: &'a [Loaded],
    pub current: usize,
    /// The specs given on the command line (as many as will be opened).
    pub paths: &'a [PathBuf],
    pub theme: &'a Theme,
}

impl<'a> Ctx<'a> {
    /// The model shown now.
    pub fn loaded(&self) -> Option<&'a Loaded> {
        self.models.get(self.current)
    }

    /// Whether every spec given has been opened.
    pub fn all_open(&self) -> bool {
        !self.models.is_empty() && self.models.len() == self.paths.len()
    }
}

/// Something another view is asked to show (the what-if's `c` opens the
/// demand curve of its lever).
#[derive(Clone, Debug, PartialEq)]
pub enum Focus {
    /// An attribute of an alternative, by their indices in the spec.
    Attribute {
        attribute: usize,
        alternative: usize,
    },
}

/// A question asked on the message line; `ask` is the asking view's own code.
#[derive(Clone, Debug, PartialEq)]
pub enum Prompt {
    Line {
        view: usize,
        ask: u8,
        question: String,
        text: String,
    },
    /// The file exists: y replaces it.
    Overwrite { view: usize, ask: u8, path: PathBuf },
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

/// What a view asks of the app after an action: jobs for the worker, a
/// message, a prompt, or another view to show something.
#[derive(Debug, Default)]
pub struct Reply {
    pub jobs: Vec<Job>,
    pub status: Option<Status>,
    /// A line prompt: (ask, question, suggested text).
    pub ask: Option<(u8, String, String)>,
    /// The named view is shown and asked to focus on this.
    pub go: Option<(&'static str, Focus)>,
}

impl Reply {
    pub fn say(&mut self, tone: Tone, text: impl Into<String>) {
        self.status = Some(Status {
            text: text.into(),
            tone,
        });
    }

    pub fn job(&mut self, job: Option<Job>) {
        self.jobs.extend(job);
    }

    /// Opens a line prompt with a suggested text; the answer comes back through `View::answered`.
    pub fn ask(&mut self, ask: u8, question: impl Into<String>, text: &str) {
        self.ask = Some((ask, question.into(), text.to_string()));
    }
}

/// A view's answer to a typed line.
#[derive(Debug)]
pub enum Answer {
    /// Done; the prompt closes.
    Done,
    /// The text is not usable: the prompt stays open.
    Again,
    /// The file exists: ask for the explicit `y` before `View::confirmed`.
    Overwrite(PathBuf),
}

/// A workbench view. Implementations own their state (per model where it
/// depends on the spec) and scroll; the app calls them only through this.
pub trait View: Any {
    /// The tab's title, also the view's name in the help and in jobs.
    fn title(&self) -> &'static str;

    /// One line on what the view shows, for the help overlay's list of views.
    fn about(&self) -> &'static str;

    /// The view's own keys and what the shared keys do on it, for the help
    /// overlay and the key map (`Key::chars`).
    fn keys(&self) -> &'static [Key];

    /// The status line's hints while the view is shown.
    fn hints(&self) -> &'static str {
        "Tab views  ? help  q quit "
    }

    /// Whether the view applies to this model; the reason when it does not.
    fn applies(&self, _model: &Model) -> Result<(), String> {
        Ok(())
    }

    /// A model has been opened (models are opened in order, `index` counting
    /// from 0): set up its state and ask for what it needs.
    fn opened(&mut self, _ctx: &Ctx, _index: usize) -> Vec<Job> {
        Vec::new()
    }

    /// The view's filter line is open: the keys typed go to the view
    /// (`Action::Char`, `Backspace`, `Enter`, `Close`), not to the key map.
    fn typing(&self) -> bool {
        false
    }

    /// An action while the view is shown.
    fn act(&mut self, ctx: &Ctx, action: Action, reply: &mut Reply);

    /// A result of one of this view's jobs (`Job::Part`) for a model.
    fn arrived(
        &mut self,
        _index: usize,
        _generation: u64,
        _result: Result<Box<dyn Any + Send>, String>,
    ) {
    }

    /// Progress of one of this view's jobs for a model.
    fn reported(&mut self, _index: usize, _generation: u64, _report: super::worker::Report) {}

    /// The text typed in answer to this view's prompt `ask`.
    fn answered(&mut self, _ctx: &Ctx, _ask: u8, _text: &str, _reply: &mut Reply) -> Answer {
        Answer::Done
    }

    /// The user said `y` to replacing `path` for prompt `ask`.
    fn confirmed(&mut self, _ctx: &Ctx, _ask: u8, _path: &Path, _reply: &mut Reply) {}

    /// Another view asks this one to show something.
    fn focus(&mut self, _ctx: &Ctx, _focus: &Focus, _reply: &mut Reply) {}

    /// Draws the view for the current model.
    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer);

    /// For tests and callers that read a view's state.
    fn as_any(&self) -> &dyn Any;
}

/// Lines a page key scrolls in a text panel.
const PAGE: u16 = 10;

/// A scroll offset kept below the content's height.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Scroll(pub u16);

impl Scroll {
    /// Applies a movement key, `height` being the content's height in lines.
    pub fn on(&mut self, action: Action, height: usize) {
        let most = height.saturating_sub(1).min(u16::MAX as usize) as u16;
        match action {
            Action::Up => self.0 = self.0.saturating_sub(1),
            Action::Down => self.0 = (self.0 + 1).min(most),
            Action::PageUp => self.0 = self.0.saturating_sub(PAGE),
            Action::PageDown => self.0 = self.0.saturating_add(PAGE).min(most),
            Action::Top => self.0 = 0,
            Action::Bottom => self.0 = most,
            _ => {}
        }
    }
}

/// A view's state for every opened model, grown as models open, and the
/// generation of the view's newest request (results of older ones are dropped).
#[derive(Clone, Debug)]
pub struct PerModel<T> {
    states: Vec<T>,
    generation: u64,
}

impl<T> Default for PerModel<T> {
    fn default() -> Self {
        PerModel {
            states: Vec::new(),
            generation: 0,
        }
    }
}

impl<T> PerModel<T> {
    pub fn get(&self, index: usize) -> Option<&T> {
        self.states.get(index)
    }

    pub fn get_mut(&mut self, index: usize) -> Option<&mut T> {
        self.states.get_mut(index)
    }

    /// The generation of a new request.
    pub fn next_generation(&mut self) -> u64 {
        self.generation += 1;
        self.generation
    }

    /// The state of model `index` (models open in order), and the job that
    /// `ask` makes for it with a new generation.
    pub fn open(
        &mut self,
        index: usize,
        mut state: T,
        ask: impl FnOnce(&mut T, u64) -> Option<Job>,
    ) -> Vec<Job> {
        let job = ask(&mut state, self.next_generation());
        if index < self.states.len() {
            self.states[index] = state;
        } else {
            self.states.push(state);
        }
        job.into_iter().collect()
    }

    /// A job's result for model `index`, as the `R` the job returns, handed to `take`.
    pub fn arrived<R: 'static>(
        &mut self,
        index: usize,
        result: Result<Box<dyn Any + Send>, String>,
        take: impl FnOnce(&mut T, Result<Box<R>, String>),
    ) {
        let result = result.and_then(|r| {
            r.downcast::<R>()
                .map_err(|_| "internal error: a job returned something else".to_string())
        });
        if let Some(state) = self.states.get_mut(index) {
            take(state, result);
        }
    }
}
