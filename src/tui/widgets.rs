//! Small drawing pieces the views share: framed panels, number formats,
//! share bars with a base tick and a band, and per-row interval strips.

use ratatui::style::Style;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, BorderType, Padding};

use super::theme::Theme;

/// A panel with a rounded frame and its title in the accent.
pub fn panel<'a>(title: impl Into<String>, theme: &Theme) -> Block<'a> {
    Block::bordered()
        .border_type(BorderType::Rounded)
        .border_style(theme.dim())
        .padding(Padding::horizontal(1))
        .title(Span::styled(format!(" {} ", title.into()), theme.accent()))
}

/// Fixed decimals, a dash for a value that is not finite.
pub fn fixed(x: f64, decimals: usize) -> String {
    if x.is_finite() {
        format!("{x:.decimals$}")
    } else {
        "—".into()
    }
}

/// Signed fixed decimals (`+0.0040`), a dash when not finite.
pub fn signed(x: f64, decimals: usize) -> String {
    if x.is_finite() {
        format!("{x:+.decimals$}")
    } else {
        "—".into()
    }
}

/// Left-aligned in `w` columns, cut with an ellipsis when longer.
pub fn left(s: &str, w: usize) -> String {
    let n = s.chars().count();
    if n > w {
        let cut: String = s.chars().take(w.saturating_sub(1)).collect();
        format!("{cut}…")
    } else {
        format!("{s:<w$}")
    }
}

/// Right-aligned in `w` columns.
pub fn right(s: &str, w: usize) -> String {
    let n = s.chars().count();
    if n > w {
        left(s, w)
    } else {
        format!("{s:>w$}")
    }
}

const EIGHTHS: [&str; 9] = [" ", "▏", "▎", "▍", "▌", "▋", "▊", "▉", "█"];

/// A bar of `value` on a 0..`scale` axis in `width` cells, with a tick at `base`
/// and, when given, the band `(low, high)`: `▓` inside the bar, `░` beyond it.
pub fn share_bar(
    value: f64,
    base: Option<f64>,
    band: Option<(f64, f64)>,
    scale: f64,
    width: usize,
    theme: &Theme,
) -> Vec<Span<'static>> {
    let cell = scale / width.max(1) as f64;
    let tick = base.map(|b| ((b / cell).floor().max(0.0) as usize).min(width.saturating_sub(1)));
    (0..width)
        .map(|i| {
            let start = i as f64 * cell;
            let centre = start + cell / 2.0;
            let fill = ((value - start) / cell).clamp(0.0, 1.0);
            let in_band = band.is_some_and(|(l, h)| l.is_finite() && centre >= l && centre <= h);
            if tick == Some(i) {
                return Span::styled(
                    "┃",
                    theme.bar_base().add_modifier(theme.bold().add_modifier),
                );
            }
            let (glyph, style): (&str, Style) = if fill >= 1.0 {
                if in_band {
                    ("▓", theme.band())
                } else {
                    ("█", theme.bar_now())
                }
            } else if fill > 0.0 {
                let g = EIGHTHS[((fill * 8.0).round() as usize).min(8)];
                (
                    g,
                    if in_band {
                        theme.band()
                    } else {
                        theme.bar_now()
                    },
                )
            } else if in_band {
                ("░", theme.band())
            } else {
                (" ", Style::default())
            };
            Span::styled(glyph, style)
        })
        .collect()
}

/// A nice upper end for a share axis: the next tenth above the largest value.
pub fn share_scale(values: impl IntoIterator<Item = f64>) -> f64 {
    let m = values
        .into_iter()
        .filter(|v| v.is_finite())
        .fold(0.0_f64, f64::max);
    ((m * 10.0).ceil() / 10.0).clamp(0.1, 1.0)
}

/// An interval strip: `├──●──┤` on an axis that always includes zero (`┆`).
/// Each row is scaled on its own, so it says where zero lies, not how wide.
pub fn interval_strip(
    low: f64,
    estimate: f64,
    high: f64,
    width: usize,
    theme: &Theme,
) -> Line<'static> {
    if !(low.is_finite() && high.is_finite() && estimate.is_finite()) || width < 5 {
        return Line::from(Span::styled(right("·", width), theme.dim()));
    }
    let lo = low.min(0.0);
    let hi = high.max(0.0);
    let span = (hi - lo).max(1e-300);
    let at = |x: f64| (((x - lo) / span) * (width - 1) as f64).round() as usize;
    let (a, b, e, z) = (at(low), at(high), at(estimate), at(0.0));
    let crosses = low <= 0.0 && high >= 0.0;
    let ink = if crosses {
        theme.dim()
    } else {
        theme.bar_now()
    };
    let mut cells: Vec<Span<'static>> = Vec::with_capacity(width);
    for i in 0..width {
        let (g, s) = if i == e {
            ("●", ink.add_modifier(theme.bold().add_modifier))
        } else if i == a {
            ("├", ink)
        } else if i == b {
            ("┤", ink)
        } else if i == z {
            ("┆", theme.dim())
        } else if i > a && i < b {
            ("─", ink)
        } else {
            (" ", Style::default())
        };
        cells.push(Span::styled(g, s));
    }
    Line::from(cells)
}
