//! The latent class model's starts: random points climbed to a maximum,
//! then the best start's end goes on to maximum likelihood (`estimate`).
//! The pooled logit is fitted first (every class with equal weight); each
//! start perturbs its coefficients per class (seeded) and climbs. Far from
//! a maximum a step is an EM step: one Newton step on the expected
//! complete-data log-likelihood Q, whose gradient at the current point is
//! the log-likelihood's and whose Hessian is the classes' weighted logit
//! Hessians and the membership logit's (the EM gradient algorithm; Lange
//! 1995), halved when the log-likelihood falls; where the log-likelihood's
//! own Hessian is negative definite, Newton's step on it (quadratic
//! convergence, so every start ends at its maximum to rounding and the
//! starts can be compared).

use std::sync::atomic::Ordering;
use std::time::Instant;

use nalgebra::{DMatrix, DVector};

use super::pass::{Pass, Totals, Want};
use super::LatentClass;
use crate::design::Design;
use crate::model::Starts;
use crate::rng::Rng;

/// EM steps per start at most.
const MAX_STEPS: usize = 400;
/// A start has converged when a step raises the log-likelihood by less than
/// this times its size (common practice: a relative change).
const RELATIVE: f64 = 1e-10;
/// Newton steps of an M-step with fixed class weights at most.
const MAX_NEWTON: usize = 40;

/// The runs from every start; the best point and how the starts fared.
pub(super) fn run(
    lc: &LatentClass,
    d: &Design,
    start: &[f64],
    free: &[usize],
) -> (Vec<f64>, Starts) {
    lc.em_passes.store(0, Ordering::Relaxed);
    let units = lc.units(d);
    let c = lc.lay.classes;
    let uniform = vec![1.0 / c as f64; units.units * c];
    let pooled = m_step(lc, d, start, free, &uniform);
    let scales = crate::model::hessian::scales(lc, d);
    let mut rng = Rng::new(lc.settings.seed);
    let mut ends = Vec::with_capacity(lc.settings.starts);
    let mut seconds = Vec::with_capacity(lc.settings.starts);
    for _ in 0..lc.settings.starts {
        let t = Instant::now();
        let b0 = perturbed(lc, &pooled, free, &scales, &mut rng);
        ends.push(climb(lc, d, b0, free, &scales));
        seconds.push(t.elapsed().as_secs_f64());
    }
    let lls: Vec<f64> = ends.iter().map(|e| e.1).collect();
    let ran_off = ends.iter().filter(|e| e.2).count();
    // The best start that stayed inside (all of them when every start ran off).
    let best = (0..lls.len())
        .filter(|&s| lls[s].is_finite() && (!ends[s].2 || ran_off == ends.len()))
        .max_by(|&a, &b| lls[a].total_cmp(&lls[b]))
        .unwrap_or(0);
    let top = lls.get(best).copied().unwrap_or(f64::NAN);
    let tolerance = 0.01 + 1e-6 * top.abs();
    let reached = (0..lls.len())
        .filter(|&s| lls[s] >= top - tolerance && ends[s].2 == ends[best].2)
        .count();
    let beta = ends.into_iter().nth(best).map(|e| e.0).unwrap_or(pooled);
    (
        beta,
        Starts {
            tried: lls.len(),
            reached_best: reached,
            tolerance,
            log_likelihoods: lls,
            seconds,
            best,
            ran_off,
            passes: lc.em_passes.load(Ordering::Relaxed),
            seed: lc.settings.seed,
        },
    )
}

/// One start: the pooled coefficients moved per class, in the data's units;
/// the membership constants drawn around equal shares.
fn perturbed(
    lc: &LatentClass,
    pooled: &[f64],
    free: &[usize],
    scales: &[f64],
    rng: &mut Rng,
) -> Vec<f64> {
    let lay = &lc.lay;
    let mut b = pooled.to_vec();
    for c in 0..lay.classes {
        for (s, &p) in lay.index[c].iter().enumerate() {
            // A parameter every class shares is moved once, with the first class.
            let shared = c > 0 && p == lay.slots[s];
            if shared || !free.contains(&p) {
                continue;
            }
            let base = pooled[lay.slots[s]];
            let unit = 1.0 / scales[lay.slots[s]].max(1e-12);
            b[p] = base * (1.0 + 0.8 * rng.normal()) + 0.3 * unit * rng.normal();
        }
    }
    for m in &lay.member {
        if free.contains(&m[0]) {
            b[m[0]] = 0.5 * rng.normal();
        }
    }
    b
}

/// A pass at `beta` with posteriors (or `given` weights), gradient and Q's Hessian.
fn pass(lc: &LatentClass, d: &Design, beta: &[f64], given: Option<&[f64]>) -> Totals {
    lc.em_passes.fetch_add(1, Ordering::Relaxed);
    let units = lc.units(d);
    Pass {
        lay: &lc.lay,
        d,
        units: &units,
        beta,
        given,
        want: Want {
            grad: true,
            hess: true,
            full: given.is_none(),
            ..Want::default()
        },
    }
    .run()
}

/// The Newton step on the free parameters: (-H)^-1 g, solved on the
/// matrix scaled to a unit diagonal (so that the step does not depend on the
/// data's units), with a small ridge where a class (or a parameter in it)
/// carries no weight.
fn newton_step(t: &Totals, free: &[usize], k: usize) -> Vec<f64> {
    let m = free.len();
    let unit: Vec<f64> = free
        .iter()
        .map(|&p| {
            let h = -t.hess[p * k + p];
            if h > 0.0 && h.is_finite() {
                h.sqrt()
            } else {
                1.0
            }
        })
        .collect();
    let a = DMatrix::<f64>::from_fn(m, m, |x, y| {
        let v = -t.hess[free[x] * k + free[y]] / (unit[x] * unit[y]);
        if x == y {
            v + 1e-9
        } else {
            v
        }
    });
    let g = DVector::<f64>::from_fn(m, |x, _| t.grad[free[x]] / unit[x]);
    let step = match a.clone().cholesky() {
        Some(ch) => ch.solve(&g),
        None => a.lu().solve(&g).unwrap_or_else(|| g.clone()),
    };
    step.iter().zip(&unit).map(|(s, u)| s / u).collect()
}

/// Maximises Q with fixed class weights `given` by Newton's method.
pub(super) fn m_step(
    lc: &LatentClass,
    d: &Design,
    start: &[f64],
    free: &[usize],
    given: &[f64],
) -> Vec<f64> {
    let k = d.params;
    let mut beta = start.to_vec();
    let mut t = pass(lc, d, &beta, Some(given));
    for _ in 0..MAX_NEWTON {
        let step = newton_step(&t, free, k);
        let gain: f64 = step.iter().zip(free).map(|(s, &p)| s * t.grad[p]).sum();
        if gain.is_nan() || gain <= 1e-12 * (1.0 + t.ll.abs()) {
            break;
        }
        let mut f = 1.0;
        loop {
            let mut trial = beta.clone();
            for (s, &p) in step.iter().zip(free) {
                trial[p] += f * s;
            }
            let u = pass(lc, d, &trial, Some(given));
            if u.ll.is_finite() && u.ll >= t.ll - 1e-12 * t.ll.abs() {
                beta = trial;
                t = u;
                break;
            }
            f *= 0.5;
            if f < 1e-6 {
                return beta;
            }
        }
    }
    beta
}

/// Steps from `beta` until the log-likelihood stops rising: Newton's step
/// on the log-likelihood itself where its Hessian is negative definite (near
/// a maximum: quadratic convergence) and raises it, else an EM step (safe
/// far from one). Returns the end point, its log-likelihood and whether a
/// class ran off (a coefficient moving utility by more than
/// `checks::UNBOUNDED` standard deviations of its variable: a class heading
/// for a maximum at infinity, where it predicts a few choices perfectly;
/// the start stops there).
fn climb(
    lc: &LatentClass,
    d: &Design,
    beta: Vec<f64>,
    free: &[usize],
    scales: &[f64],
) -> (Vec<f64>, f64, bool) {
    let first = pass(lc, d, &beta, None);
    let mut at = (beta, first);
    if !at.1.ll.is_finite() {
        return (at.0, at.1.ll, false);
    }
    for _ in 0..MAX_STEPS {
        let before = at.1.ll;
        let newton = newton_full(&at.1, free, d.params).and_then(|(step, decrement)| {
            if decrement < 1e-12 * (1.0 + before.abs()) {
                return Some(None); // at the maximum
            }
            [1.0, 0.5, 0.25]
                .into_iter()
                .map(|f| moved(&at.0, &step, free, f))
                .map(|b| {
                    let t = pass(lc, d, &b, None);
                    (b, t)
                })
                .find(|(_, t)| t.ll.is_finite() && t.ll > before)
                .map(Some)
        });
        let next = match newton {
            Some(None) => break,
            Some(Some(n)) => n,
            None => match em_step(lc, d, &at, free) {
                Some(n) => n,
                None => break,
            },
        };
        at = next;
        if super::checks::runs_off(lc, &at.0, scales).is_some() {
            return (at.0, at.1.ll, true);
        }
        if at.1.ll - before <= RELATIVE * (1.0 + at.1.ll.abs()) {
            break;
        }
    }
    (at.0, at.1.ll, false)
}

/// Newton's step on the log-likelihood, (-H)^-1 g on the free parameters,
/// and its decrement g'(-H)^-1 g, when -H is positive definite.
fn newton_full(t: &Totals, free: &[usize], k: usize) -> Option<(Vec<f64>, f64)> {
    let m = free.len();
    let unit: Vec<f64> = free
        .iter()
        .map(|&p| (-t.full[p * k + p]).abs().sqrt().max(1e-300))
        .collect();
    let a = DMatrix::<f64>::from_fn(m, m, |x, y| {
        -t.full[free[x] * k + free[y]] / (unit[x] * unit[y])
    });
    let g = DVector::<f64>::from_fn(m, |x, _| t.grad[free[x]] / unit[x]);
    let step = a.cholesky()?.solve(&g);
    let decrement = step.dot(&g);
    Some((
        step.iter().zip(&unit).map(|(s, u)| s / u).collect(),
        decrement,
    ))
}

/// `beta` moved by `f` times `step` on the free parameters.
fn moved(beta: &[f64], step: &[f64], free: &[usize], f: f64) -> Vec<f64> {
    let mut b = beta.to_vec();
    for (s, &p) in step.iter().zip(free) {
        b[p] += f * s;
    }
    b
}

/// One EM step from `at` (its pass given), halved until the log-likelihood
/// does not fall; `None` when no step helps.
fn em_step(
    lc: &LatentClass,
    d: &Design,
    at: &(Vec<f64>, Totals),
    free: &[usize],
) -> Option<(Vec<f64>, Totals)> {
    let step = newton_step(&at.1, free, d.params);
    let mut f = 1.0;
    while f >= 1e-4 {
        let trial = moved(&at.0, &step, free, f);
        let u = pass(lc, d, &trial, None);
        if u.ll.is_finite() && u.ll >= at.1.ll {
            return Some((trial, u));
        }
        f *= 0.5;
    }
    None
}
