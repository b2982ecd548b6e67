//! The balance view: how often each level of each design column appears,
//! over the whole design and in each block (the outcome's level counts),
//! and whether every column is balanced within one count in every block.

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
use crate::tui::theme::Theme;
use crate::tui::widgets::{left, panel, right};

/// The balance view: a row scroll and the first block shown.
#[derive(Debug, Default)]
pub struct Balance {
    pub scroll: Scroll,
    pub first: usize,
}

const KEYS: &[Key] = &[
    Key::shared("↑↓  j k", "scroll the levels"),
    Key::shared("←→  h l", "more blocks"),
];

/// Widths of the column name, the level and each count.
const NAME: usize = 18;
const LEVEL: usize = 10;
const COUNT: usize = 9;

impl Page for Balance {
    fn title(&self) -> &'static str {
        "balance"
    }

    fn about(&self) -> &'static str {
        "level counts per block"
    }

    fn keys(&self) -> &'static [Key] {
        KEYS
    }

    fn act(&mut self, sheet: &Sheet, action: Action, _reply: &mut Reply) {
        self.scroll.on(action, rows(sheet.outcome).len());
        self.first = shift(self.first, sheet.outcome.blocks, action);
    }

    fn render(&self, sheet: &Sheet, area: Rect, buf: &mut Buffer) {
        let t = sheet.theme;
        let o = sheet.outcome;
        let inner = area.width.saturating_sub(4) as usize;
        let fit = (inner.saturating_sub(NAME + LEVEL + COUNT) / COUNT).max(1);
        let first = self.first.min(o.blocks.saturating_sub(1));
        let blocks = first..(first + fit).min(o.blocks);
        let verdict = if o.balanced {
            Span::styled(
                "balanced: every column's levels within one count in each block",
                t.good(),
            )
        } else {
            Span::styled("not balanced in every block", t.warn())
        };
        let mut head = format!(
            "{}{}{}",
            left("column", NAME),
            left("level", LEVEL),
            right("all", COUNT)
        );
        for b in blocks.clone() {
            head.push_str(&right(&format!("block {}", b + 1), COUNT));
        }
        let mut lines = vec![
            Line::from(verdict),
            Line::from(Span::styled(head, t.header())),
        ];
        let room = area.height.saturating_sub(4) as usize;
        let all = rows(o);
        for r in all.iter().skip(self.scroll.0 as usize).take(room) {
            lines.push(row(o, r, blocks.clone(), t));
        }
        let title = format!(
            "level balance · tasks showing each level · ↑↓ scroll{}",
            columns_note(first, blocks.len(), o.blocks).replace("columns", "blocks")
        );
        Paragraph::new(lines)
            .block(panel(title, t))
            .render(area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

/// Every (design column, level) pair, in the outcome's order.
fn rows(o: &Outcome) -> Vec<(usize, usize)> {
    o.level_counts
        .iter()
        .enumerate()
        .flat_map(|(c, lc)| (0..lc.levels.len()).map(move |l| (c, l)))
        .collect()
}

fn row(
    o: &Outcome,
    &(c, l): &(usize, usize),
    blocks: std::ops::Range<usize>,
    t: &Theme,
) -> Line<'static> {
    let lc = &o.level_counts[c];
    let name = if l == 0 { lc.column.as_str() } else { "" };
    let mut text = format!(
        "{}{}{}",
        left(name, NAME),
        left(&level(lc.levels[l]), LEVEL),
        right(
            &lc.counts.get(l).map_or("—".into(), |n| n.to_string()),
            COUNT
        )
    );
    for b in blocks {
        let n = lc.by_block.get(b).and_then(|counts| counts.get(l));
        text.push_str(&right(&n.map_or("—".into(), |n| n.to_string()), COUNT));
    }
    let style = if l == 0 { t.bold() } else { Default::default() };
    Line::from(Span::styled(text, style))
}
