//! The key map: which key does what in which context (the shared keys, and
//! the shown view's own from its `View::keys`), and the help table that lists
//! every key (the help overlay and docs/workbench.md are written from it).

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyEventKind, KeyModifiers};

use super::part::{Key, View};

/// What a key asks for; `app::update` carries it out, passing what it does
/// not handle itself to the view shown.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Action {
    Quit,
    NextView,
    PrevView,
    /// Show the view at this position in the list.
    GoTo(usize),
    ToggleHelp,
    Close,
    NextModel,
    Up,
    Down,
    Left,
    Right,
    BigLeft,
    BigRight,
    Top,
    Bottom,
    PageUp,
    PageDown,
    /// One of the view's own keys (`part::Key::chars`).
    Command(char),
    Char(char),
    Backspace,
    Enter,
    /// Overwrite prompt: yes.
    Yes,
}

/// The context a key is read in.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Context<'a> {
    /// Fitting, or the fit failed: only quitting and help.
    Waiting,
    Help,
    /// A line being typed (a path or a value).
    Typing,
    /// "overwrite?" — y or anything else.
    Confirm,
    /// The view's filter line is open: typed keys go to it, the movement
    /// keys still move.
    Filter,
    /// A view is shown: its own keys, and how many views there are.
    View {
        keys: &'a [Key],
        views: usize,
    },
}

/// Maps a key press to an action in a context; `None` for keys with no meaning there.
pub fn action(ctx: Context, key: KeyEvent) -> Option<Action> {
    if key.kind == KeyEventKind::Release {
        return None;
    }
    let ctrl = key.modifiers.contains(KeyModifiers::CONTROL);
    if ctrl && matches!(key.code, KeyCode::Char('c') | KeyCode::Char('C')) {
        return Some(Action::Quit);
    }
    match ctx {
        Context::Typing => typing(key.code, ctrl),
        Context::Filter => match key.code {
            KeyCode::Up => Some(Action::Up),
            KeyCode::Down => Some(Action::Down),
            KeyCode::PageUp => Some(Action::PageUp),
            KeyCode::PageDown => Some(Action::PageDown),
            KeyCode::Home => Some(Action::Top),
            KeyCode::End => Some(Action::Bottom),
            KeyCode::Tab => Some(Action::NextView),
            KeyCode::BackTab => Some(Action::PrevView),
            code => typing(code, ctrl),
        },
        Context::Confirm => match key.code {
            KeyCode::Char('y') | KeyCode::Char('Y') => Some(Action::Yes),
            _ => Some(Action::Close),
        },
        _ => {
            let global = match key.code {
                KeyCode::Char('q') => Some(Action::Quit),
                KeyCode::Char('?') => Some(Action::ToggleHelp),
                KeyCode::Esc => Some(Action::Close),
                _ => None,
            };
            global.or_else(|| match ctx {
                Context::View { keys, views } => on_view(key, keys, views),
                Context::Help => match key.code {
                    KeyCode::Up | KeyCode::Char('k') => Some(Action::Up),
                    KeyCode::Down | KeyCode::Char('j') => Some(Action::Down),
                    _ => None,
                },
                _ => None,
            })
        }
    }
}

fn typing(code: KeyCode, ctrl: bool) -> Option<Action> {
    match code {
        KeyCode::Enter => Some(Action::Enter),
        KeyCode::Esc => Some(Action::Close),
        KeyCode::Backspace => Some(Action::Backspace),
        KeyCode::Char(c) if !ctrl => Some(Action::Char(c)),
        _ => None,
    }
}

/// Keys on a view: the shared ones first, then the view's own commands.
fn on_view(key: KeyEvent, keys: &[Key], views: usize) -> Option<Action> {
    let shift = key.modifiers.contains(KeyModifiers::SHIFT);
    let shared = match key.code {
        KeyCode::Tab => Some(Action::NextView),
        KeyCode::BackTab => Some(Action::PrevView),
        KeyCode::Char(c @ '1'..='9') => {
            let at = c as usize - '1' as usize;
            (at < views).then_some(Action::GoTo(at))
        }
        KeyCode::Char('m') => Some(Action::NextModel),
        KeyCode::Up | KeyCode::Char('k') => Some(Action::Up),
        KeyCode::Down | KeyCode::Char('j') => Some(Action::Down),
        KeyCode::Left if shift => Some(Action::BigLeft),
        KeyCode::Right if shift => Some(Action::BigRight),
        KeyCode::Left | KeyCode::Char('h') => Some(Action::Left),
        KeyCode::Right | KeyCode::Char('l') => Some(Action::Right),
        KeyCode::Char('H') => Some(Action::BigLeft),
        KeyCode::Char('L') => Some(Action::BigRight),
        KeyCode::Home | KeyCode::Char('g') => Some(Action::Top),
        KeyCode::End | KeyCode::Char('G') => Some(Action::Bottom),
        KeyCode::PageUp => Some(Action::PageUp),
        KeyCode::PageDown => Some(Action::PageDown),
        KeyCode::Enter => Some(Action::Enter),
        KeyCode::Char(super::filter::KEY) => Some(Action::Command(super::filter::KEY)),
        _ => None,
    };
    if shared.is_some() {
        return shared;
    }
    let KeyCode::Char(c) = key.code else {
        return None;
    };
    keys.iter()
        .any(|k| k.chars.contains(c))
        .then_some(Action::Command(c))
}

/// One section of the help: its name and (keys, what they do) lines.
pub type HelpSection = (String, Vec<(String, String)>);

/// A view as the help lists it: its title, its line in the list of views
/// and its own keys.
#[derive(Clone, Copy, Debug)]
pub struct Listing {
    pub title: &'static str,
    pub about: &'static str,
    pub keys: &'static [Key],
}

/// Every key of the model workbench, by context: the shared keys, each
/// view's own (from its `View::keys`, in the order of the views), and the
/// prompts. The help overlay and docs/workbench.md are written from this.
pub fn help(views: &[Box<dyn View>]) -> Vec<HelpSection> {
    let listed: Vec<Listing> = views
        .iter()
        .map(|v| Listing {
            title: v.title(),
            about: v.about(),
            keys: v.keys(),
        })
        .collect();
    sections(&listed, "views", true)
}

/// The help of a list of views: the shared keys (with `specs`, the model
/// workbench's: the next model, the filter and replacing a file), the list
/// under the heading `listed_as`, each view's own keys, and the prompts.
pub fn sections(views: &[Listing], listed_as: &str, specs: bool) -> Vec<HelpSection> {
    let own = |lines: &[(&str, &str)]| {
        lines
            .iter()
            .map(|(k, w)| (k.to_string(), w.to_string()))
            .collect::<Vec<_>>()
    };
    let go_to = format!("1 … {}", views.len());
    let mut shared = own(&[
        ("Tab  ⇧Tab", "next / previous view"),
        (&go_to, "go to a view"),
    ]);
    if specs {
        shared.extend(own(&[("m", "next model (specs)")]));
    }
    shared.extend(own(&[
        ("?", "help; ? or Esc closes"),
        ("Esc", "close help or prompt"),
        ("q  Ctrl-C", "quit"),
        ("↑↓  j k", "move or scroll"),
        ("g G", "first / last (Home End)"),
        ("PgUp PgDn", "a page up / down"),
    ]));
    if specs {
        shared.extend(own(&[("/  Esc", "filter by name · clear")]));
    }
    let mut out = vec![("everywhere".to_string(), shared)];
    out.push((
        listed_as.to_string(),
        views
            .iter()
            .enumerate()
            .map(|(i, v)| (format!("{} {}", i + 1, v.title), v.about.to_string()))
            .collect(),
    ));
    for v in views {
        if !v.keys.is_empty() {
            let lines = v.keys.iter().map(|k| (k.label, k.help)).collect::<Vec<_>>();
            out.push((v.title.to_string(), own(&lines)));
        }
    }
    let mut prompts = own(&[("Enter", "accept"), ("Esc", "cancel")]);
    if specs {
        prompts.extend(own(&[("y", "replace existing file")]));
    }
    out.push(("prompts".to_string(), prompts));
    out
}
