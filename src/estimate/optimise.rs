//! Maximises the log-likelihood. A family with an analytic Hessian is first
//! given Newton steps from the start; otherwise (or when those fail) argmin's
//! BFGS with a More-Thuente line search (started from the inverse of the
//! Hessian where it is positive definite, else of the outer product of the
//! scores), then Newton steps until the Newton decrement g' (-H)^-1 g falls
//! below the tolerance. The Hessian is the family's analytic one where it has
//! it, else central differences of its analytic gradient (`model::hessian`).

use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;

use argmin::core::{CostFunction, Executor, Gradient, State};
use argmin::solver::linesearch::MoreThuenteLineSearch;
use argmin::solver::quasinewton::BFGS;
use nalgebra::DMatrix;

use super::newton::newton;
use crate::design::Design;
use crate::model::{Eval, Family};

/// Tolerance on the Newton decrement g' (-H)^-1 g (log-likelihood units).
pub const NEWTON_TOLERANCE: f64 = 1e-10;

/// The phase `approach` reports: a quasi-Newton search for a start.
pub const APPROACH: &str = "quasi-Newton (start)";

/// The most passes over the data the quasi-Newton phase (with its line
/// searches) may take: past it the phase stops with a named failure rather than
/// searching for ever (huge start values can leave a line search without a
/// finite point to stop at).
pub const MAX_SEARCH_PASSES: usize = 5000;

/// A progress report during a fit.
#[derive(Clone, Copy, Debug)]
pub struct Step {
    pub phase: &'static str,
    pub iteration: usize,
    pub log_likelihood: f64,
    pub gradient_norm: f64,
}

pub type Progress<'a> = &'a (dyn Fn(Step) + Sync);

#[derive(Clone, Debug)]
pub struct Outcome {
    /// All K parameters (fixed ones at their value).
    pub beta: Vec<f64>,
    pub ll: f64,
    pub bfgs_iterations: usize,
    pub newton_steps: usize,
    pub passes: usize,
    pub criterion: f64,
    pub gradient_norm: f64,
    pub converged: bool,
    pub note: Option<String>,
    /// Why the search was restarted from the default start, when it was.
    pub restart: Option<String>,
    /// The Hessian (K x K) the search ended with, which the covariance reuses:
    /// an analytic one at the estimates, or the differenced one that confirmed
    /// convergence, at the estimates up to the last tiny Newton step.
    pub hessian: Option<Vec<f64>>,
    /// How the family's own starts fared, when it ran them.
    pub starts: Option<crate::model::Starts>,
}

struct Objective<'a> {
    d: &'a Design,
    family: &'a dyn Family,
    free: &'a [usize],
    template: Vec<f64>,
    scale: f64,
    cache: Mutex<Option<(Vec<f64>, Eval)>>,
    /// The best point evaluated so far (log-likelihood, free parameters), kept
    /// so that a search that stops on an error leaves no progress behind.
    best: Mutex<Option<(f64, Vec<f64>)>>,
    passes: &'a AtomicUsize,
    progress: Progress<'a>,
    iteration: AtomicUsize,
    /// The phase its progress reports name.
    phase: &'static str,
}

impl<'a> Objective<'a> {
    fn new(
        d: &'a Design,
        family: &'a dyn Family,
        free: &'a [usize],
        start: &[f64],
        passes: &'a AtomicUsize,
        progress: Progress<'a>,
    ) -> Objective<'a> {
        Objective {
            d,
            family,
            free,
            template: start.to_vec(),
            scale: 1.0 / d.total_weight().max(1e-300),
            cache: Mutex::new(None),
            best: Mutex::new(None),
            passes,
            progress,
            iteration: AtomicUsize::new(0),
            phase: "quasi-Newton",
        }
    }

    fn full(&self, p: &[f64]) -> Vec<f64> {
        let mut b = self.template.clone();
        for (k, &i) in self.free.iter().enumerate() {
            b[i] = p[k];
        }
        b
    }
    /// A named failure once the search has used `MAX_SEARCH_PASSES` passes,
    /// or is asked for a point that is not finite.
    fn within_budget(&self, p: &[f64]) -> Result<(), argmin::core::Error> {
        if self.passes.load(Ordering::Relaxed) >= MAX_SEARCH_PASSES {
            return Err(argmin::core::Error::msg(format!(
                "the search used {MAX_SEARCH_PASSES} passes over the data without settling"
            )));
        }
        if p.iter().any(|v| !v.is_finite()) {
            return Err(argmin::core::Error::msg(
                "the line search stepped to parameter values that are not finite",
            ));
        }
        Ok(())
    }
    fn eval(&self, p: &[f64]) -> Eval {
        if let Ok(guard) = self.cache.lock() {
            if let Some((q, e)) = guard.as_ref() {
                if q.as_slice() == p {
                    return e.clone();
                }
            }
        }
        self.passes.fetch_add(1, Ordering::Relaxed);
        let e = self.family.evaluate(self.d, &self.full(p), true, false);
        let gn = self
            .free
            .iter()
            .map(|&i| e.grad[i] * e.grad[i])
            .sum::<f64>()
            .sqrt();
        (self.progress)(Step {
            phase: self.phase,
            iteration: self.iteration.load(Ordering::Relaxed),
            log_likelihood: e.ll,
            gradient_norm: gn,
        });
        if let Ok(mut guard) = self.cache.lock() {
            *guard = Some((p.to_vec(), e.clone()));
        }
        if let Ok(mut best) = self.best.lock() {
            if e.ll.is_finite() && best.as_ref().is_none_or(|b| e.ll > b.0) {
                *best = Some((e.ll, p.to_vec()));
            }
        }
        e
    }
}

/// The problem as argmin sees it: minimise -log L / total weight over the free parameters.
struct Negated<'a, 'b>(&'b Objective<'a>);

impl CostFunction for Negated<'_, '_> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, p: &Self::Param) -> Result<f64, argmin::core::Error> {
        self.0.within_budget(p)?;
        let ll = self.0.eval(p).ll;
        // Outside the model's domain (a nest scale below 0, overflow): a large
        // but finite cost, so that the line search backs off instead of failing.
        Ok(if ll.is_finite() {
            -ll * self.0.scale
        } else {
            1e30
        })
    }
}

impl Gradient for Negated<'_, '_> {
    type Param = Vec<f64>;
    type Gradient = Vec<f64>;
    fn gradient(&self, p: &Self::Param) -> Result<Vec<f64>, argmin::core::Error> {
        let o = self.0;
        o.within_budget(p)?;
        o.iteration.fetch_add(1, Ordering::Relaxed);
        let e = o.eval(p);
        let g: Vec<f64> = o.free.iter().map(|&i| -e.grad[i] * o.scale).collect();
        if g.iter().any(|v| !v.is_finite()) {
            return Err(argmin::core::Error::msg(
                "the gradient is not finite at the point tried (are the start or fixed values of a usable size?)",
            ));
        }
        Ok(g)
    }
}

/// The free block of the negative Hessian.
/// The negative Hessian (free block, log-likelihood units) that a
/// quasi-Newton inverse Hessian of the scaled objective stands for, when it
/// is positive definite.
fn learnt(inv: Option<&[Vec<f64>]>, scale: f64) -> Option<DMatrix<f64>> {
    let inv = inv?;
    let m = inv.len();
    if m == 0
        || inv
            .iter()
            .any(|r| r.len() != m || r.iter().any(|v| !v.is_finite()))
    {
        return None;
    }
    let sym = DMatrix::from_fn(m, m, |a, b| 0.5 * (inv[a][b] + inv[b][a]));
    let h = sym.cholesky()?.inverse() / scale;
    h.iter().all(|v| v.is_finite()).then_some(h)
}

pub fn negative_free_hessian(hess: &[f64], k: usize, free: &[usize]) -> DMatrix<f64> {
    let m = free.len();
    DMatrix::from_fn(m, m, |a, b| -hess[free[a] * k + free[b]])
}

/// The starting inverse Hessian for BFGS (of -log L / total weight): the
/// inverse of the Hessian when it is positive definite, else its inverse diagonal.
fn initial_inverse(h0: &DMatrix<f64>) -> Vec<Vec<f64>> {
    let m = h0.nrows();
    match h0.clone().cholesky() {
        Some(ch) => {
            let inv = ch.inverse();
            (0..m)
                .map(|a| (0..m).map(|b| inv[(a, b)]).collect())
                .collect()
        }
        None => (0..m)
            .map(|a| {
                (0..m)
                    .map(|b| {
                        if a == b {
                            1.0 / h0[(a, a)].abs().max(1e-8)
                        } else {
                            0.0
                        }
                    })
                    .collect()
            })
            .collect(),
    }
}

/// What the quasi-Newton phase ends with: the best point, the iterations, a
/// note when it stopped early, and its last inverse Hessian (of the scaled
/// objective) when it finished normally.
type QuasiNewton = (Vec<f64>, usize, Option<String>, Option<Vec<Vec<f64>>>);

/// The quasi-Newton phase from `beta`.
fn quasi_newton(objective: &Objective, beta: Vec<f64>, inv0: Vec<Vec<f64>>) -> QuasiNewton {
    let x0: Vec<f64> = objective.free.iter().map(|&i| beta[i]).collect();
    let solver = BFGS::new(MoreThuenteLineSearch::new())
        .with_tolerance_grad(1e-7)
        .and_then(|s| s.with_tolerance_cost(1e-13));
    let solver = match solver {
        Ok(s) => s,
        Err(e) => {
            return (
                beta,
                0,
                Some(format!("quasi-Newton setup failed: {e}")),
                None,
            )
        }
    };
    let run = Executor::new(Negated(objective), solver)
        .configure(|state| state.param(x0).inv_hessian(inv0).max_iters(300))
        .run();
    match run {
        Ok(mut res) => {
            let iterations = res.state().get_iter() as usize;
            let inv = res.state.take_inv_hessian();
            match res.state.take_best_param() {
                Some(best) if best.iter().all(|v| v.is_finite()) => {
                    (objective.full(&best), iterations, None, inv)
                }
                _ => (beta, iterations, None, None),
            }
        }
        Err(e) => {
            // Carry on from the best point seen (a line search that stepped
            // outside the model's domain, e.g. a nest scale below 0, ends here).
            let best = objective.best.lock().ok().and_then(|b| b.clone());
            let iterations = objective.iteration.load(Ordering::Relaxed);
            let beta = best.map(|b| objective.full(&b.1)).unwrap_or(beta);
            (
                beta,
                iterations,
                Some(format!(
                    "the quasi-Newton phase stopped early ({e}); Newton steps continued"
                )),
                None,
            )
        }
    }
}

/// The quasi-Newton phase alone, without the Newton steps that confirm
/// convergence (no differenced Hessian): a start for a larger search.
pub fn approach(
    d: &Design,
    family: &dyn Family,
    start: &[f64],
    free: &[usize],
    progress: Progress,
) -> Outcome {
    let passes = AtomicUsize::new(1);
    let h0 = crate::model::hessian::outer_product(family, d, start, free);
    let mut objective = Objective::new(d, family, free, start, &passes, progress);
    objective.phase = APPROACH;
    let (beta, bfgs_iterations, note, _) = quasi_newton(
        &objective,
        start.to_vec(),
        initial_inverse(&(&h0 * objective.scale)),
    );
    let ll = objective
        .best
        .lock()
        .ok()
        .and_then(|b| b.as_ref().map(|b| b.0))
        .unwrap_or(f64::NEG_INFINITY);
    Outcome {
        beta,
        ll,
        bfgs_iterations,
        newton_steps: 0,
        passes: passes.load(Ordering::Relaxed),
        criterion: f64::NAN,
        gradient_norm: f64::NAN,
        converged: false,
        note,
        restart: None,
        hessian: None,
        starts: None,
    }
}

pub fn maximise(
    d: &Design,
    family: &dyn Family,
    start: &[f64],
    free: &[usize],
    progress: Progress,
) -> Outcome {
    maximise_with(d, family, start, free, progress, true)
}

/// The maximum's log-likelihood alone (a reference model's): as `maximise`,
/// but a family without an analytic Hessian stops once the Newton decrement
/// on the quasi-Newton phase's learnt curvature is below the tolerance,
/// without differencing a Hessian to confirm it (the log-likelihood is then
/// within about half the decrement, 5e-11, of its maximum).
pub fn maximise_level(
    d: &Design,
    family: &dyn Family,
    start: &[f64],
    free: &[usize],
    progress: Progress,
) -> Outcome {
    maximise_with(d, family, start, free, progress, false)
}

/// `maximise`; `confirm`: difference a Hessian to confirm convergence.
fn maximise_with(
    d: &Design,
    family: &dyn Family,
    start: &[f64],
    free: &[usize],
    progress: Progress,
    confirm: bool,
) -> Outcome {
    let k = d.params;
    let passes = AtomicUsize::new(0);
    let m = free.len();
    let beta = start.to_vec();
    if m == 0 {
        let e = family.evaluate(d, &beta, false, false);
        return Outcome {
            beta,
            ll: e.ll,
            bfgs_iterations: 0,
            newton_steps: 0,
            passes: 1,
            criterion: 0.0,
            gradient_norm: 0.0,
            converged: true,
            note: None,
            restart: None,
            hessian: None,
            starts: None,
        };
    }
    // With a cheap analytic Hessian, Newton's method from the start: a logit's
    // log-likelihood is concave and Newton reaches its maximum in a few
    // passes. Should it fail (a Hessian not negative definite on the way,
    // coefficients running off), the quasi-Newton search below starts over.
    let abilities = family.abilities();
    // A Hessian that costs many passes is kept for the last steps.
    let newton_first = abilities.analytic_hessian && !abilities.costly_hessian;
    if newton_first {
        let first = newton(
            d,
            family,
            beta.clone(),
            free,
            progress,
            &passes,
            (None, true),
        );
        if first.converged {
            return first;
        }
    }
    // The starting metric: the analytic Hessian where the family has a cheap
    // one; else the outer product of the scores (one pass instead of two per
    // parameter).
    let h0 = if newton_first {
        let e0 = family.evaluate(d, &beta, true, true);
        negative_free_hessian(e0.hess.as_deref().unwrap_or(&[]), k, free)
    } else {
        crate::model::hessian::outer_product(family, d, &beta, free)
    };
    passes.fetch_add(1, Ordering::Relaxed);
    let objective = Objective::new(d, family, free, &beta, &passes, progress);
    let (beta, bfgs_iterations, note, inv) =
        quasi_newton(&objective, beta, initial_inverse(&(&h0 * objective.scale)));
    // A family without an analytic Hessian reuses a metric (each differenced
    // Hessian costs two gradient passes per parameter) until a step fails:
    // the quasi-Newton phase's last one, which has learnt the curvature near
    // the optimum, else the one the search started with. So does a family
    // whose analytic Hessian costs many passes.
    let reuse = (!abilities.analytic_hessian || abilities.costly_hessian)
        .then(|| learnt(inv.as_deref(), objective.scale).unwrap_or(h0));
    let mut out = newton(d, family, beta, free, progress, &passes, (reuse, confirm));
    out.bfgs_iterations = bfgs_iterations;
    if out.note.is_none() {
        out.note = note;
    }
    out
}
