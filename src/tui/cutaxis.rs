//! The ordered families' cut-points drawn on one axis of the latent index:
//! each threshold ● with its 95% interval ═, and the categories between them.

use ratatui::text::Line;

/// Lines of the axis, `width` columns wide: the thresholds `(low, value, high)`
/// in order and the category names (one more than the thresholds).
pub fn lines(cuts: &[(f64, f64, f64)], names: &[String], width: usize) -> Vec<Line<'static>> {
    let width = width.max(20);
    let finite = cuts
        .iter()
        .flat_map(|c| [c.0, c.1, c.2])
        .filter(|x| x.is_finite());
    let (lo, hi) = finite.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
        (a.min(x), b.max(x))
    });
    if !(lo.is_finite() && hi.is_finite()) || cuts.is_empty() {
        return Vec::new();
    }
    let pad = 0.08 * (hi - lo).max(1e-9);
    let (lo, hi) = (lo - pad, hi + pad);
    let col = |x: f64| {
        (((x - lo) / (hi - lo)) * (width - 1) as f64)
            .round()
            .clamp(0.0, (width - 1) as f64) as usize
    };
    let mut axis: Vec<char> = vec!['─'; width];
    for &(l, _, h) in cuts {
        if l.is_finite() && h.is_finite() {
            for c in axis.iter_mut().take(col(h) + 1).skip(col(l)) {
                *c = '═';
            }
        }
    }
    for &(_, v, _) in cuts {
        axis[col(v)] = '●';
    }
    // Category names centred between neighbouring thresholds, where they fit.
    let mut label: Vec<char> = vec![' '; width];
    let mut edges = vec![0usize];
    edges.extend(cuts.iter().map(|c| col(c.1)));
    edges.push(width - 1);
    for (k, name) in names.iter().enumerate().take(edges.len() - 1) {
        let (a, b) = (edges[k], edges[k + 1]);
        let text: Vec<char> = name.chars().collect();
        let room = b.saturating_sub(a).saturating_sub(1);
        let text: Vec<char> = if text.len() <= room {
            text
        } else {
            format!("{}", k + 1).chars().collect()
        };
        if text.len() > room {
            continue;
        }
        let start = a + 1 + (room - text.len()) / 2;
        for (i, ch) in text.iter().enumerate() {
            label[start + i] = *ch;
        }
    }
    let ends = format!(
        "{:<w$}{:>8.3}",
        format!("{:.3}", lo),
        hi,
        w = width.saturating_sub(8)
    );
    vec![
        Line::from(
            "cut-points on one axis of the latent index (● estimate, ═ 95% interval):".to_string(),
        ),
        Line::from(axis.into_iter().collect::<String>()),
        Line::from(label.into_iter().collect::<String>()),
        Line::from(ends),
    ]
}
