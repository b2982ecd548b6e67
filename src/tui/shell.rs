//! The keys both workbenches (models and a design) handle alike around
//! their views: quitting, the help and its scroll, Esc closing a prompt or
//! the help, and moving between views (a view's message goes with it).

use super::keys::Action;
use super::part::{Prompt, Status, Tone};

/// The state those keys change, borrowed from a workbench.
pub struct Shell<'a> {
    pub quit: &'a mut bool,
    pub help: &'a mut bool,
    pub help_scroll: &'a mut u16,
    pub prompt: &'a mut Option<Prompt>,
    pub status: &'a mut Option<Status>,
    /// The view shown, among `views`.
    pub view: &'a mut usize,
    pub views: usize,
}

/// What is left for the workbench after the shared keys.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Left {
    /// Handled.
    Nothing,
    /// A prompt is open: the action goes to it.
    Prompt,
    /// The action goes to the workbench or its view shown.
    View,
}

impl Shell<'_> {
    /// Applies the shared keys; says what is left for the workbench.
    pub fn on(&mut self, a: Action) -> Left {
        match a {
            Action::Quit => {
                *self.quit = true;
                return Left::Nothing;
            }
            Action::ToggleHelp => {
                *self.help = !*self.help;
                *self.help_scroll = 0;
                return Left::Nothing;
            }
            // Esc closes a prompt or the help; with neither open, the view
            // has it (a filter clears).
            Action::Close if matches!(self.prompt, Some(Prompt::Line { .. })) || *self.help => {
                if self.prompt.take().is_some() {
                    *self.status = Some(Status {
                        text: "cancelled".into(),
                        tone: Tone::Info,
                    });
                }
                *self.help = false;
                return Left::Nothing;
            }
            _ => {}
        }
        if self.prompt.is_some() {
            return Left::Prompt;
        }
        if *self.help {
            match a {
                Action::Up => *self.help_scroll = self.help_scroll.saturating_sub(1),
                Action::Down => *self.help_scroll = (*self.help_scroll + 1).min(40),
                _ => {}
            }
            return Left::Nothing;
        }
        let n = self.views;
        let before = *self.view;
        match a {
            Action::NextView => *self.view = (before + 1) % n,
            Action::PrevView => *self.view = (before + n - 1) % n,
            Action::GoTo(v) if v < n => *self.view = v,
            _ => return Left::View,
        }
        // A message belongs to the view it was said on: it goes when the view changes.
        if *self.view != before {
            *self.status = None;
        }
        Left::Nothing
    }
}
