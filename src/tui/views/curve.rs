//! The demand-curve view: one attribute of one alternative, or one
//! characteristic of everyone, multiplied over a range (the library's
//! `scenario::sweep`, run on the worker), and the share of a chosen
//! alternative drawn as a line chart with a movable marker.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Axis, Chart, Dataset as Series, GraphType, Paragraph, Widget};

use std::any::Any;

use crate::scenario::sweep::{Request, Sweep};
use crate::spec::Spec;
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Focus, Key, PerModel, Reply, View};
use crate::tui::theme::Theme;
use crate::tui::widgets::{fixed, left, panel, signed};
use crate::tui::worker::{Job, Model};

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
        let request = Request {
            attribute: variable(&model.spec, v),
            alternative: k.map(|k| model.spec.alternatives[k].name.clone()),
            from,
            to,
            steps: STEPS,
        };
        let model = model.clone();
        Some(Job::Part {
            view: TITLE,
            index,
            generation,
            work: Box::new(move || {
                crate::scenario::sweep::sweep(&model.spec, &model.fit, &model.ds, &request)
                    .map(|s| Box::new(s) as Box<dyn Any + Send>)
            }),
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

/// The view's title, also the name its jobs carry.
pub const TITLE: &str = "curve";

/// The demand curve of every opened model.
#[derive(Debug, Default)]
pub struct CurveView {
    pub models: PerModel<Curve>,
}

impl CurveView {
    /// The curve of model `index`.
    pub fn state(&self, index: usize) -> Option<&Curve> {
        self.models.get(index)
    }
}

/// The view's own keys and what the shared keys do on it.
const KEYS: &[Key] = &[
    Key::shared("↑↓  j k", "attribute to sweep"),
    Key::shared("←→  h l", "move the marker"),
    Key::shared("⇧←→  H L", "move it 5 points"),
    Key::command("a", "a", "alternative drawn"),
    Key::command("+=-", "+  -", "widen / narrow range"),
];

impl View for CurveView {
    fn title(&self) -> &'static str {
        TITLE
    }

    fn about(&self) -> &'static str {
        "share along a range"
    }

    fn keys(&self) -> &'static [Key] {
        KEYS
    }

    fn hints(&self) -> &'static str {
        "↑↓ sweep  ←→ marker  a alt.  ? help  q quit "
    }

    fn opened(&mut self, ctx: &Ctx, index: usize) -> Vec<Job> {
        let Some(l) = ctx.models.get(index) else {
            return Vec::new();
        };
        let c = Curve::new(&l.model.spec);
        self.models
            .open(index, c, |c, g| c.request(index, &l.model, g))
    }

    fn act(&mut self, ctx: &Ctx, a: Action, reply: &mut Reply) {
        let index = ctx.current;
        let (Some(c), Some(l)) = (self.models.get_mut(index), ctx.loaded()) else {
            return;
        };
        if c.on(a, l.model.spec.alternatives.len().max(1)) {
            let g = self.models.next_generation();
            if let Some(c) = self.models.get_mut(index) {
                reply.job(c.request(index, &l.model, g));
            }
        }
    }

    fn arrived(
        &mut self,
        index: usize,
        generation: u64,
        result: Result<Box<dyn Any + Send>, String>,
    ) {
        self.models
            .arrived::<Sweep>(index, result, |x, r| x.arrived(generation, r));
    }

    fn focus(&mut self, ctx: &Ctx, focus: &Focus, reply: &mut Reply) {
        let index = ctx.current;
        let (Some(c), Some(l)) = (self.models.get_mut(index), ctx.loaded()) else {
            return;
        };
        let Focus::Attribute {
            attribute,
            alternative,
        } = *focus;
        c.select(attribute, alternative);
        let g = self.models.next_generation();
        if let Some(c) = self.models.get_mut(index) {
            reply.job(c.request(index, &l.model, g));
        }
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        if let Some(c) = self.models.get(ctx.current) {
            render(c, ctx, area, buf);
        }
    }

    fn as_any(&self) -> &dyn Any {
        self
    }
}

impl Curve {
    /// Applies a key; true when the sweep must be requested again.
    fn on(&mut self, a: Action, alts: usize) -> bool {
        let n = self.levers.len();
        let before = (self.cursor, self.width);
        match a {
            Action::Up => self.cursor = self.cursor.saturating_sub(1),
            Action::Down => self.cursor = (self.cursor + 1).min(n.saturating_sub(1)),
            Action::Top => self.cursor = 0,
            Action::Bottom => self.cursor = n.saturating_sub(1),
            Action::Left => self.marker = self.marker.saturating_sub(1),
            Action::Right => self.marker = (self.marker + 1).min(STEPS - 1),
            Action::BigLeft => self.marker = self.marker.saturating_sub(5),
            Action::BigRight => self.marker = (self.marker + 5).min(STEPS - 1),
            Action::Command('a') => self.shown = (self.shown + 1) % alts,
            Action::Command('+' | '=') => self.width = (self.width + 1).min(WIDTHS.len() - 1),
            Action::Command('-') => self.width = self.width.saturating_sub(1),
            _ => {}
        }
        if (self.cursor, self.width) == before {
            return false;
        }
        if let Some(&(_, Some(k))) = self.levers.get(self.cursor) {
            if before.0 != self.cursor {
                self.shown = k;
            }
        }
        true
    }
}

fn render(c: &Curve, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let spec = &l.model.spec;
    let [list, right] =
        Layout::horizontal([Constraint::Length(26), Constraint::Min(40)]).areas(area);
    lever_list(c, spec, t, list, buf);
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
    readout_panel(c, sw, &shown, t, readout, buf);
}

/// The list of what can be swept, the cursor's entry selected.
fn lever_list(c: &Curve, spec: &Spec, t: &Theme, area: Rect, buf: &mut Buffer) {
    let block = panel("sweep  ↑↓", t);
    let inner = block.inner(area);
    block.render(area, buf);
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

/// The shares at the marker against the base.
fn readout_panel(c: &Curve, sw: &Sweep, shown: &str, t: &Theme, readout: Rect, buf: &mut Buffer) {
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
