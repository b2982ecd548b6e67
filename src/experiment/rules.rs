//! The tasks a design refuses: those a `[[forbid]]` rule matches, those where
//! one alternative dominates (is at least as good as every other on every
//! attribute under the priors' signs), and repeats of another task.

use super::file::Plan;
use super::tasks::Tasks;

/// Why a task is refused, counted over a design.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Breaches {
    /// Tasks matched by each `[[forbid]]` rule, in the file's order.
    pub forbidden: Vec<usize>,
    pub dominated: usize,
    /// Pairs of tasks that repeat each other.
    pub repeats: usize,
}

impl Breaches {
    pub fn total(&self) -> usize {
        self.forbidden.iter().sum::<usize>() + self.dominated + self.repeats
    }

    /// The breaches in words, for the error of a design that cannot avoid them.
    pub fn describe(&self, plan: &Plan) -> String {
        let mut parts = Vec::new();
        for (i, n) in self.forbidden.iter().enumerate() {
            if *n > 0 {
                parts.push(format!(
                    "{n} task(s) matched by [[forbid]] {} (`{}`)",
                    i + 1,
                    crate::error::quote(&plan.forbids[i].when)
                ));
            }
        }
        if self.dominated > 0 {
            parts.push(format!(
                "{} task(s) where one alternative dominates the others under the priors' signs",
                self.dominated
            ));
        }
        if self.repeats > 0 {
            parts.push(format!("{} pair(s) of repeated tasks", self.repeats));
        }
        parts.join(", ")
    }
}

/// The checks of one plan, with its priors' signs.
pub struct Rules<'a> {
    plan: &'a Plan,
    /// Per attribute: the sign of its prior mean (0: unknown direction).
    signs: Vec<f64>,
    labelled: bool,
}

impl<'a> Rules<'a> {
    pub fn new(plan: &'a Plan) -> Rules<'a> {
        Rules {
            plan,
            signs: plan
                .attributes
                .iter()
                .map(|a| {
                    if a.prior.mean > 0.0 {
                        1.0
                    } else if a.prior.mean < 0.0 {
                        -1.0
                    } else {
                        0.0
                    }
                })
                .collect(),
            labelled: plan.labelled(),
        }
    }

    /// The `[[forbid]]` rules task `t` matches (indices into `plan.forbids`).
    pub fn forbidden(&self, tasks: &Tasks, t: usize) -> Vec<usize> {
        if self.plan.forbids.is_empty() {
            return Vec::new();
        }
        let values = tasks.values(self.plan, t);
        let names: Vec<&str> = self.plan.columns.iter().map(|c| c.name.as_str()).collect();
        let lookup = |name: &str| {
            names
                .iter()
                .position(|n| *n == name)
                .map(|c| std::slice::from_ref(&values[c]))
        };
        self.plan
            .forbids
            .iter()
            .enumerate()
            .filter(|(_, f)| {
                f.expr
                    .eval(&lookup, 1)
                    .map(|v| v[0] != 0.0 && !v[0].is_nan())
                    .unwrap_or(false)
            })
            .map(|(i, _)| i)
            .collect()
    }

    /// Whether alternative `a` is at least as good as `b` on every attribute
    /// whatever the unknown sizes of the coefficients: on an attribute with
    /// a zero prior only equal levels count, and an attribute entering one
    /// of them only makes the two incomparable.
    fn at_least_as_good(&self, tasks: &Tasks, t: usize, a: usize, b: usize) -> bool {
        let plan = self.plan;
        for k in 0..plan.attributes.len() {
            let (ca, cb) = (plan.column_of(k, a), plan.column_of(k, b));
            match (ca, cb) {
                (None, None) => continue,
                (Some(ca), Some(cb)) => {
                    let xa = plan.columns[ca].levels[tasks.get(t, ca) as usize];
                    let xb = plan.columns[cb].levels[tasks.get(t, cb) as usize];
                    let gain = self.signs[k] * (xa - xb);
                    if gain < 0.0 || (self.signs[k] == 0.0 && xa != xb) {
                        return false;
                    }
                }
                _ => return false,
            }
        }
        true
    }

    /// Whether one alternative of task `t` is at least as good as every other.
    pub fn dominated(&self, tasks: &Tasks, t: usize) -> bool {
        let j = self.plan.alternatives.len();
        (0..j).any(|a| (0..j).all(|b| a == b || self.at_least_as_good(tasks, t, a, b)))
    }

    /// Whether tasks `s` and `t` show the same choice: the same levels, or in
    /// an unlabelled design the same profiles in another order.
    pub fn repeat(&self, tasks: &Tasks, s: usize, t: usize) -> bool {
        if tasks.task(s) == tasks.task(t) {
            return true;
        }
        if self.labelled {
            return false;
        }
        let mut ps = self.profiles(tasks, s);
        let mut pt = self.profiles(tasks, t);
        ps.sort_unstable();
        pt.sort_unstable();
        ps == pt
    }

    /// Each alternative's levels in task `t` (unlabelled designs: every attribute enters all).
    fn profiles(&self, tasks: &Tasks, t: usize) -> Vec<Vec<u8>> {
        let plan = self.plan;
        (0..plan.alternatives.len())
            .map(|j| {
                (0..plan.attributes.len())
                    .filter_map(|a| plan.column_of(a, j).map(|c| tasks.get(t, c)))
                    .collect()
            })
            .collect()
    }

    /// Task `t`'s own breaches: matched rules plus dominance (repeats aside).
    pub fn own(&self, tasks: &Tasks, t: usize) -> usize {
        self.forbidden(tasks, t).len() + self.dominated(tasks, t) as usize
    }

    /// Repeats of task `t` among the other tasks.
    pub fn repeats_of(&self, tasks: &Tasks, t: usize) -> usize {
        (0..tasks.count())
            .filter(|&s| s != t && self.repeat(tasks, s, t))
            .count()
    }

    /// Every breach of a design.
    pub fn breaches(&self, tasks: &Tasks) -> Breaches {
        let n = tasks.count();
        let mut out = Breaches {
            forbidden: vec![0; self.plan.forbids.len()],
            ..Default::default()
        };
        for t in 0..n {
            for i in self.forbidden(tasks, t) {
                out.forbidden[i] += 1;
            }
            out.dominated += self.dominated(tasks, t) as usize;
            out.repeats += (t + 1..n).filter(|&s| self.repeat(tasks, s, t)).count();
        }
        out
    }
}
