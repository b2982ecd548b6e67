//! The tasks view: every task's block and levels, as the design file's
//! output writes them; ↑↓ scrolls the tasks, ←→ the columns when not all fit.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use super::{columns_note, shift};
use crate::experiment::Outcome;
use crate::report::experiment::level;
use crate::tui::design::part::{Page, Reply, Sheet};
use crate::tui::keys::Action;
use crate::tui::part::{Key, Scroll};
use crate::tui::widgets::{panel, right};

/// The tasks view: a row scroll and the first design column shown.
#[derive(Debug, Default)]
pub struct TasksView {
    pub scroll: Scroll,
    pub first: usize,
}

const KEYS: &[Key] = &[
    Key::shared("↑↓  j k", "scroll the tasks"),
    Key::shared("←→  h l", "more columns"),
];

/// Width of the task and block columns.
const LEAD: usize = 12;

impl Page for TasksView {
    fn title(&self) -> &'static str {
        "tasks"
    }

    fn about(&self) -> &'static str {
        "the choice tasks"
    }

    fn keys(&self) -> &'static [Key] {
        KEYS
    }

    fn hints(&self) -> &'static str {
        "↑↓ tasks  ←→ columns  ? help  q quit "
    }

    fn act(&mut self, sheet: &Sheet, action: Action, _reply: &mut Reply) {
        self.scroll.on(action, sheet.outcome.tasks.len());
        self.first = shift(self.first, sheet.outcome.columns.len(), action);
    }

    fn render(&self, sheet: &Sheet, area: Rect, buf: &mut Buffer) {
        let t = sheet.theme;
        let o = sheet.outcome;
        let inner = area.width.saturating_sub(4) as usize;
        let widths = widths(o);
        let first = self.first.min(o.columns.len().saturating_sub(1));
        let mut used = LEAD;
        let shown = widths[first..]
            .iter()
            .take_while(|w| {
                used += **w;
                used <= inner
            })
            .count()
            .max(1);
        let cols = first..(first + shown).min(o.columns.len());
        let mut head = format!("{}{}", right("task", 6), right("block", 6));
        for c in cols.clone() {
            head.push_str(&right(&o.columns[c], widths[c]));
        }
        let mut lines = vec![Line::from(Span::styled(head, t.header()))];
        let rows = area.height.saturating_sub(3) as usize;
        for row in o.tasks.iter().skip(self.scroll.0 as usize).take(rows) {
            let mut text = format!(
                "{}{}",
                right(&row.task.to_string(), 6),
                right(&row.block.to_string(), 6)
            );
            for c in cols.clone() {
                let v = row.levels.get(c).map_or("—".into(), |v| level(*v));
                text.push_str(&right(&v, widths[c]));
            }
            // Alternate blocks are dimmed, so a block's tasks read together.
            let style = if row.block % 2 == 0 {
                t.dim()
            } else {
                t.bold()
            };
            lines.push(Line::from(Span::styled(text, style)));
        }
        let title = format!(
            "tasks · {} in {} block{} · ↑↓ scroll{}",
            o.tasks.len(),
            o.blocks,
            if o.blocks == 1 { "" } else { "s" },
            columns_note(first, cols.len(), o.columns.len())
        );
        Paragraph::new(lines)
            .block(panel(title, t))
            .render(area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

/// Each design column's width: its name or its widest level, and a gap.
fn widths(o: &Outcome) -> Vec<usize> {
    o.columns
        .iter()
        .enumerate()
        .map(|(c, name)| {
            let widest = o
                .tasks
                .iter()
                .filter_map(|r| r.levels.get(c))
                .map(|v| level(*v).chars().count())
                .max()
                .unwrap_or(1);
            name.chars().count().max(widest) + 2
        })
        .collect()
}
