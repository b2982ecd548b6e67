//! Lists of alternatives that outgrow the screen: the filter typed after `/`
//! (a case-insensitive part of the name; Enter keeps it, Esc clears it), a
//! cursor or a scroll moved over the rows it keeps (↑↓, PgUp PgDn, Home End),
//! the largest rows first when not all fit, the "showing k of N" note and
//! the filter's line at the foot of a view. Every view with a list of
//! alternatives keeps one `Filter`; matrices pick their rows and columns
//! with `pick`.

use std::cell::Cell;

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;

use super::keys::Action;
use super::theme::Theme;

/// The filter's key: a shared key (`keys::action`), taken by every view
/// with a list of alternatives and ignored by the others.
pub const KEY: char = '/';

/// Rows and columns of a matrix shown at most (the largest by share).
pub const MOST: usize = 12;

/// A page when nothing has been drawn yet.
const PAGE: usize = 10;

/// The filter of one view: the typed text, whether its line takes the typed
/// keys, and the rows its list showed at the last drawing (a page).
#[derive(Debug, Default)]
pub struct Filter {
    text: String,
    typing: bool,
    page: Cell<usize>,
}

/// What the filter did with a key.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Took {
    /// Not the filter's key: the view handles it.
    Not,
    /// Taken; the rows kept are the same.
    Kept,
    /// Taken; the rows kept changed.
    Changed,
}

impl Filter {
    pub fn text(&self) -> &str {
        &self.text
    }

    /// The filter's line takes the typed keys.
    pub fn typing(&self) -> bool {
        self.typing
    }

    /// Some text narrows the rows.
    pub fn active(&self) -> bool {
        !self.text.is_empty()
    }

    /// Whether a name contains the typed text (case-insensitive).
    pub fn keeps(&self, name: &str) -> bool {
        self.text.is_empty() || name.to_lowercase().contains(&self.text.to_lowercase())
    }

    /// The positions of the names the filter keeps.
    pub fn kept<S: AsRef<str>>(&self, names: impl IntoIterator<Item = S>) -> Vec<usize> {
        let want = self.text.to_lowercase();
        names
            .into_iter()
            .enumerate()
            .filter(|(_, n)| want.is_empty() || n.as_ref().to_lowercase().contains(&want))
            .map(|(i, _)| i)
            .collect()
    }

    /// `/` opens the line; while it is open characters type and Backspace
    /// deletes, Enter keeps the text; Esc clears it (open or not).
    pub fn on(&mut self, a: Action) -> Took {
        match a {
            Action::Command(KEY) if !self.typing => {
                self.typing = true;
                Took::Kept
            }
            Action::Char(c) if self.typing => {
                self.text.push(c);
                Took::Changed
            }
            Action::Backspace if self.typing => match self.text.pop() {
                Some(_) => Took::Changed,
                None => Took::Kept,
            },
            Action::Enter if self.typing => {
                self.typing = false;
                Took::Kept
            }
            Action::Close if self.typing || self.active() => {
                self.typing = false;
                let had = !self.text.is_empty();
                self.text.clear();
                if had {
                    Took::Changed
                } else {
                    Took::Kept
                }
            }
            _ => Took::Not,
        }
    }

    /// Rows a page moves (the rows shown at the last drawing).
    pub fn page(&self) -> usize {
        match self.page.get() {
            0 => PAGE,
            n => n,
        }
    }

    /// The first row shown of `rows` after a movement key (one, a page, the
    /// first or last page); `offset` itself for any other key.
    pub fn scroll(&self, offset: usize, rows: usize, a: Action) -> usize {
        let page = self.page();
        let most = rows.saturating_sub(page);
        step(offset.min(most), most + 1, page, a).unwrap_or(offset)
    }

    /// Remembers the rows a list shows, for the next page.
    pub fn seen(&self, rows: usize) {
        self.page.set(rows);
    }

    /// The view's area without the filter's line, which is drawn at its foot
    /// while it is open or narrows the rows (`kept` of `total` names match).
    pub fn split(
        &self,
        area: Rect,
        kept: usize,
        total: usize,
        t: &Theme,
        buf: &mut Buffer,
    ) -> Rect {
        if !self.typing && !self.active() {
            return area;
        }
        let [rest, foot] =
            Layout::vertical([Constraint::Min(3), Constraint::Length(1)]).areas(area);
        let mut spans = vec![Span::styled(" / ", t.accent())];
        if self.typing {
            spans.push(Span::styled(format!("{}▏", self.text), t.bold()));
        } else {
            spans.push(Span::styled(self.text.clone(), t.bold()));
        }
        spans.push(Span::styled(
            format!("  {kept} of {total} alternatives match"),
            t.dim(),
        ));
        let keys = if self.typing {
            " · Enter keeps · Esc clears"
        } else {
            " · / edits · Esc clears"
        };
        spans.push(Span::styled(keys, t.dim()));
        Line::from(spans).render(foot, buf);
        rest
    }
}

/// Moves a position among `len` rows: one up or down, a page, the first or
/// the last; `None` for any other key.
pub fn step(at: usize, len: usize, page: usize, a: Action) -> Option<usize> {
    let last = len.saturating_sub(1);
    let at = at.min(last);
    Some(match a {
        Action::Up => at.saturating_sub(1),
        Action::Down => (at + 1).min(last),
        Action::PageUp => at.saturating_sub(page.max(1)),
        Action::PageDown => (at + page.max(1)).min(last),
        Action::Top => 0,
        Action::Bottom => last,
        _ => return None,
    })
}

/// Moves a cursor (a position in the full list) among the `kept` positions;
/// a cursor on a row the filter hides lands on the first kept one.
pub fn cursor(at: usize, kept: &[usize], page: usize, a: Action) -> Option<usize> {
    match kept.iter().position(|&i| i == at) {
        Some(p) => step(p, kept.len(), page, a).and_then(|p| kept.get(p).copied()),
        None => step(0, kept.len(), page, a).map(|_| settle(at, kept)),
    }
}

/// The cursor on a kept row: itself when kept, else the first kept row.
pub fn settle(at: usize, kept: &[usize]) -> usize {
    if kept.contains(&at) {
        at
    } else {
        kept.first().copied().unwrap_or(at)
    }
}

/// The first of `len` rows shown in `room` lines so that row `at` is in view.
pub fn first(at: usize, len: usize, room: usize) -> usize {
    let room = room.max(1);
    at.saturating_sub(room - 1).min(len.saturating_sub(room))
}

/// Positions ordered by `value`, largest first (ties in list order; a value
/// that is not a number last).
pub fn largest(positions: &[usize], value: impl Fn(usize) -> f64) -> Vec<usize> {
    let mut out = positions.to_vec();
    let key = |i: usize| {
        let v = value(i);
        if v.is_nan() {
            f64::NEG_INFINITY
        } else {
            v
        }
    };
    out.sort_by(|&a, &b| key(b).total_cmp(&key(a)));
    out
}

/// "showing k of N" (and how the rows are ordered, when given).
pub fn showing(k: usize, n: usize, order: &str) -> String {
    if order.is_empty() {
        format!("showing {k} of {n}")
    } else {
        format!("showing {k} of {n}, {order}")
    }
}
