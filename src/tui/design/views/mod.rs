//! The design workbench's views: one file each, listed once in `all`, in
//! the order of the tabs and the number keys. The tabs, number keys, help
//! overlay and status hints are generated from this list; the help test
//! checks each view's keys against docs/workbench.md. Each view shows the
//! figures of the search's `Outcome` (formatted like the design's reports),
//! never one of its own.

pub mod balance;
pub mod precision;
pub mod rehearsal;
pub mod summary;
pub mod tasks;

use super::part::Page;
use crate::tui::keys::Action;

/// Every view of a design, in tab order.
pub fn all() -> Vec<Box<dyn Page>> {
    vec![
        Box::new(summary::Summary::default()),
        Box::new(tasks::TasksView::default()),
        Box::new(balance::Balance::default()),
        Box::new(precision::Precision::default()),
        Box::new(rehearsal::Rehearsal::default()),
    ]
}

/// The first of `total` columns shown, moved by ←→ one at a time (a page
/// with ⇧), kept so that the last column can be reached.
pub fn shift(first: usize, total: usize, a: Action) -> usize {
    let most = total.saturating_sub(1);
    match a {
        Action::Left => first.saturating_sub(1),
        Action::Right => (first + 1).min(most),
        Action::BigLeft => first.saturating_sub(5),
        Action::BigRight => (first + 5).min(most),
        _ => first.min(most),
    }
}

/// "columns 3–8 of 12" when not every column fits, else nothing.
pub fn columns_note(first: usize, shown: usize, total: usize) -> String {
    if shown >= total {
        String::new()
    } else {
        format!(
            " · ←→ columns {}–{} of {total}",
            first + 1,
            (first + shown).min(total)
        )
    }
}
