//! The alternatives an analysis's tables cover: all of them, or with many
//! alternatives the top ones by predicted share.

use crate::estimate::Fit;

/// A model with at most this many alternatives has its tables cover every one by default.
pub const WHOLE_UP_TO: usize = 12;
/// How many alternatives the tables of a model with more cover by default.
pub const TOP_DEFAULT: usize = 10;

/// The alternatives the tables cover: every one in spec order, or the `top`
/// ones by predicted share (largest first).
pub fn focus(fit: &Fit, top: Option<usize>) -> Vec<usize> {
    let j = fit.design.alternatives();
    let n = match top {
        Some(n) => n.clamp(1, j),
        None if j <= WHOLE_UP_TO => j,
        None => TOP_DEFAULT,
    };
    if n >= j || fit.shares.len() != j {
        return (0..j).collect();
    }
    let mut order: Vec<usize> = (0..j).collect();
    order.sort_by(|&a, &b| {
        fit.shares[b]
            .predicted
            .total_cmp(&fit.shares[a].predicted)
            .then(a.cmp(&b))
    });
    order.truncate(n);
    order
}
