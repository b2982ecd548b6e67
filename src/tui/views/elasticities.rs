//! The elasticities view: for one variable at a time, the matrix of the
//! changed alternative's attribute against each affected share (point or arc
//! values from the analysis), shaded by magnitude, and the marginal effects.
//! With many alternatives the matrices show the largest by share (rows
//! narrowed by the filter, scrolled with ↑↓ PgUp PgDn).

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::report::walk::{Matrix, Measure, Role, Variable};
use crate::tui::app::Pending;
use crate::tui::filter::{Filter, Took, MOST};
use crate::tui::grid::{self, Shade};
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, View};
use crate::tui::theme::{Theme, ELASTICITY_CUTS};
use crate::tui::widgets::panel;

/// The elasticities view: which variable is shown, and arc rather than point values.
/// With many alternatives: the filter of the rows and the first row shown.
#[derive(Debug, Default)]
pub struct Elasticities {
    pub variable: usize,
    pub arc: bool,
    pub filter: Filter,
    pub offset: usize,
}

/// The view's own keys and what the shared keys do on it.
const KEYS: &[Key] = &[
    Key::shared("←→  h l", "previous / next variable"),
    Key::command("a", "a", "point or arc values"),
];

impl View for Elasticities {
    fn title(&self) -> &'static str {
        "elasticities"
    }

    fn about(&self) -> &'static str {
        "share responses"
    }

    fn keys(&self) -> &'static [Key] {
        KEYS
    }

    fn hints(&self) -> &'static str {
        "←→ variable  a arc  ? help  q quit "
    }

    fn typing(&self) -> bool {
        self.filter.typing()
    }

    fn act(&mut self, ctx: &Ctx, action: Action, _reply: &mut Reply) {
        match self.filter.on(action) {
            Took::Changed => self.offset = 0,
            Took::Kept => {}
            Took::Not => self.moved(ctx, action),
        }
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        render(self, ctx, area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

impl Elasticities {
    fn moved(&mut self, ctx: &Ctx, action: Action) {
        let count = variables(ctx).len().max(1);
        match action {
            Action::Right | Action::BigRight => self.variable = (self.variable + 1) % count,
            Action::Left | Action::BigLeft => self.variable = (self.variable + count - 1) % count,
            Action::Command('a') => self.arc = !self.arc,
            _ => {
                let rows = self.rows(ctx);
                self.offset = self.filter.scroll(self.offset, rows, action);
            }
        }
    }

    /// The rows the filter keeps of the matrix shown.
    fn rows(&self, ctx: &Ctx) -> usize {
        let Some(w) = ctx.loaded().and_then(|l| l.walk.as_ref()) else {
            return 0;
        };
        let n = w.variables.len();
        w.variables
            .get(self.variable.min(n.saturating_sub(1)))
            .map_or(0, |v| {
                self.filter.kept(&shown(v, self.arc).rows.labels).len()
            })
    }
}

/// The matrix shown: arc values when asked for and there are some.
fn shown(v: &Variable, arc: bool) -> &Matrix {
    match (&v.arc, arc) {
        (Some(a), true) => a,
        _ => &v.figures,
    }
}

/// The variables with figures, in spec order: attributes, then characteristics.
pub fn variables(ctx: &Ctx) -> Vec<String> {
    ctx.loaded()
        .and_then(|l| l.walk.as_ref())
        .map(|w| w.variables.iter().map(|v| v.name.clone()).collect())
        .unwrap_or_default()
}

/// What the cells of a matrix of `var` are, in words.
fn what(m: &Matrix, var: &str, role: Role) -> String {
    let whose = match role {
        Role::Attribute => String::new(),
        Role::Characteristic => " of every decision maker".into(),
    };
    match m.measure {
        Measure::PointElasticity => format!("% change in share for 1% more {var}{whose}"),
        Measure::ArcElasticity { change } => format!(
            "% change in share for {:+.0}% {var}{whose}, simulated again",
            change * 100.0
        ),
        Measure::FlagSwitch => format!("change in share when {var}{whose} switches from 0 to 1"),
        _ => format!("change in share per unit more of {var}{whose}"),
    }
}

fn render(view: &Elasticities, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let walk = match (&l.analysis, &l.walk) {
        (_, Some(w)) => w,
        (Pending::Failed(e), None) => {
            Paragraph::new(e.clone())
                .block(panel("elasticities", t))
                .render(area, buf);
            return;
        }
        _ => {
            Paragraph::new(l.analysing())
                .block(panel("elasticities", t))
                .render(area, buf);
            return;
        }
    };
    let n = walk.variables.len();
    let Some(v) = walk.variables.get(view.variable.min(n.saturating_sub(1))) else {
        Paragraph::new("the spec has no variables").render(area, buf);
        return;
    };
    let m = shown(v, view.arc);
    let names = l.model.spec.alternative_names();
    let kept = view.filter.kept(&names).len();
    let area = view.filter.split(area, kept, names.len(), t, buf);
    // Rows that fit beside the marginal effects' panel (at least 3 lines).
    let room = (area.height as usize)
        .saturating_sub(6 + 1 + 3)
        .clamp(1, MOST);
    let share = grid::share_of(l);
    let width = area.width.saturating_sub(4) as usize;
    let cols = grid::columns_fit(m, width);
    let picked = grid::pick(m, &share, &view.filter, view.offset, (room, cols));
    view.filter.seen(picked.matrix.rows.labels.len());
    let note = picked.note("largest shares first");
    let el_h = picked.matrix.rows.labels.len() as u16 + 5 + u16::from(note.is_some());
    let [top, bottom] =
        Layout::vertical([Constraint::Length(el_h), Constraint::Min(3)]).areas(area);
    let pos = view.variable.min(n.saturating_sub(1)) + 1;
    let kind = match m.measure {
        Measure::FlagSwitch => "0/1 flag".to_string(),
        Measure::ArcElasticity { change } => format!("arc (+{:.0}%)", change * 100.0),
        _ => "point".into(),
    };
    let title = format!(
        "elasticities of {} ({pos}/{n}) · {kind} · ←→ variable  a point/arc",
        v.name
    );
    let block = panel(title, t);
    let inner = block.inner(top);
    block.render(top, buf);
    let mut lines = vec![Line::from(Span::styled(what(m, &v.name, v.role), t.dim()))];
    if let Some(note) = note {
        lines.push(Line::from(Span::styled(note, t.dim())));
    }
    let shown = &picked.matrix;
    lines.extend(grid::lines(
        shown,
        Shade::Signed(&ELASTICITY_CUTS),
        width,
        t,
    ));
    let mut legend = grid::legend("|e|", &ELASTICITY_CUTS, true, t);
    legend.push(Span::styled(
        " · warm: share falls · cool: share rises",
        t.dim(),
    ));
    lines.push(Line::from(legend));
    Paragraph::new(lines).render(inner, buf);
    let marginal = v.marginal.as_ref().map(|m| {
        let rows = (bottom.height as usize).saturating_sub(3).clamp(1, MOST);
        let cols = grid::columns_fit(m, width);
        grid::pick(m, &share, &view.filter, view.offset, (rows, cols)).matrix
    });
    marginal_panel(v, marginal.as_ref(), t, bottom, buf);
}

/// The average marginal effects of the variable, or why a 0/1 flag has none.
fn marginal_panel(v: &Variable, m: Option<&Matrix>, t: &Theme, area: Rect, buf: &mut Buffer) {
    let var = &v.name;
    let block = panel(
        format!("average marginal effects · change in share per unit more of {var}"),
        t,
    );
    let inner = block.inner(area);
    block.render(area, buf);
    let lines = match (m, v.flag) {
        (_, true) => vec![Line::from(Span::styled(
            format!("{var} is a 0/1 flag: its effect is the switch from 0 to 1 above, not a marginal effect"),
            t.dim(),
        ))],
        (Some(m), false) => grid::lines(m, Shade::Plain, inner.width as usize, t),
        (None, false) => vec![Line::from(Span::styled(
            "no marginal effects for this variable",
            t.dim(),
        ))],
    };
    Paragraph::new(lines).render(inner, buf);
}
