//! The demand-curve view's drawing: the list to sweep (the rows the filter
//! keeps), the chart of the drawn alternative's share with the base and the
//! marker, and the shares at the marker.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Axis, Chart, Dataset as Series, GraphType, Paragraph, Widget};

use super::{lever_names, variable, Curve, CurveView};
use crate::scenario::sweep::Sweep;
use crate::spec::Spec;
use crate::tui::filter;
use crate::tui::part::Ctx;
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, left, panel, signed};

pub fn render(view: &CurveView, c: &Curve, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let spec = &l.model.spec;
    let names = lever_names(&c.levers, spec);
    let kept = view.filter.kept(&names);
    let alternatives = view.filter.kept(spec.alternative_names());
    let area = view
        .filter
        .split(area, alternatives.len(), spec.alternatives.len(), t, buf);
    let [list, right] =
        Layout::horizontal([Constraint::Length(26), Constraint::Min(40)]).areas(area);
    lever_list(c, (spec, &kept), t, list, buf);
    view.filter.seen(list.height.saturating_sub(2) as usize);
    let Some(&(v, k)) = c.levers.get(c.cursor) else {
        Paragraph::new("the spec has no attribute or characteristic to sweep")
            .block(panel("demand curve", t))
            .render(right, buf);
        return;
    };
    let attr = variable(spec, v);
    let alt = k
        .map(|k| spec.alternatives[k].name.clone())
        .unwrap_or_else(|| "everyone".into());
    let shown = spec
        .alternatives
        .get(c.shown)
        .map(|x| x.name.clone())
        .unwrap_or_default();
    let title = format!("share of {shown} · {attr} of {alt} scaled");
    let [chart_area, readout] =
        Layout::vertical([Constraint::Min(6), Constraint::Length(5)]).areas(right);
    let Some(sw) = &c.sweep else {
        let msg = c
            .error
            .clone()
            .unwrap_or_else(|| "computing the curve…".into());
        Paragraph::new(msg)
            .block(panel(title, t))
            .render(right, buf);
        return;
    };
    chart(c, sw, (&title, &attr, &alt, &shown), t, chart_area, buf);
    readout_panel((c, sw, &alternatives), &shown, t, readout, buf);
}

/// The list of what can be swept (the `kept` entries), the cursor's selected.
fn lever_list(c: &Curve, (spec, kept): (&Spec, &[usize]), t: &Theme, area: Rect, buf: &mut Buffer) {
    let title = if kept.len() < c.levers.len() {
        format!("sweep {} of {}", kept.len(), c.levers.len())
    } else {
        "sweep  ↑↓".to_string()
    };
    let block = panel(title, t);
    let inner = block.inner(area);
    block.render(area, buf);
    let rows = inner.height as usize;
    let at = kept.iter().position(|&i| i == c.cursor).unwrap_or(0);
    let first = filter::first(at, kept.len(), rows);
    let lines: Vec<Line> = kept
        .iter()
        .skip(first)
        .take(rows)
        .filter_map(|&i| c.levers.get(i).map(|l| (i, l)))
        .map(|(i, &(v, k))| {
            let who = k
                .map(|k| spec.alternatives[k].name.as_str())
                .unwrap_or("(everyone)");
            let text = left(
                &format!(
                    "{}{:<10} {}",
                    if i == c.cursor { '›' } else { ' ' },
                    who,
                    variable(spec, v)
                ),
                inner.width as usize,
            );
            let style = if i == c.cursor {
                t.selected()
            } else {
                Default::default()
            };
            Line::from(Span::styled(text, style))
        })
        .collect();
    Paragraph::new(lines).render(inner, buf);
}

/// The share of the drawn alternative against the multiplier, with the base and the marker.
fn chart(
    c: &Curve,
    sw: &Sweep,
    (title, attr, alt, shown): (&str, &str, &str, &str),
    t: &Theme,
    chart_area: Rect,
    buf: &mut Buffer,
) {
    let pts: Vec<(f64, f64)> = sw
        .points
        .iter()
        .filter_map(|p| p.shares.get(c.shown).map(|s| (p.multiplier, *s)))
        .collect();
    let (from, to) = c.range();
    let lo = pts.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
    let hi = pts.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max);
    let pad = ((hi - lo) * 0.08).max(0.002);
    let (y0, y1) = ((lo - pad).max(0.0), (hi + pad).min(1.0));
    let base_pt: Vec<(f64, f64)> = pts
        .iter()
        .filter(|p| (p.0 - 1.0).abs() < 1e-9)
        .copied()
        .collect();
    let mark_pt: Vec<(f64, f64)> = pts.get(c.marker).copied().into_iter().collect();
    let series = vec![
        Series::default()
            .name(format!("{shown} share"))
            .marker(Marker::Braille)
            .graph_type(GraphType::Line)
            .style(t.bar_now())
            .data(&pts),
        Series::default()
            .name("base (×1)")
            .marker(Marker::Dot)
            .graph_type(GraphType::Scatter)
            .style(t.bar_base())
            .data(&base_pt),
        Series::default()
            .name("marker")
            .marker(Marker::Block)
            .graph_type(GraphType::Scatter)
            .style(t.band())
            .data(&mark_pt),
    ];
    let x_labels = vec![
        Span::raw(format!("×{from:.2}")),
        Span::raw("×1.00"),
        Span::raw(format!("×{to:.2}")),
    ];
    let y_labels = vec![
        Span::raw(fixed(y0, 3)),
        Span::raw(fixed((y0 + y1) / 2.0, 3)),
        Span::raw(fixed(y1, 3)),
    ];
    Chart::new(series)
        .block(panel(title, t))
        .x_axis(
            Axis::default()
                .title(format!("{attr} of {alt} × base"))
                .style(t.dim())
                .bounds([from, to])
                .labels(x_labels),
        )
        .y_axis(
            Axis::default()
                .title("share")
                .style(t.dim())
                .bounds([y0, y1])
                .labels(y_labels),
        )
        .render(chart_area, buf);
}

/// Alternatives whose shares at the marker are listed in spec order; with
/// more, the largest first.
const FEW: usize = 8;

/// The shares at the marker against the base, and the shares of the
/// alternatives the filter keeps (`kept`) at the marker.
fn readout_panel(
    (c, sw, kept): (&Curve, &Sweep, &[usize]),
    shown: &str,
    t: &Theme,
    readout: Rect,
    buf: &mut Buffer,
) {
    let mut lines = Vec::new();
    if let (Some(p), Some(b)) = (
        sw.points.get(c.marker),
        sw.points.iter().find(|p| (p.multiplier - 1.0).abs() < 1e-9),
    ) {
        let s = p.shares.get(c.shown).copied().unwrap_or(f64::NAN);
        let s0 = b.shares.get(c.shown).copied().unwrap_or(f64::NAN);
        lines.push(Line::from(vec![
            Span::styled(format!("at ×{:.2}: ", p.multiplier), t.bold()),
            Span::raw(format!("{shown} {} (base {}, ", fixed(s, 4), fixed(s0, 4))),
            Span::styled(signed(s - s0, 4), t.bold()),
            Span::raw(")"),
        ]));
        let share = |i: usize| p.shares.get(i).copied().unwrap_or(f64::NAN);
        let many = kept.len() > FEW || kept.len() < sw.alternatives.len();
        let order = if many {
            filter::largest(kept, share)
        } else {
            kept.to_vec()
        };
        let all: Vec<String> = order
            .iter()
            .take(FEW)
            .filter_map(|&i| {
                let n = sw.alternatives.get(i)?;
                Some(format!("{n} {}", fixed(share(i), 4)))
            })
            .collect();
        let head = if all.len() < kept.len() {
            format!("the {} largest of {}: ", all.len(), kept.len())
        } else if kept.len() < sw.alternatives.len() {
            format!("{} matching: ", kept.len())
        } else {
            String::new()
        };
        lines.push(Line::from(Span::styled(head + &all.join("  "), t.dim())));
    }
    lines.push(Line::from(Span::styled(
        "←→ marker · a alternative · +/- range",
        t.dim(),
    )));
    Paragraph::new(lines)
        .block(panel("at the marker", t))
        .render(readout, buf);
}
