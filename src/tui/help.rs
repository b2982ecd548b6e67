//! The help overlay: every key from the key map's table (the shared keys and
//! each registered view's own), in two columns when
//! the terminal is wide enough, scrolled with ↑↓ when it is not tall enough.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Clear, Paragraph, Widget};

use super::keys::HelpSection;
use super::theme::Theme;
use super::widgets::{left, panel};

fn section_lines(sections: &[HelpSection], kw: usize, t: &Theme) -> Vec<Line<'static>> {
    let mut lines = Vec::new();
    for (n, (name, keys)) in sections.iter().enumerate() {
        // A section with long keys (the list of views) gets a wider key column.
        let longest = keys.iter().map(|(k, _)| k.chars().count() + 3).max();
        let kw = longest.unwrap_or(0).max(kw);
        if n > 0 {
            lines.push(Line::from(""));
        }
        lines.push(Line::from(Span::styled(name.to_string(), t.accent())));
        for (k, what) in keys.iter() {
            lines.push(Line::from(vec![
                Span::styled(left(&format!("  {k}"), kw), t.bold()),
                Span::raw(what.to_string()),
            ]));
        }
    }
    lines
}

/// Where to start the second column: the split that makes the taller column shortest.
fn halfway(sections: &[HelpSection]) -> usize {
    let heights: Vec<usize> = sections.iter().map(|(_, k)| k.len() + 2).collect();
    let total: usize = heights.iter().sum();
    (1..sections.len())
        .min_by_key(|&i| {
            let first: usize = heights[..i].iter().sum();
            first.max(total - first)
        })
        .unwrap_or(sections.len())
}

/// Draws the help of `sections` over `area`, scrolled down `scroll` lines.
pub fn render(sections: &[HelpSection], scroll: u16, t: &Theme, area: Rect, buf: &mut Buffer) {
    let w = area.width.min(100);
    let h = area.height.min(40);
    let popup = Rect {
        x: area.x + (area.width - w) / 2,
        y: area.y + (area.height - h) / 2,
        width: w,
        height: h,
    };
    Clear.render(popup, buf);
    let block = panel("keys · ? or Esc closes · ↑↓ scroll", t);
    let inner = block.inner(popup);
    block.render(popup, buf);
    let kw = 14;
    let scroll = (scroll, 0);
    if inner.width >= 70 {
        let [a, b] = Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)])
            .areas(inner);
        let split = halfway(sections);
        Paragraph::new(section_lines(&sections[..split], kw, t))
            .scroll(scroll)
            .render(a, buf);
        Paragraph::new(section_lines(&sections[split..], kw, t))
            .scroll(scroll)
            .render(b, buf);
    } else {
        Paragraph::new(section_lines(sections, kw, t))
            .scroll(scroll)
            .render(inner, buf);
    }
}
