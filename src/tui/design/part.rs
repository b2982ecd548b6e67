//! What a view of the design workbench is: the `Page` trait every such view
//! implements (its title, keys and help lines, how it turns actions into
//! requests, how it draws itself), the read-only `Sheet` it sees (the design
//! file, the search's outcome, a rehearsal under way) and the `Reply`
//! through which it asks the desk for anything shared (a message, a prompt,
//! a rehearsal). The list of views is `design::views::all`.

use std::any::Any;

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

use crate::experiment::{Outcome, Plan};
use crate::tui::keys::{Action, Listing};
use crate::tui::part::{Answer, Key, Status, Tone};
use crate::tui::theme::Theme;
use crate::tui::worker::Report;

/// A rehearsal the worker is running.
#[derive(Clone, Debug)]
pub struct Rehearsing {
    pub respondents: usize,
    /// The generation of its job (a newer request replaces it).
    pub generation: u64,
    /// The fit's latest step, once the answers are written and the fit runs.
    pub latest: Option<Report>,
}

/// What a design view reads: the design file, the search's outcome (with the
/// rehearsal's recovery, once one ran), a rehearsal under way, the theme.
pub struct Sheet<'a> {
    pub plan: &'a Plan,
    pub outcome: &'a Outcome,
    pub rehearsing: Option<&'a Rehearsing>,
    pub theme: &'a Theme,
}

/// What a design view asks of the desk after an action.
#[derive(Debug, Default)]
pub struct Reply {
    pub status: Option<Status>,
    /// A line prompt: (ask, question, suggested text).
    pub ask: Option<(u8, String, String)>,
    /// Rehearse the design with this many simulated respondents.
    pub rehearse: Option<usize>,
}

impl Reply {
    pub fn say(&mut self, tone: Tone, text: impl Into<String>) {
        self.status = Some(Status {
            text: text.into(),
            tone,
        });
    }

    /// Opens a line prompt with a suggested text; the answer comes back through `Page::answered`.
    pub fn ask(&mut self, ask: u8, question: impl Into<String>, text: &str) {
        self.ask = Some((ask, question.into(), text.to_string()));
    }
}

/// A view of the design workbench. Implementations own their state (a
/// scroll, a column offset); the desk calls them only through this.
pub trait Page: Any {
    /// The tab's title, also the view's name in the help.
    fn title(&self) -> &'static str;

    /// One line on what the view shows, for the help overlay's list of views.
    fn about(&self) -> &'static str;

    /// The view's own keys and what the shared keys do on it.
    fn keys(&self) -> &'static [Key];

    /// The status line's hints while the view is shown.
    fn hints(&self) -> &'static str {
        "Tab views  ? help  q quit "
    }

    /// An action while the view is shown.
    fn act(&mut self, sheet: &Sheet, action: Action, reply: &mut Reply);

    /// The text typed in answer to this view's prompt `ask`.
    fn answered(&mut self, _sheet: &Sheet, _ask: u8, _text: &str, _reply: &mut Reply) -> Answer {
        Answer::Done
    }

    /// Draws the view.
    fn render(&self, sheet: &Sheet, area: Rect, buf: &mut Buffer);

    /// For tests and callers that read a view's state.
    fn as_any(&self) -> &dyn Any;
}

/// The views as the help lists them.
pub fn listings(pages: &[Box<dyn Page>]) -> Vec<Listing> {
    pages
        .iter()
        .map(|p| Listing {
            title: p.title(),
            about: p.about(),
            keys: p.keys(),
        })
        .collect()
}
