//! The heat scale shared by the workbench's matrices and the HTML report:
//! level cut points for elasticities, for shares and for correlations, the
//! level of a value, and a glyph per level so that the scale reads without
//! colour.

/// The five heat levels' glyphs, weakest first.
pub const GLYPHS: [&str; 5] = [" ", "░", "▒", "▓", "█"];

/// Level cut points for elasticities (|value|): 1 and above is elastic.
pub const ELASTICITY_CUTS: [f64; 4] = [0.05, 0.2, 0.5, 1.0];
/// Level cut points for diversion shares and ratios (0 to 1).
pub const SHARE_CUTS: [f64; 4] = [0.1, 0.2, 0.3, 0.45];

/// Level cut points for correlations (|value|, -1 to 1).
pub const CORRELATION_CUTS: [f64; 4] = [0.1, 0.3, 0.5, 0.7];

/// Which bucket of a scale a magnitude falls in: 0 (faint) to 4 (strong).
pub fn level(magnitude: f64, cuts: &[f64; 4]) -> usize {
    if !magnitude.is_finite() {
        return 0;
    }
    cuts.iter().filter(|&&c| magnitude.abs() >= c).count()
}
