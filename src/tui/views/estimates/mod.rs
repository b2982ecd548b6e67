//! The estimates view: the parameter table grouped by spec term, with a
//! strip per row that shows where the interval lies against zero, the
//! choice of classical or robust errors, sorting, and the value ratios; in
//! willingness-to-pay space each row's unit, for correlated tastes a grid
//! of their correlations, and for latent classes the classes side by side.

mod classes;
mod draw;
mod tastes;

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

use crate::analysis::random::{log_median, Figure};
use crate::estimate::{Fit, ParameterRow};
use crate::report::walk::{Space, MEAN_OF_LOG};
use crate::spec::Spec;
use crate::tui::keys::Action;
use crate::tui::part::{Ctx, Key, Reply, View};

#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Sort {
    #[default]
    Spec,
    LargestT,
    Name,
}

impl Sort {
    pub fn label(self) -> &'static str {
        match self {
            Sort::Spec => "spec order",
            Sort::LargestT => "largest |t| first",
            Sort::Name => "by name",
        }
    }
}

#[derive(Clone, Debug)]
pub struct State {
    pub cursor: usize,
    /// `None`: the errors the fit's inference uses; else robust (true) or classical.
    pub robust: Option<bool>,
    pub sort: Sort,
    pub grouped: bool,
    /// A model with latent classes: one row per parameter instead of the
    /// classes side by side.
    pub per_parameter: bool,
}

impl Default for State {
    fn default() -> Self {
        State {
            cursor: 0,
            robust: None,
            sort: Sort::Spec,
            grouped: true,
            per_parameter: false,
        }
    }
}

/// A parameter row as shown: the chosen standard error and what follows from it.
#[derive(Clone, Debug, PartialEq)]
pub struct Shown {
    pub name: String,
    pub term: String,
    pub estimate: f64,
    pub std_error: f64,
    pub t: f64,
    pub p: f64,
    pub low: f64,
    pub high: f64,
    pub fixed: bool,
    /// The value t and p test against (1 for a nest scale).
    pub null: f64,
    /// Where the value is the mean of the logarithm of a (negative-)lognormal
    /// coefficient: the coefficient's median across decision makers ± s.e.
    pub median: Option<Figure>,
    /// In willingness-to-pay space: "price scale" or the unit of a value.
    pub unit: Option<String>,
}

/// Whether the fit's own t, p and intervals use robust errors.
pub fn fit_robust(fit: &Fit) -> bool {
    fit.stats.inference == "robust"
}

/// The row under the chosen errors, as the library computes it (`ParameterRow::inference`).
pub fn shown(r: &ParameterRow, robust: bool, fit_is_robust: bool) -> Shown {
    let inf = r.inference(robust);
    let se = inf.std_error;
    let (t, p, low, high) = if robust == fit_is_robust {
        (r.t_stat, r.p_value, r.ci_low, r.ci_high)
    } else {
        (inf.t_stat, inf.p_value, inf.ci_low, inf.ci_high)
    };
    Shown {
        name: r.name.clone(),
        term: r.term.clone(),
        estimate: r.estimate,
        std_error: se,
        t,
        p,
        low,
        high,
        fixed: r.fixed,
        null: r.null,
        median: None,
        unit: None,
    }
}

/// The rows in display order: (group heading, row) where a heading starts a group.
pub fn ordered(spec: &Spec, fit: &Fit, st: &State) -> Vec<(Option<String>, Shown)> {
    let robust = st.robust.unwrap_or_else(|| fit_robust(fit));
    let logs = fit.family.random_coefficients();
    let space = Space::of(spec, fit);
    let rows: Vec<Shown> = fit
        .parameters
        .iter()
        .enumerate()
        .map(|(k, r)| {
            let mut s = shown(r, robust, fit_robust(fit));
            let log = logs.iter().find(|t| t.location == k);
            s.median = log.and_then(|t| log_median(t, s.estimate, s.std_error));
            if s.median.is_some() {
                s.name = format!("{} ({MEAN_OF_LOG})", s.name);
            }
            s.unit = space.as_ref().and_then(|w| w.unit(k)).map(str::to_string);
            s
        })
        .collect();
    let mut terms: Vec<String> = Vec::new();
    for r in &rows {
        if st.grouped && !terms.contains(&r.term) {
            terms.push(r.term.clone());
        }
    }
    if !st.grouped {
        terms.push(String::new());
    }
    let mut out = Vec::new();
    for term in terms {
        let mut group: Vec<Shown> = rows
            .iter()
            .filter(|r| !st.grouped || r.term == term)
            .cloned()
            .collect();
        match st.sort {
            Sort::Spec => {}
            Sort::LargestT => group.sort_by(|a, b| b.t.abs().total_cmp(&a.t.abs())),
            Sort::Name => group.sort_by(|a, b| a.name.cmp(&b.name)),
        }
        for (i, r) in group.into_iter().enumerate() {
            let head = (st.grouped && i == 0).then(|| term.clone());
            out.push((head, r));
        }
    }
    out
}

/// The estimates view: the cursor, the errors shown, the order and grouping.
#[derive(Debug, Default)]
pub struct Estimates {
    pub state: State,
}

/// The view's own keys and what the shared keys do on it.
const KEYS: &[Key] = &[
    Key::command("e", "e", "Hessian/clustered s.e."),
    Key::command("s", "s", "sort: spec, |t|, name"),
    Key::command("t", "t", "group by spec term"),
    Key::command("c", "c", "classes side by side / list"),
];

impl View for Estimates {
    fn title(&self) -> &'static str {
        "estimates"
    }

    fn about(&self) -> &'static str {
        "parameters, ratios"
    }

    fn keys(&self) -> &'static [Key] {
        KEYS
    }

    fn hints(&self) -> &'static str {
        "e errors  s sort  t terms  ? help  q quit "
    }

    fn act(&mut self, ctx: &Ctx, a: Action, reply: &mut Reply) {
        /// Rows a page key moves the cursor.
        const PAGE: usize = 10;
        let Some(l) = ctx.loaded() else {
            return;
        };
        let n = side_by_side(&self.state, l).map_or(l.model.fit.parameters.len(), classes::rows);
        let robust_now = fit_robust(&l.model.fit);
        let st = &mut self.state;
        match a {
            Action::Up
            | Action::Down
            | Action::PageUp
            | Action::PageDown
            | Action::Top
            | Action::Bottom => {
                st.cursor = crate::tui::filter::step(st.cursor, n, PAGE, a).unwrap_or(st.cursor)
            }
            Action::Command('e') => st.robust = Some(!st.robust.unwrap_or(robust_now)),
            Action::Command('s') => {
                st.sort = match st.sort {
                    Sort::Spec => Sort::LargestT,
                    Sort::LargestT => Sort::Name,
                    Sort::Name => Sort::Spec,
                }
            }
            Action::Command('t') => st.grouped = !st.grouped,
            Action::Command('c') => {
                if l.walk.as_ref().is_some_and(|w| w.classes.is_some()) {
                    st.per_parameter = !st.per_parameter;
                } else if crate::report::walk::class_count(&l.model.spec) > 1 {
                    reply.say(
                        crate::tui::part::Tone::Info,
                        "the classes stand side by side once the analysis is in",
                    );
                } else {
                    reply.say(
                        crate::tui::part::Tone::Info,
                        "no latent classes to set side by side",
                    );
                }
            }
            _ => {}
        }
    }

    fn render(&self, ctx: &Ctx, area: Rect, buf: &mut Buffer) {
        draw::render(&self.state, ctx, area, buf);
    }

    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
}

/// The walk's latent classes when the view sets them side by side.
pub fn side_by_side<'a>(
    st: &State,
    l: &'a crate::tui::app::Loaded,
) -> Option<&'a crate::report::walk::LatentClasses> {
    if st.per_parameter {
        return None;
    }
    l.walk.as_ref()?.classes.as_ref()
}
