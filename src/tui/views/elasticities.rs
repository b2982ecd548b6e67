//! The elasticities view: for one variable at a time, the matrix of the
//! changed alternative's attribute against each affected share (point or arc
//! values from the analysis), shaded by magnitude, and the marginal effects.

use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget};

use crate::report::num;
use crate::tui::app::Pending;
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, View};
use crate::tui::theme::{Theme, ELASTICITY_CUTS, GLYPHS};
use crate::tui::widgets::{left, panel, right};

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
        "elasticities, marginal effects"
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

/// The variables in spec order: attributes, then characteristics.
pub fn variables(ctx: &Ctx) -> Vec<String> {
    let Some(l) = ctx.loaded() else {
        return Vec::new();
    };
    let s = &l.model.spec;
    s.attributes
        .iter()
        .map(|a| a.name.clone())
        .chain(s.characteristics.iter().map(|c| c.name.clone()))
        .collect()
}

/// One matrix: row labels, column labels, and values by (row, column).
struct Grid {
    rows: Vec<String>,
    cols: Vec<String>,
    cells: Vec<Vec<f64>>,
}

impl Grid {
    fn new(cols: Vec<String>) -> Grid {
        Grid {
            rows: Vec::new(),
            cols,
            cells: Vec::new(),
        }
    }

    fn put(&mut self, row: &str, col: &str, v: f64) {
        let r = match self.rows.iter().position(|x| x == row) {
            Some(r) => r,
            None => {
                self.rows.push(row.to_string());
                self.cells.push(vec![f64::NAN; self.cols.len()]);
                self.rows.len() - 1
            }
        };
        if let Some(c) = self.cols.iter().position(|x| x == col) {
            self.cells[r][c] = v;
        }
    }
}

fn grid_lines(g: &Grid, corner: &str, width: usize, heat: bool, t: &Theme) -> Vec<Line<'static>> {
    let lw = (corner.chars().count() + 2).max(16);
    let cw = (width.saturating_sub(lw) / g.cols.len().max(1)).clamp(8, 14);
    let mut head = left(corner, lw);
    for c in &g.cols {
        head.push_str(&right(c, cw));
    }
    let mut lines = vec![Line::from(Span::styled(head, t.header()))];
    for (r, name) in g.rows.iter().enumerate() {
        let mut spans = vec![Span::styled(left(name, lw), t.bold())];
        for v in &g.cells[r] {
            if heat {
                let text = if v.is_finite() {
                    format!("{v:+.3}")
                } else {
                    "—".into()
                };
                let glyph = Theme::glyph(*v, &ELASTICITY_CUTS);
                spans.push(Span::raw(" "));
                spans.push(Span::styled(
                    right(&format!("{text} {glyph}"), cw - 1),
                    t.heat(*v, &ELASTICITY_CUTS),
                ));
            } else {
                spans.push(Span::raw(right(num(*v, 0).trim(), cw)));
            }
        }
        lines.push(Line::from(spans));
    }
    lines
}

fn render(view: &Elasticities, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
    let Some(l) = ctx.loaded() else {
        return;
    };
    let t = ctx.theme;
    let vars = variables(ctx);
    let Some(var) = vars.get(view.variable.min(vars.len().saturating_sub(1))) else {
        Paragraph::new("the spec has no variables").render(area, buf);
        return;
    };
    let a = match &l.analysis {
        Pending::Ready(a) => a,
        Pending::Waiting => {
            Paragraph::new("computing the elasticities…")
                .block(panel("elasticities", t))
                .render(area, buf);
            return;
        }
        Pending::Failed(e) => {
            Paragraph::new(e.clone())
                .block(panel("elasticities", t))
                .render(area, buf);
            return;
        }
    };
    let alts = l.model.spec.alternative_names();
    let is_attr = l.model.spec.attributes.iter().any(|x| &x.name == var);
    let mut el = Grid::new(alts.clone());
    for r in a.elasticities.iter().filter(|r| &r.variable == var) {
        let row = r.changed.clone().unwrap_or_else(|| var.clone());
        el.put(&row, &r.affected, if view.arc { r.arc } else { r.value });
    }
    // A 0/1 variable has no elasticity: its rows are the change in shares from 0 to 1.
    let flag = a.flag_effects.iter().any(|r| &r.variable == var);
    for r in a.flag_effects.iter().filter(|r| &r.variable == var) {
        let row = r.changed.clone().unwrap_or_else(|| var.clone());
        el.put(&row, &r.affected, r.change);
    }
    let mut me = Grid::new(alts);
    for r in a.marginal_effects.iter().filter(|r| &r.variable == var) {
        let row = r.changed.clone().unwrap_or_else(|| var.clone());
        me.put(&row, &r.alternative, r.value);
    }
    let el_h = el.rows.len() as u16 + 5;
    let [top, bottom] =
        Layout::vertical([Constraint::Length(el_h), Constraint::Min(3)]).areas(area);

    let pos = vars.iter().position(|v| v == var).unwrap_or(0) + 1;
    let kind = if flag {
        "0/1 flag".to_string()
    } else if view.arc {
        format!("arc (+{:.0}%)", a.arc_change * 100.0)
    } else {
        "point".into()
    };
    let title = format!(
        "elasticities of {var} ({pos}/{}) · {kind} · ←→ variable  a point/arc",
        vars.len()
    );
    let block = panel(title, t);
    let inner = block.inner(top);
    block.render(top, buf);
    let what = if flag && is_attr {
        format!("{var} switched from 0 to 1: change in share")
    } else if flag {
        format!("{var} switched from 0 to 1 for every decision maker: change in each share")
    } else if is_attr {
        format!("% change in share for 1% more {var}")
    } else {
        format!("% change in share for 1% more {var} of every decision maker")
    };
    let mut lines = vec![Line::from(Span::styled(what, t.dim()))];
    let corner = if is_attr {
        "changed ↓  share of →"
    } else {
        "variable ↓  share of →"
    };
    lines.extend(grid_lines(&el, corner, inner.width as usize, true, t));
    let mut legend = vec![Span::styled("|e| ", t.dim())];
    for (g, c) in GLYPHS.iter().skip(1).zip(ELASTICITY_CUTS) {
        legend.push(Span::styled(format!(" {g}"), t.heat(-c, &ELASTICITY_CUTS)));
        legend.push(Span::styled(format!("≥{c} "), t.dim()));
    }
    legend.push(Span::styled(
        " · warm: share falls · cool: share rises",
        t.dim(),
    ));
    lines.push(Line::from(legend));
    Paragraph::new(lines).render(inner, buf);

    let block = panel(
        format!("average marginal effects · change in share per unit more of {var}"),
        t,
    );
    let inner = block.inner(bottom);
    block.render(bottom, buf);
    let lines = if flag {
        vec![Line::from(Span::styled(
            format!("{var} is a 0/1 flag: its effect is the switch from 0 to 1 above, not a marginal effect"),
            t.dim(),
        ))]
    } else {
        grid_lines(&me, corner, inner.width as usize, false, t)
    };
    Paragraph::new(lines).render(inner, buf);
}
