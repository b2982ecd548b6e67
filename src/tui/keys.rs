//! The key map: which key does what in which context, and the help table that
//! lists every key (the help overlay and docs/workbench.md are written from it).

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyEventKind, KeyModifiers};

use super::app::View;

/// What a key asks for; `app::update` carries it out.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Action {
    Quit,
    NextView,
    PrevView,
    GoTo(View),
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
    /// Estimates: classical or robust errors.
    ToggleErrors,
    /// Estimates: next sort order.
    CycleSort,
    /// Estimates: group rows by spec term or not.
    ToggleGrouping,
    /// Elasticities: point or arc; curve: the alternative whose share is drawn.
    Alternate,
    /// What-if: type a value for the lever.
    Edit,
    ResetLever,
    ResetAll,
    Withdraw,
    Save,
    Export,
    /// What-if: open the demand curve of the lever.
    CurveOfLever,
    Wider,
    Narrower,
    Char(char),
    Backspace,
    Enter,
    /// Overwrite prompt: yes.
    Yes,
}

/// The context a key is read in.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Context {
    /// Fitting, or the fit failed: only quitting and help.
    Waiting,
    Help,
    /// A line being typed (a path or a value).
    Typing,
    /// "overwrite?" — y or anything else.
    Confirm,
    View(View),
}

/// Maps a key press to an action in a context; `None` for keys with no meaning there.
pub fn action(ctx: Context, key: KeyEvent) -> Option<Action> {
    if key.kind == KeyEventKind::Release {
        return None;
    }
    let ctrl = key.modifiers.contains(KeyModifiers::CONTROL);
    let shift = key.modifiers.contains(KeyModifiers::SHIFT);
    if ctrl && matches!(key.code, KeyCode::Char('c') | KeyCode::Char('C')) {
        return Some(Action::Quit);
    }
    match ctx {
        Context::Typing => {
            return match key.code {
                KeyCode::Enter => Some(Action::Enter),
                KeyCode::Esc => Some(Action::Close),
                KeyCode::Backspace => Some(Action::Backspace),
                KeyCode::Char(c) if !ctrl => Some(Action::Char(c)),
                _ => None,
            }
        }
        Context::Confirm => {
            return match key.code {
                KeyCode::Char('y') | KeyCode::Char('Y') => Some(Action::Yes),
                _ => Some(Action::Close),
            }
        }
        _ => {}
    }
    let global = match key.code {
        KeyCode::Char('q') => Some(Action::Quit),
        KeyCode::Char('?') => Some(Action::ToggleHelp),
        KeyCode::Esc => Some(Action::Close),
        _ => None,
    };
    if global.is_some() {
        return global;
    }
    let view = match ctx {
        Context::View(v) => v,
        Context::Help => {
            return match key.code {
                KeyCode::Up | KeyCode::Char('k') => Some(Action::Up),
                KeyCode::Down | KeyCode::Char('j') => Some(Action::Down),
                _ => None,
            }
        }
        _ => return None,
    };
    let common = match key.code {
        KeyCode::Tab => Some(Action::NextView),
        KeyCode::BackTab => Some(Action::PrevView),
        KeyCode::Char(c @ '1'..='7') => View::ALL
            .get(c as usize - '1' as usize)
            .map(|v| Action::GoTo(*v)),
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
        KeyCode::PageUp => Some(Action::Top),
        KeyCode::PageDown => Some(Action::Bottom),
        KeyCode::Enter => Some(Action::Enter),
        _ => None,
    };
    if common.is_some() {
        return common;
    }
    let KeyCode::Char(c) = key.code else {
        return None;
    };
    match (view, c) {
        (View::Estimates, 'e') => Some(Action::ToggleErrors),
        (View::Estimates, 's') => Some(Action::CycleSort),
        (View::Estimates, 't') => Some(Action::ToggleGrouping),
        (View::Elasticities, 'a') => Some(Action::Alternate),
        (View::WhatIf, 'e') => Some(Action::Edit),
        (View::WhatIf, 'r') => Some(Action::ResetLever),
        (View::WhatIf, 'R') => Some(Action::ResetAll),
        (View::WhatIf, 'w') => Some(Action::Withdraw),
        (View::WhatIf, 's') => Some(Action::Save),
        (View::WhatIf, 'x') => Some(Action::Export),
        (View::WhatIf, 'c') => Some(Action::CurveOfLever),
        (View::Curve, 'a') => Some(Action::Alternate),
        (View::Curve, '+' | '=') => Some(Action::Wider),
        (View::Curve, '-') => Some(Action::Narrower),
        _ => None,
    }
}

/// Every key, by context: (section, [(keys, what they do)]).
pub const HELP: &[(&str, &[(&str, &str)])] = &[
    (
        "everywhere",
        &[
            ("Tab  ⇧Tab", "next / previous view"),
            ("1 … 7", "go to a view"),
            ("m", "next model (specs)"),
            ("?", "help; ? or Esc closes"),
            ("Esc", "close help or prompt"),
            ("q  Ctrl-C", "quit"),
            ("↑↓  j k", "move or scroll"),
            ("g G", "first / last (Home End)"),
        ],
    ),
    (
        "estimates",
        &[
            ("e", "Hessian/clustered s.e."),
            ("s", "sort: spec, |t|, name"),
            ("t", "group by spec term"),
        ],
    ),
    (
        "elasticities",
        &[
            ("←→  h l", "previous / next variable"),
            ("a", "point or arc values"),
        ],
    ),
    (
        "what-if",
        &[
            ("↑↓  j k", "choose a lever"),
            ("←→  h l", "step −/+ 1% (or 0.1)"),
            ("⇧←→  H L", "step −/+ 10% (or 1)"),
            ("Enter  e", "type +10% x1.2 +2 =3.5"),
            ("r  R", "reset lever / all"),
            ("w", "withdraw / restore alt."),
            ("s", "save as scenario TOML"),
            ("x", "export csv/json/parquet"),
            ("c", "demand curve of lever"),
        ],
    ),
    (
        "curve",
        &[
            ("↑↓  j k", "attribute to sweep"),
            ("←→  h l", "move the marker"),
            ("⇧←→  H L", "move it 5 points"),
            ("a", "alternative drawn"),
            ("+  -", "widen / narrow range"),
        ],
    ),
    (
        "prompts",
        &[
            ("Enter", "accept"),
            ("Esc", "cancel"),
            ("y", "replace existing file"),
        ],
    ),
];
