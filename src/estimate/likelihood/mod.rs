//! The log-likelihood of logit and binary probit with its analytic gradient
//! and Hessian, in one pass over the design split across the cores. Each
//! thread keeps a few scratch buffers; nothing is allocated per situation.
//!
//! The logit pass works on blocks of situations. At the start of a pass the
//! parameters are folded into one coefficient per alternative and value
//! (the constant 1, each attribute, each characteristic), so that a block's
//! utilities are a few multiply-adds over contiguous arrays. The per-situation
//! steps (largest utility, exponentials, log-sum-exp, residuals) run on a
//! transposed copy of the block, one row per alternative, with a vectorisable
//! `exp` and `ln` (within two ulps). The gradient is accumulated per
//! (alternative, value) and mapped back to the parameters at the end; so are
//! the Hessian's sums of w p u u', and its x-bar outer products are vectorised
//! dot products. The block code is compiled for AVX-512, for AVX2 with FMA and
//! portably, and the version is chosen at run time.
//!
//! The log-likelihood is summed with compensation (Neumaier), so that it is
//! exact to rounding however many situations there are: a plain running sum
//! of a million near-identical terms drifts by 1e-5 and stalls the Newton steps.
//! A pass is cut into pieces that depend on the number of situations alone and
//! summed in piece order, so its figures do not depend on the number of cores.

use crate::data::Observations;
use crate::design::{Design, Feature, Value};
use crate::spec::Family;

use super::normal;

/// The model kind a pass evaluates.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Kind {
    pub family: Family,
    /// Reference alternative (probit's utility difference is other minus base).
    pub base: usize,
}

/// What a pass returns: log-likelihood, gradient (length K) and Hessian (K x K row-major, when asked).
#[derive(Clone, Debug)]
pub struct Eval {
    pub ll: f64,
    pub grad: Vec<f64>,
    pub hess: Option<Vec<f64>>,
}

/// Logit probabilities of situation `i` into `p` from utilities `v` (log-sum-exp); returns log of the denominator.
#[inline]
pub fn softmax(v: &[f64], p: &mut [f64]) -> f64 {
    let m = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let mut s = 0.0;
    for (pj, vj) in p.iter_mut().zip(v) {
        let e = if vj.is_finite() { (vj - m).exp() } else { 0.0 };
        *pj = e;
        s += e;
    }
    for pj in p.iter_mut() {
        *pj /= s;
    }
    m + s.ln()
}

mod block;
mod fastmath;

use block::*;
use fastmath::*;

/// Probit sums over situations.
struct Acc {
    ll: Compensated,
    grad: Vec<f64>,
    hess: Vec<f64>,
    v: Vec<f64>,
    xbar: Vec<f64>,
}

impl Acc {
    fn new(k: usize, j: usize, hess: bool) -> Self {
        Acc {
            ll: Compensated::default(),
            grad: vec![0.0; k],
            hess: if hess { vec![0.0; k * k] } else { Vec::new() },
            v: vec![0.0; j],
            xbar: vec![0.0; k],
        }
    }
}

/// Sparse difference x_other - x_base of a binary situation into the dense `xd`.
#[inline]
fn probit_diff(d: &Design, i: usize, other: usize, base: usize, xd: &mut [f64]) {
    xd.iter_mut().for_each(|x| *x = 0.0);
    let add = |feats: &[Feature], j: usize, sign: f64, xd: &mut [f64]| {
        for f in feats {
            xd[f.param] += sign * d.value(i, j, f.value);
        }
    };
    add(&d.features[other], other, 1.0, xd);
    add(&d.features[base], base, -1.0, xd);
}

fn probit_chunk(
    d: &Design,
    kind: Kind,
    beta: &[f64],
    range: std::ops::Range<usize>,
    want_grad: bool,
    acc: &mut Acc,
) {
    let k = d.params;
    let want_hess = !acc.hess.is_empty();
    let obs = &*d.obs;
    let base = kind.base;
    let other = 1 - base;
    for i in range {
        if !d.available(i, base) || !d.available(i, other) {
            continue; // a one-alternative situation carries no information
        }
        let w = obs.weight[i];
        d.utilities(beta, i, &mut acc.v);
        let diff = acc.v[other] - acc.v[base];
        let q = if obs.chosen[i] as usize == other {
            1.0
        } else {
            -1.0
        };
        let t = q * diff;
        acc.ll.add(w * normal::log_cdf(t));
        if !want_grad {
            continue;
        }
        probit_diff(d, i, other, base, &mut acc.xbar);
        let lam = normal::inv_mills(t);
        let g = w * q * lam;
        for a in 0..k {
            acc.grad[a] += g * acc.xbar[a];
        }
        if want_hess {
            let h = -w * lam * (t + lam);
            for a in 0..k {
                let xa = acc.xbar[a];
                if xa == 0.0 {
                    continue;
                }
                for b in a..k {
                    acc.hess[a * k + b] += h * xa * acc.xbar[b];
                }
            }
        }
    }
}

/// The pieces a pass over `n` situations is cut into: one below 20,000
/// situations, else 2 to 64 of about 16,384 each. They depend on `n` alone, and
/// their sums are added in piece order, so that a pass gives the same figures
/// to the last bit whatever the number of cores and however the threads run.
pub fn pieces(n: usize) -> Vec<std::ops::Range<usize>> {
    let count = if n < 20_000 {
        1
    } else {
        (n / 16_384).clamp(2, 64)
    };
    let size = n.div_ceil(count).max(1);
    (0..count)
        .map(|t| (t * size).min(n)..((t + 1) * size).min(n))
        .filter(|r| !r.is_empty())
        .collect()
}

/// Runs `f` on each of `pieces(n)`, the cores taking the next piece as they
/// finish one (so a core slowed by other work takes fewer); results in piece order.
pub fn on_pieces<T: Send>(n: usize, f: impl Fn(std::ops::Range<usize>) -> T + Sync) -> Vec<T> {
    let pieces = pieces(n);
    let threads = std::thread::available_parallelism()
        .map(|t| t.get())
        .unwrap_or(1)
        .min(pieces.len());
    if threads <= 1 {
        return pieces.into_iter().map(f).collect();
    }
    let next = std::sync::atomic::AtomicUsize::new(0);
    let (f, pieces, next) = (&f, &pieces, &next);
    let mut done: Vec<(usize, T)> = std::thread::scope(|s| {
        let handles: Vec<_> = (0..threads)
            .map(|_| {
                s.spawn(move || {
                    let mut out = Vec::new();
                    loop {
                        let p = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                        let Some(r) = pieces.get(p) else { break };
                        out.push((p, f(r.clone())));
                    }
                    out
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)))
            .collect()
    });
    done.sort_by_key(|d| d.0);
    done.into_iter().map(|d| d.1).collect()
}

/// One pass: log-likelihood and, if asked, gradient and Hessian at `beta` (all K parameters).
pub fn evaluate(d: &Design, kind: Kind, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
    let k = d.params;
    let j = d.alternatives();
    let want_grad = want_grad || want_hess;
    let mut ll = Compensated::default();
    let mut grad = vec![0.0; k];
    let mut hess = if want_hess {
        vec![0.0; k * k]
    } else {
        Vec::new()
    };
    match kind.family {
        Family::Logit => {
            let plan = Plan::new(d, beta);
            let parts = on_pieces(d.situations(), |r| {
                logit_chunk(&plan, r, want_grad, want_hess)
            });
            let dims = plan.dims();
            let mut gtheta = vec![0.0; dims * j];
            let mut sterm = vec![0.0; plan.hess_terms.len()];
            for p in parts {
                ll.add(p.ll.value());
                let na = plan.attrs.len();
                for (c, g) in p.g.iter().enumerate() {
                    // Attributes were summed interleaved, the rest as rows.
                    let interleaved = (1..=na).contains(&c);
                    for (t, x) in g.iter().enumerate() {
                        let a = if interleaved { t % j } else { t / BLOCK };
                        gtheta[c * j + a] += x;
                    }
                }
                for (o, sq) in sterm.iter_mut().zip(&p.s) {
                    *o += sq.iter().sum::<f64>();
                }
                hess.iter_mut().zip(&p.outer).for_each(|(a, b)| *a += b);
            }
            if want_grad {
                for &(param, a, c) in &plan.feats {
                    grad[param] += gtheta[c * j + a];
                }
            }
            if want_hess {
                for (h, v) in plan.hess_terms.iter().zip(&sterm) {
                    for &cell in &h.cells {
                        hess[cell] -= v;
                    }
                }
            }
        }
        Family::Probit => {
            let parts = on_pieces(d.situations(), |r| {
                let mut acc = Acc::new(k, j, want_hess);
                probit_chunk(d, kind, beta, r, want_grad, &mut acc);
                acc
            });
            for p in parts {
                ll.add(p.ll.value());
                grad.iter_mut().zip(&p.grad).for_each(|(a, b)| *a += b);
                hess.iter_mut().zip(&p.hess).for_each(|(a, b)| *a += b);
            }
        }
    }
    if want_hess {
        // Only the upper triangle was accumulated.
        for a in 0..k {
            for b in 0..a {
                hess[a * k + b] = hess[b * k + a];
            }
        }
    }
    Eval {
        ll: ll.value(),
        grad: if want_grad { grad } else { Vec::new() },
        hess: if want_hess { Some(hess) } else { None },
    }
}

/// Each situation's weighted score (gradient of its log-likelihood term) passed to `f(i, score)`.
/// Used for robust covariance; runs on one core because it feeds group sums.
pub fn for_each_score(d: &Design, kind: Kind, beta: &[f64], mut f: impl FnMut(usize, &[f64])) {
    let k = d.params;
    let j = d.alternatives();
    match kind.family {
        Family::Logit => {
            let plan = Plan::new(d, beta);
            let na = plan.attrs.len();
            let mut blk = Block::new(&plan);
            // Attribute values as rows, and each parameter's score over the block.
            let mut x: Vec<Vec<[f64; BLOCK]>> = vec![vec![[0.0; BLOCK]; j]; na];
            let mut sc: Vec<[f64; BLOCK]> = vec![[0.0; BLOCK]; k];
            let mut score = vec![0.0; k];
            let n = d.situations();
            let mut i0 = 0;
            while i0 < n {
                let nb = BLOCK.min(n - i0);
                blk.fill::<false>(&plan, i0, nb);
                blk.residuals(&plan, i0, nb, false);
                for (xa, attr) in x.iter_mut().zip(&plan.attrs) {
                    to_rows(&attr[i0 * j..(i0 + nb) * j], xa, j, nb);
                }
                sc.iter_mut().for_each(|row| row.fill(0.0));
                for &(param, a, c) in &plan.feats {
                    let r = &blk.rows[a][..nb];
                    let out = &mut sc[param][..nb];
                    if c == 0 {
                        out.iter_mut().zip(r).for_each(|(o, ri)| *o += ri);
                    } else {
                        let u = if c <= na {
                            &x[c - 1][a][..nb]
                        } else {
                            &plan.chars[c - 1 - na][i0..i0 + nb]
                        };
                        for ((o, ri), ui) in out.iter_mut().zip(r).zip(u) {
                            *o += ri * ui;
                        }
                    }
                }
                for b in 0..nb {
                    for (s, row) in score.iter_mut().zip(&sc) {
                        *s = row[b];
                    }
                    f(i0 + b, &score);
                }
                i0 += nb;
            }
        }
        Family::Probit => {
            let mut acc = Acc::new(k, j, false);
            for i in 0..d.situations() {
                acc.grad.iter_mut().for_each(|g| *g = 0.0);
                probit_chunk(d, kind, beta, i..i + 1, true, &mut acc);
                f(i, &acc.grad);
            }
        }
    }
}

/// Choice probabilities `[i * J + j]` at `beta` (0 for unavailable alternatives).
/// Computed situation by situation exactly as `Design::utilities` and
/// `probabilities_from_utilities` do (so the figures agree to the last bit with
/// code that uses those), split over the cores.
pub fn probabilities(d: &Design, kind: Kind, beta: &[f64]) -> Vec<f64> {
    let j = d.alternatives();
    let parts = on_pieces(d.situations(), |r| {
        let mut out = vec![0.0; r.len() * j];
        let mut v = vec![0.0; j];
        for (i, p) in r.zip(out.chunks_mut(j)) {
            d.utilities(beta, i, &mut v);
            probabilities_from_utilities(kind, &v, p);
        }
        out
    });
    let mut out = Vec::with_capacity(d.situations() * j);
    for p in parts {
        out.extend_from_slice(&p);
    }
    out
}

/// Probabilities of one situation from its utilities (-inf = unavailable).
#[inline]
pub fn probabilities_from_utilities(kind: Kind, v: &[f64], p: &mut [f64]) {
    match kind.family {
        Family::Logit => {
            softmax(v, p);
        }
        Family::Probit => {
            let base = kind.base;
            let other = 1 - base;
            if !v[base].is_finite() || !v[other].is_finite() {
                softmax(v, p);
                return;
            }
            let po = normal::cdf(v[other] - v[base]);
            p[other] = po;
            p[base] = 1.0 - po;
        }
    }
}

#[cfg(test)]
mod tests;
