//! The demand-curve view: one attribute of one alternative, or one
//! characteristic of everyone, multiplied over a range (the library's
//! `scenario::sweep`, run on the worker), and the share of a chosen
//! alternative drawn as a line chart with a movable marker.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Axis, Chart, Dataset as Series, GraphType, Paragraph, Widget};

use super::app::{App, Model};
use super::keys::Action;
use super::widgets::{fixed, left, panel, signed};
use super::worker::Job;
use crate::scenario::sweep::{Request, Sweep};
use crate::spec::Spec;

/// Half-widths of the multiplier range around 1.
pub const WIDTHS: [f64; 4] = [0.25, 0.5, 0.75, 0.9];
/// Points on the curve.
pub const STEPS: usize = 21;

#[derive(Clone, Debug)]
pub struct Curve {
    /// What can be swept: (variable, alternative), the variable an attribute
    /// index, or the number of attributes plus a characteristic index with no
    /// alternative (a characteristic changes for everyone).
    pub levers: Vec<(usize, Option<usize>)>,
    pub cursor: usize,
    /// The alternative whose share is drawn.
    pub shown: usize,
    pub width: usize,
    pub marker: usize,
    pub sweep: Option<Sweep>,
    pub error: Option<String>,
    pub generation: u64,
}

impl Curve {
    pub fn new(spec: &Spec) -> Curve {
        let mut levers = Vec::new();
        for k in 0..spec.alternatives.len() {
            for (a, attr) in spec.attributes.iter().enumerate() {
                if attr.sources.get(k).is_some_and(|s| s.is_some()) {
                    levers.push((a, Some(k)));
                }
            }
        }
        let na = spec.attributes.len();
        levers.extend((0..spec.characteristics.len()).map(|c| (na + c, None)));
        Curve {
            shown: levers.first().and_then(|l| l.1).unwrap_or(0),
            levers,
            cursor: 0,
            width: 1,
            marker: STEPS / 2,
            sweep: None,
            error: None,
            generation: 0,
        }
    }

    /// Points the curve at an attribute of an alternative, drawing that alternative's share.
    pub fn select(&mut self, attribute: usize, alternative: usize) {
        if let Some(i) = self
            .levers
            .iter()
            .position(|&l| l == (attribute, Some(alternative)))
        {
            self.cursor = i;
            self.shown = alternative;
        }
    }

    pub fn range(&self) -> (f64, f64) {
        let w = WIDTHS[self.width.min(WIDTHS.len() - 1)];
        (1.0 - w, 1.0 + w)
    }

    /// Asks the worker for the sweep of the selected lever.
    pub fn request(&mut self, index: usize, model: &Model, generation: u64) -> Option<Job> {
        let &(v, k) = self.levers.get(self.cursor)?;
        let (from, to) = self.range();
        self.generation = generation;
        self.sweep = None;
        self.error = None;
        Some(Job::Curve {
            index,
            generation,
            model: model.clone(),
            request: Request {
                attribute: variable(&model.spec, v),
                alternative: k.map(|k| model.spec.alternatives[k].name.clone()),
                from,
                to,
                steps: STEPS,
            },
        })
    }

    pub fn arrived(&mut self, generation: u64, result: Result<Box<Sweep>, String>) {
        if generation == self.generation {
            match result {
                Ok(s) => self.sweep = Some(*s),
                Err(e) => self.error = Some(e),
            }
        }
    }
}

/// The name of a lever's variable: an attribute, or a characteristic after them.
fn variable(spec: &Spec, v: usize) -> String {
    let na = spec.attributes.len();
    if v < na {
        spec.attributes[v].name.clone()
    } else {
        spec.characteristics[v - na].name.clone()
    }
}

pub fn on(app: &mut App, a: Action) -> Vec<Job> {
    let index = app.current;
    let g = app.next_generation();
    let Some(l) = app.models.get_mut(index) else {
        return Vec::new();
    };
    let c = &mut l.curve;
    let n = c.levers.len();
    let alts = l.model.spec.alternatives.len().max(1);
    let before = (c.cursor, c.width);
    match a {
        Action::Up => c.cursor = c.cursor.saturating_sub(1),
        Action::Down => c.cursor = (c.cursor + 1).min(n.saturating_sub(1)),
        Action::Top => c.cursor = 0,
        Action::Bottom => c.cursor = n.saturating_sub(1),
        Action::Left => c.marker = c.marker.saturating_sub(1),
        Action::Right => c.marker = (c.marker + 1).min(STEPS - 1),
        Action::BigLeft => c.marker = c.marker.saturating_sub(5),
        Action::BigRight => c.marker = (c.marker + 5).min(STEPS - 1),
        Action::Alternate => c.shown = (c.shown + 1) % alts,
        Action::Wider => c.width = (c.width + 1).min(WIDTHS.len() - 1),
        Action::Narrower => c.width = c.width.saturating_sub(1),
        _ => {}
    }
    if (c.cursor, c.width) != before {
        if let Some(&(_, Some(k))) = c.levers.get(c.cursor) {
            if before.0 != c.cursor {
                c.shown = k;
            }
        }
        return c.request(index, &l.model, g).into_iter().collect();
    }
    Vec::new()
}

pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let Some(l) = app.loaded() else {
        return;
    };
    let t = &app.theme;
    let c = &l.curve;
    let spec = &l.model.spec;
    let [list, right] =
        Layout::horizontal([Constraint::Length(26), Constraint::Min(40)]).areas(area);
    let block = panel("sweep  ↑↓", t);
    let inner = block.inner(list);
    block.render(list, buf);
    let rows = inner.height as usize;
    let first = c.cursor.saturating_sub(rows.saturating_sub(1));
    let lines: Vec<Line> = c
        .levers
        .iter()
        .enumerate()
        .skip(first)
        .take(rows)
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
        let all: Vec<String> = sw
            .alternatives
            .iter()
            .zip(&p.shares)
            .map(|(n, v)| format!("{n} {}", fixed(*v, 4)))
            .collect();
        lines.push(Line::from(Span::styled(all.join("  "), t.dim())));
    }
    lines.push(Line::from(Span::styled(
        "←→ marker · a alternative · +/- range",
        t.dim(),
    )));
    Paragraph::new(lines)
        .block(panel("at the marker", t))
        .render(readout, buf);
}
