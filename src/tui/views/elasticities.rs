//! The elasticities view: for one variable at a time, the matrix of the
//! changed alternative's attribute against each affected share (point or arc
//! values from the analysis), shaded by magnitude, and the marginal effects.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::report::walk::{Matrix, Measure, Role, Variable};
use crate::tui::app::Pending;
use crate::tui::grid::{self, Shade};
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, View};
use crate::tui::theme::{Theme, ELASTICITY_CUTS};
use crate::tui::widgets::panel;

/// The elasticities view: which variable is shown, and arc rather than point values.
#[derive(Debug, Default)]
pub struct Elasticities {
    pub variable: usize,
    pub arc: bool,
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

    fn act(&mut self, ctx: &Ctx, action: Action, _reply: &mut Reply) {
        let count = variables(ctx).len().max(1);
        match action {
            Action::Right | Action::BigRight => self.variable = (self.variable + 1) % count,
            Action::Left | Action::BigLeft => self.variable = (self.variable + count - 1) % count,
            Action::Command('a') => self.arc = !self.arc,
            _ => {}
        }
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        render(self, ctx, area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
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
    let shown = match (&v.arc, view.arc) {
        (Some(arc), true) => arc,
        _ => &v.figures,
    };
    let el_h = shown.rows.labels.len() as u16 + 5;
    let [top, bottom] =
        Layout::vertical([Constraint::Length(el_h), Constraint::Min(3)]).areas(area);
    let pos = view.variable.min(n.saturating_sub(1)) + 1;
    let kind = match shown.measure {
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
    let mut lines = vec![Line::from(Span::styled(
        what(shown, &v.name, v.role),
        t.dim(),
    ))];
    let width = inner.width as usize;
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
    marginal_panel(v, t, bottom, buf);
}

/// The average marginal effects of the variable, or why a 0/1 flag has none.
fn marginal_panel(v: &Variable, t: &Theme, area: Rect, buf: &mut Buffer) {
    let var = &v.name;
    let block = panel(
        format!("average marginal effects · change in share per unit more of {var}"),
        t,
    );
    let inner = block.inner(area);
    block.render(area, buf);
    let lines = match (&v.marginal, v.flag) {
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
