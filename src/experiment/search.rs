//! The search for an efficient design: from several random level-balanced
//! starts, swaps of one column's levels between two tasks of the same block
//! (which keep every block's level balance) are kept when they lower the
//! number of refused tasks or, with none more refused, the (Bayesian)
//! D-error; sweeps over every column and pair repeat until none helps.
//! Each start has its own generator from the seed and the starts run over
//! the cores, so the design does not depend on the number of threads.

use super::file::Plan;
use super::info::{add_task, d_error_of, packed, Coding, Draws, Scratch};
use super::rules::Rules;
use super::tasks::{balanced_start, Tasks};
use crate::progress::{Phase, Sink};
use crate::rng::Rng;

/// The most sweeps of one start (a sweep tries every column and pair once).
pub const MAX_SWEEPS: usize = 60;
/// The D-error counted for a prior draw at which the information is singular.
const SINGULAR: f64 = 1e12;

/// What one start reached.
#[derive(Clone, Debug)]
pub struct Reached {
    pub tasks: Tasks,
    /// Refused tasks left (0 for a usable design).
    pub breaches: usize,
    pub d_error: f64,
    /// The random start's D-error before the search.
    pub start_d_error: f64,
    pub sweeps: usize,
    pub swaps_tried: usize,
    /// When the start finished, in seconds from the search's beginning
    /// (a timing only: no figure depends on it).
    pub seconds: f64,
}

/// Runs every start and returns them in start order.
pub fn run(plan: &Plan, draws: &Draws, sink: Sink) -> Vec<Reached> {
    let coding = Coding::new(plan);
    let rules = Rules::new(plan);
    let phase = Phase::start(sink, "searching for the design (starts)", plan.starts);
    let clock = std::time::Instant::now();
    let out = crate::design::on_ranges((0..plan.starts).map(|s| s..s + 1).collect(), |r| {
        let mut rng = Rng::new(start_seed(plan.seed, r.start));
        let tasks = balanced_start(plan, &mut rng);
        let mut reached = State::new(plan, &coding, draws, &rules, tasks).climb();
        reached.seconds = clock.elapsed().as_secs_f64();
        phase.step();
        reached
    });
    phase.finish();
    out
}

/// The generator seed of start `s`.
pub fn start_seed(seed: u64, s: usize) -> u64 {
    seed ^ (s as u64 + 1).wrapping_mul(0x9E37_79B9_7F4A_7C15)
}

/// The best of the starts: fewest refused tasks, then lowest D-error, then the first.
pub fn best(reached: &[Reached]) -> Option<&Reached> {
    reached.iter().reduce(|a, b| {
        let better = (b.breaches, b.d_error) < (a.breaches, a.d_error);
        if better {
            b
        } else {
            a
        }
    })
}

/// One start's search state: the tasks, each task's information at every
/// draw, their sums, and the refused-task counts.
struct State<'a> {
    plan: &'a Plan,
    coding: &'a Coding,
    draws: &'a Draws,
    rules: &'a Rules<'a>,
    tasks: Tasks,
    /// tasks × draws × packed(k).
    info: Vec<f64>,
    /// draws × packed(k).
    total: Vec<f64>,
    d_error: f64,
    own: Vec<usize>,
    breaches: usize,
    /// The two changed tasks' information at every draw.
    fresh: [Vec<f64>; 2],
    x: Vec<f64>,
    m: Vec<f64>,
    s: Scratch,
}

impl<'a> State<'a> {
    fn new(
        plan: &'a Plan,
        coding: &'a Coding,
        draws: &'a Draws,
        rules: &'a Rules<'a>,
        tasks: Tasks,
    ) -> State<'a> {
        let (j, k, r) = (coding.j, coding.k, draws.count());
        let p = packed(k);
        let n = tasks.count();
        let mut st = State {
            plan,
            coding,
            draws,
            rules,
            info: vec![0.0; n * r * p],
            total: vec![0.0; r * p],
            d_error: 0.0,
            own: (0..n).map(|t| rules.own(&tasks, t)).collect(),
            breaches: 0,
            fresh: [vec![0.0; r * p], vec![0.0; r * p]],
            x: vec![0.0; j * k],
            m: vec![0.0; p],
            s: Scratch::new(j, k),
            tasks,
        };
        st.breaches = rules.breaches(&st.tasks).total();
        for t in 0..n {
            st.task_info(t, 0);
            let at = t * r * p;
            st.info[at..at + r * p].copy_from_slice(&st.fresh[0]);
        }
        st.resum();
        st
    }

    /// Task `t`'s information at every draw, into `fresh[slot]`.
    fn task_info(&mut self, t: usize, slot: usize) {
        let (j, k) = (self.coding.j, self.coding.k);
        let p = packed(k);
        self.coding.rows(&self.tasks, t, &mut self.x);
        let out = &mut self.fresh[slot];
        out.iter_mut().for_each(|v| *v = 0.0);
        for r in 0..self.draws.count() {
            let beta = self.draws.row(r);
            add_task(
                &self.x,
                j,
                k,
                beta,
                &mut self.s,
                &mut out[r * p..(r + 1) * p],
            );
        }
    }

    /// Sums the tasks' information afresh (no drift from many updates).
    fn resum(&mut self) {
        let (r, p) = (self.draws.count(), packed(self.coding.k));
        self.total.iter_mut().for_each(|v| *v = 0.0);
        for t in 0..self.tasks.count() {
            let block = &self.info[t * r * p..(t + 1) * r * p];
            self.total.iter_mut().zip(block).for_each(|(a, b)| *a += b);
        }
        let mut sum = 0.0;
        for d in 0..r {
            let m = &self.total[d * p..(d + 1) * p];
            sum += d_error_of(m, self.coding.k, &mut self.s).min(SINGULAR);
        }
        self.d_error = sum / r as f64;
    }

    /// The mean D-error with tasks `a` and `b` replaced by `fresh`.
    fn d_error_with(&mut self, a: usize, b: usize) -> f64 {
        let (r, k) = (self.draws.count(), self.coding.k);
        let p = packed(k);
        let mut sum = 0.0;
        for d in 0..r {
            let span = d * p..(d + 1) * p;
            let ia = &self.info[a * r * p + d * p..a * r * p + (d + 1) * p];
            let ib = &self.info[b * r * p + d * p..b * r * p + (d + 1) * p];
            let (fa, fb) = (&self.fresh[0][span.clone()], &self.fresh[1][span.clone()]);
            for (i, m) in self.m.iter_mut().enumerate() {
                *m = self.total[d * p + i] - ia[i] - ib[i] + fa[i] + fb[i];
            }
            sum += d_error_of(&self.m, k, &mut self.s).min(SINGULAR);
        }
        sum / r as f64
    }

    /// Refused-task count of tasks `a`, `b` (own breaches and repeats involving them).
    fn local(&self, a: usize, b: usize) -> usize {
        let (ra, rb) = (
            self.rules.repeats_of(&self.tasks, a),
            self.rules.repeats_of(&self.tasks, b),
        );
        let both = self.rules.repeat(&self.tasks, a, b) as usize;
        ra + rb - both
    }

    /// Tries swapping column `c` between tasks `a` and `b`; keeps it if it helps.
    fn try_swap(&mut self, c: usize, a: usize, b: usize) -> bool {
        let before_rep = self.local(a, b);
        let before = self.own[a] + self.own[b] + before_rep;
        self.tasks.swap(c, a, b);
        let (own_a, own_b) = (
            self.rules.own(&self.tasks, a),
            self.rules.own(&self.tasks, b),
        );
        let after = own_a + own_b + self.local(a, b);
        let breaches = self.breaches + after - before;
        if breaches > self.breaches {
            self.tasks.swap(c, a, b);
            return false;
        }
        self.task_info(a, 0);
        self.task_info(b, 1);
        let d = self.d_error_with(a, b);
        if breaches < self.breaches || d < self.d_error * (1.0 - 1e-12) {
            self.keep(a, b, d, breaches, (own_a, own_b));
            return true;
        }
        self.tasks.swap(c, a, b);
        false
    }

    fn keep(&mut self, a: usize, b: usize, d: f64, breaches: usize, own: (usize, usize)) {
        let (r, p) = (self.draws.count(), packed(self.coding.k));
        for (slot, t) in [(0, a), (1, b)] {
            let old = &mut self.info[t * r * p..(t + 1) * r * p];
            for ((tot, o), f) in self
                .total
                .iter_mut()
                .zip(old.iter_mut())
                .zip(&self.fresh[slot])
            {
                *tot += f - *o;
                *o = *f;
            }
        }
        self.d_error = d;
        self.breaches = breaches;
        self.own[a] = own.0;
        self.own[b] = own.1;
    }

    /// Sweeps until one changes nothing (or `MAX_SWEEPS`).
    fn climb(mut self) -> Reached {
        // A start singular at some draw counts `SINGULAR` there: report it as infinite.
        let singular = SINGULAR / self.draws.count() as f64;
        let start_d_error = if self.d_error >= singular {
            f64::INFINITY
        } else {
            self.d_error
        };
        let per = self.plan.per_block();
        let mut sweeps = 0;
        let mut tried = 0;
        while sweeps < MAX_SWEEPS {
            sweeps += 1;
            let mut changed = false;
            for c in 0..self.tasks.columns {
                for block in 0..self.plan.blocks {
                    for a in block * per..(block + 1) * per {
                        for b in a + 1..(block + 1) * per {
                            if self.tasks.get(a, c) == self.tasks.get(b, c) {
                                continue;
                            }
                            tried += 1;
                            changed |= self.try_swap(c, a, b);
                        }
                    }
                }
            }
            self.resum();
            if !changed {
                break;
            }
        }
        Reached {
            tasks: self.tasks,
            breaches: self.breaches,
            d_error: self.d_error,
            start_d_error,
            sweeps,
            swaps_tried: tried,
            seconds: 0.0,
        }
    }
}
