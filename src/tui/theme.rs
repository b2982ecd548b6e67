//! The workbench's look: one accent, modifiers for emphasis, and the heat
//! scale for matrices. Heat cells carry their own background and foreground,
//! so they read the same on dark and light terminals; every level also has a
//! glyph (and the strongest is bold), so nothing depends on colour alone.
//! `NO_COLOR` in the environment turns colour off.

use ratatui::style::{Color, Modifier, Style};

pub use crate::report::heat::{level, ELASTICITY_CUTS, GLYPHS, SHARE_CUTS};

const INK_DARK: Color = Color::Indexed(16);
const INK_LIGHT: Color = Color::Indexed(231);
/// Warm ramp for negative values (faint rose to deep brick).
const WARM: [u8; 4] = [224, 217, 209, 160];
/// Cool ramp for positive values (pale ice to deep sea).
const COOL: [u8; 4] = [195, 153, 75, 25];

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Theme {
    pub colour: bool,
}

impl Theme {
    /// Colour unless `NO_COLOR` is set.
    pub fn detect() -> Theme {
        Theme {
            colour: std::env::var_os("NO_COLOR").is_none(),
        }
    }

    pub fn plain() -> Theme {
        Theme { colour: false }
    }

    fn fg(&self, c: Color) -> Style {
        if self.colour {
            Style::default().fg(c)
        } else {
            Style::default()
        }
    }

    /// Headings, the brand and selected tabs' accents.
    pub fn accent(&self) -> Style {
        self.fg(Color::Indexed(37)).add_modifier(Modifier::BOLD)
    }

    /// Column headers of tables.
    pub fn header(&self) -> Style {
        Style::default().add_modifier(Modifier::BOLD | Modifier::UNDERLINED)
    }

    pub fn dim(&self) -> Style {
        Style::default().add_modifier(Modifier::DIM)
    }

    /// The row or tab under the cursor.
    pub fn selected(&self) -> Style {
        Style::default().add_modifier(Modifier::REVERSED | Modifier::BOLD)
    }

    pub fn bold(&self) -> Style {
        Style::default().add_modifier(Modifier::BOLD)
    }

    /// Warnings and diagnostics.
    pub fn warn(&self) -> Style {
        self.fg(Color::Indexed(166)).add_modifier(Modifier::BOLD)
    }

    /// Good news: converged, saved.
    pub fn good(&self) -> Style {
        self.fg(Color::Indexed(34)).add_modifier(Modifier::BOLD)
    }

    /// The base shares' bars.
    pub fn bar_base(&self) -> Style {
        if self.colour {
            Style::default().fg(Color::Indexed(245))
        } else {
            self.dim()
        }
    }

    /// The what-if shares' bars.
    pub fn bar_now(&self) -> Style {
        self.fg(Color::Indexed(37))
    }

    /// The uncertainty band drawn over and beyond a bar.
    pub fn band(&self) -> Style {
        self.fg(Color::Indexed(172))
    }

    /// A heat cell: background by level and sign, ink chosen for contrast.
    pub fn heat(&self, value: f64, cuts: &[f64; 4]) -> Style {
        let l = level(value, cuts);
        let mut s = Style::default();
        if l == 0 {
            return s.add_modifier(Modifier::DIM);
        }
        if self.colour {
            let ramp = if value < 0.0 { WARM } else { COOL };
            let ink = if l == 4 { INK_LIGHT } else { INK_DARK };
            s = s.bg(Color::Indexed(ramp[l - 1])).fg(ink);
        }
        if l >= 3 {
            s = s.add_modifier(Modifier::BOLD);
        }
        s
    }

    /// The glyph of a heat cell.
    pub fn glyph(value: f64, cuts: &[f64; 4]) -> &'static str {
        GLYPHS[level(value, cuts)]
    }
}
