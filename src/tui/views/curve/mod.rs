//! The demand-curve view: one attribute of one alternative, or one
//! characteristic of everyone, multiplied over a range (the library's
//! `scenario::sweep`, run on the worker), and the share of a chosen
//! alternative drawn as a line chart with a movable marker. `/` filters the
//! list to sweep and the alternatives `a` draws by the alternative's name.

mod draw;

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

use std::any::Any;

use crate::scenario::sweep::{Request, Sweep};
use crate::spec::Spec;
use crate::tui::filter::{self, Filter, Took};
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Focus, Key, PerModel, Reply, View};
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
            work: Box::new(move |_| {
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
pub(crate) fn variable(spec: &Spec, v: usize) -> String {
    let na = spec.attributes.len();
    if v < na {
        spec.attributes[v].name.clone()
    } else {
        spec.characteristics[v - na].name.clone()
    }
}

/// The view's title, also the name its jobs carry.
pub const TITLE: &str = "curve";

/// The demand curve of every opened model, and the filter of its lists.
#[derive(Debug, Default)]
pub struct CurveView {
    pub models: PerModel<Curve>,
    pub filter: Filter,
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

    fn typing(&self) -> bool {
        self.filter.typing()
    }

    fn act(&mut self, ctx: &Ctx, a: Action, reply: &mut Reply) {
        let index = ctx.current;
        let took = self.filter.on(a);
        let (Some(c), Some(l)) = (self.models.get_mut(index), ctx.loaded()) else {
            return;
        };
        let spec = &l.model.spec;
        let kept = Kept {
            levers: self.filter.kept(lever_names(&c.levers, spec)),
            alternatives: self.filter.kept(spec.alternative_names()),
            page: self.filter.page(),
        };
        let again = match took {
            Took::Changed => c.settle(&kept),
            Took::Kept => false,
            Took::Not => c.on(a, &kept),
        };
        if again {
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
            draw::render(self, c, ctx, area, buf);
        }
    }

    fn as_any(&self) -> &dyn Any {
        self
    }
}

/// What the filter keeps: levers and alternatives by position, and a page.
struct Kept {
    levers: Vec<usize>,
    alternatives: Vec<usize>,
    page: usize,
}

/// The name of each lever's alternative ("(everyone)" for a characteristic).
pub(crate) fn lever_names<'a>(levers: &[(usize, Option<usize>)], spec: &'a Spec) -> Vec<&'a str> {
    levers
        .iter()
        .map(|&(_, k)| match k.and_then(|k| spec.alternatives.get(k)) {
            Some(a) => a.name.as_str(),
            None => "(everyone)",
        })
        .collect()
}

impl Curve {
    /// The filter changed: the cursor and the alternative drawn move to kept
    /// ones; true when the sweep must be requested again.
    fn settle(&mut self, kept: &Kept) -> bool {
        let before = self.cursor;
        self.cursor = filter::settle(self.cursor, &kept.levers);
        self.shown = filter::settle(self.shown, &kept.alternatives);
        if before == self.cursor {
            return false;
        }
        if let Some(&(_, Some(k))) = self.levers.get(self.cursor) {
            self.shown = k;
        }
        true
    }

    /// Applies a key; true when the sweep must be requested again.
    fn on(&mut self, a: Action, kept: &Kept) -> bool {
        let before = (self.cursor, self.width);
        if let Some(to) = filter::cursor(self.cursor, &kept.levers, kept.page, a) {
            self.cursor = to;
        }
        match a {
            Action::Left => self.marker = self.marker.saturating_sub(1),
            Action::Right => self.marker = (self.marker + 1).min(STEPS - 1),
            Action::BigLeft => self.marker = self.marker.saturating_sub(5),
            Action::BigRight => self.marker = (self.marker + 5).min(STEPS - 1),
            Action::Command('a') => self.shown = next(self.shown, &kept.alternatives),
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

/// The kept alternative after `at` (the first after the last).
fn next(at: usize, kept: &[usize]) -> usize {
    kept.iter()
        .find(|&&k| k > at)
        .or(kept.first())
        .copied()
        .unwrap_or(at)
}
