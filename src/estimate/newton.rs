//! Newton's method with step halving, the search's last phase (and its first
//! where the family has an analytic Hessian): steps until the Newton decrement
//! g' (-H)^-1 g falls below the tolerance, on the family's Hessian or on a
//! differenced one reused until a step fails.

use std::sync::atomic::{AtomicUsize, Ordering};

use nalgebra::{DMatrix, DVector};

use super::optimise::{negative_free_hessian, Outcome, Progress, Step, NEWTON_TOLERANCE};
use crate::design::Design;
use crate::model::hessian::with_hessian;
use crate::model::{Eval, Family};

/// Newton steps with step halving until the Newton decrement g' (-H)^-1 g is
/// below the tolerance. `reuse`: a Hessian (free block, negated) to use instead
/// of evaluating one at every step; it is refreshed when a full step fails,
/// and at convergence when `confirm` (else the decrement on it suffices).
pub(super) fn newton(
    d: &Design,
    family: &dyn Family,
    mut beta: Vec<f64>,
    free: &[usize],
    progress: Progress,
    passes: &AtomicUsize,
    (reuse, confirm): (Option<DMatrix<f64>>, bool),
) -> Outcome {
    let mut s = Newton::new(d, family, free, passes, reuse);
    let m = free.len();
    let (mut note, mut newton_steps, mut converged) = (None, 0, false);
    let mut criterion = f64::INFINITY;
    let mut stalls = 0;
    let mut e = s.eval(&beta);
    let mut confirmed = None;
    for _ in 0..100 {
        let g = DVector::from_iterator(m, free.iter().map(|&i| e.grad[i]));
        let Some(ch) = s.metric(&e).cholesky() else {
            if s.refresh_if_stale(&beta) {
                continue;
            }
            note.get_or_insert_with(|| {
                "the Hessian is not negative definite at the end of the search".to_string()
            });
            break;
        };
        let step = ch.solve(&g);
        criterion = g.dot(&step);
        progress(Step {
            phase: "Newton",
            iteration: newton_steps,
            log_likelihood: e.ll,
            gradient_norm: g.norm(),
        });
        if criterion < NEWTON_TOLERANCE {
            // Confirm with a Hessian of this point before stopping.
            if confirm && s.refresh_if_stale(&beta) {
                continue;
            }
            confirmed = s.last_step(&mut beta, &mut e, &step);
            converged = true;
            break;
        }
        let (t, accepted, improved) = s.halve(&mut beta, &mut e, &step);
        newton_steps += 1;
        s.fresh = false;
        if s.reuse.is_some() && (t < 1.0 || !improved) {
            // The reused Hessian no longer predicts well: difference it here.
            s.refresh(&beta);
        }
        if !accepted {
            // No improving step: at the optimum up to rounding.
            converged = criterion < 1e-6;
            break;
        }
        // Steps that no longer raise the log-likelihood at all: it is at its
        // maximum to rounding, and more steps would only wander within it.
        stalls = if improved { 0 } else { stalls + 1 };
        if stalls >= 3 {
            converged = criterion < 1e-6;
            break;
        }
    }
    Outcome {
        gradient_norm: free_norm(&e.grad, free),
        beta,
        ll: e.ll,
        bfgs_iterations: 0,
        newton_steps,
        passes: passes.load(Ordering::Relaxed),
        criterion,
        converged,
        note,
        restart: None,
        hessian: confirmed,
        starts: None,
    }
}

/// What Newton's steps share: the data, the family, the free positions, the
/// pass counter and the reused Hessian, if any.
struct Newton<'a> {
    d: &'a Design,
    family: &'a dyn Family,
    free: &'a [usize],
    passes: &'a AtomicUsize,
    /// A Hessian (free block, negated) used instead of one per step.
    reuse: Option<DMatrix<f64>>,
    /// Whether the reused Hessian was differenced at the current point.
    fresh: bool,
    /// The full Hessian differenced last.
    last_hessian: Option<Vec<f64>>,
}

/// The norm of the gradient's free entries.
fn free_norm(grad: &[f64], free: &[usize]) -> f64 {
    free.iter().map(|&i| grad[i] * grad[i]).sum::<f64>().sqrt()
}

impl<'a> Newton<'a> {
    fn new(
        d: &'a Design,
        family: &'a dyn Family,
        free: &'a [usize],
        passes: &'a AtomicUsize,
        reuse: Option<DMatrix<f64>>,
    ) -> Newton<'a> {
        Newton {
            d,
            family,
            free,
            passes,
            reuse,
            fresh: false,
            last_hessian: None,
        }
    }

    /// One pass: with the Hessian unless a reused one stands in for it.
    fn eval(&self, b: &[f64]) -> Eval {
        self.passes.fetch_add(1, Ordering::Relaxed);
        if self.reuse.is_some() {
            self.family.evaluate(self.d, b, true, false)
        } else {
            with_hessian(self.family, self.d, b, self.free)
        }
    }

    /// The negated Hessian's free block the step solves with.
    fn metric(&self, e: &Eval) -> DMatrix<f64> {
        match &self.reuse {
            Some(h) => h.clone(),
            None => {
                negative_free_hessian(e.hess.as_deref().unwrap_or(&[]), self.d.params, self.free)
            }
        }
    }

    /// Evaluates the reused Hessian afresh at `b`: the family's analytic one
    /// (one pass), else differenced (two gradient passes per parameter).
    fn refresh(&mut self, b: &[f64]) {
        let cost = if self.family.abilities().analytic_hessian {
            1
        } else {
            2 * self.free.len()
        };
        self.passes.fetch_add(cost, Ordering::Relaxed);
        let h = with_hessian(self.family, self.d, b, self.free)
            .hess
            .unwrap_or_default();
        let a = negative_free_hessian(&h, self.d.params, self.free);
        self.last_hessian = Some(h);
        if let Some(r) = self.reuse.as_mut() {
            *r = a;
        }
        self.fresh = true;
    }

    /// Refreshes a reused Hessian not differenced at `b`; whether it did.
    fn refresh_if_stale(&mut self, b: &[f64]) -> bool {
        if self.reuse.is_some() && !self.fresh {
            self.refresh(b);
            return true;
        }
        false
    }

    /// Takes the last (tiny) step as well: Newton's quadratic convergence then
    /// leaves the estimates exact to rounding rather than to the tolerance.
    /// Returns the Hessian that confirmed convergence: the one differenced at
    /// the point before the step, or with an analytic Hessian the last
    /// point's (the covariance then needs no further pass).
    fn last_step(
        &self,
        beta: &mut Vec<f64>,
        e: &mut Eval,
        step: &DVector<f64>,
    ) -> Option<Vec<f64>> {
        let confirmed = if self.fresh {
            self.last_hessian.clone()
        } else {
            None
        };
        let mut last = beta.clone();
        for (s, &i) in self.free.iter().enumerate() {
            last[i] += step[s];
        }
        let el = self.eval(&last);
        if el.ll.is_finite() && el.ll >= e.ll - 1e-9 * e.ll.abs().max(1.0) {
            *beta = last;
            *e = el;
        }
        if self.reuse.is_none() {
            return e.hess.clone();
        }
        confirmed
    }

    /// Halves the step until the log-likelihood does not fall; returns the
    /// fraction taken, whether a step was accepted and whether it improved.
    fn halve(&self, beta: &mut Vec<f64>, e: &mut Eval, step: &DVector<f64>) -> (f64, bool, bool) {
        let mut t = 1.0;
        while t > 1e-12 {
            let mut trial = beta.clone();
            for (s, &i) in self.free.iter().enumerate() {
                trial[i] += t * step[s];
            }
            let et = self.eval(&trial);
            if et.ll.is_finite() && et.ll >= e.ll - 1e-12 * e.ll.abs().max(1.0) {
                let improved = et.ll > e.ll;
                *beta = trial;
                *e = et;
                return (t, true, improved);
            }
            t *= 0.5;
        }
        (t, false, false)
    }
}
