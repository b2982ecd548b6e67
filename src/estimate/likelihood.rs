//! The log-likelihood of logit and binary probit with its analytic gradient
//! and Hessian, in one pass over the design split across the cores. Each
//! thread keeps a few scratch buffers; nothing is allocated per situation.

use crate::design::{Design, Feature};
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

struct Acc {
    ll: f64,
    grad: Vec<f64>,
    hess: Vec<f64>,
    v: Vec<f64>,
    p: Vec<f64>,
    xbar: Vec<f64>,
}

impl Acc {
    fn new(k: usize, j: usize, hess: bool) -> Self {
        Acc {
            ll: 0.0,
            grad: vec![0.0; k],
            hess: if hess { vec![0.0; k * k] } else { Vec::new() },
            v: vec![0.0; j],
            p: vec![0.0; j],
            xbar: vec![0.0; k],
        }
    }
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

fn logit_chunk(
    d: &Design,
    beta: &[f64],
    range: std::ops::Range<usize>,
    want_grad: bool,
    acc: &mut Acc,
) {
    let k = d.params;
    let want_hess = !acc.hess.is_empty();
    let obs = &*d.obs;
    for i in range {
        let w = obs.weight[i];
        let c = obs.chosen[i] as usize;
        d.utilities(beta, i, &mut acc.v);
        let lse = softmax(&acc.v, &mut acc.p);
        acc.ll += w * (acc.v[c] - lse);
        if !want_grad {
            continue;
        }
        if want_hess {
            acc.xbar.iter_mut().for_each(|x| *x = 0.0);
        }
        for (j, feats) in d.features.iter().enumerate() {
            let pj = acc.p[j];
            if pj == 0.0 && j != c {
                continue;
            }
            let r = w * ((j == c) as u8 as f64 - pj);
            for f in feats {
                let x = d.value(i, j, f.value);
                acc.grad[f.param] += r * x;
            }
            if want_hess && pj > 0.0 {
                let wp = w * pj;
                for (a, fa) in feats.iter().enumerate() {
                    let xa = d.value(i, j, fa.value);
                    acc.xbar[fa.param] += pj * xa;
                    let row = fa.param * k;
                    for fb in &feats[a..] {
                        let xb = d.value(i, j, fb.value);
                        acc.hess[row + fb.param] -= wp * xa * xb;
                    }
                }
            }
        }
        if want_hess {
            for a in 0..k {
                let xa = acc.xbar[a];
                if xa == 0.0 {
                    continue;
                }
                let row = a * k;
                for b in a..k {
                    acc.hess[row + b] += w * xa * acc.xbar[b];
                }
            }
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
        acc.ll += w * normal::log_cdf(t);
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

/// One pass: log-likelihood and, if asked, gradient and Hessian at `beta` (all K parameters).
pub fn evaluate(d: &Design, kind: Kind, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
    let k = d.params;
    let j = d.alternatives();
    let want_grad = want_grad || want_hess;
    let chunks = d.chunks();
    let run = |range: std::ops::Range<usize>| {
        let mut acc = Acc::new(k, j, want_hess);
        match kind.family {
            Family::Logit => logit_chunk(d, beta, range, want_grad, &mut acc),
            Family::Probit => probit_chunk(d, kind, beta, range, want_grad, &mut acc),
        }
        acc
    };
    let parts: Vec<Acc> = if chunks.len() <= 1 {
        chunks.into_iter().map(run).collect()
    } else {
        std::thread::scope(|s| {
            let handles: Vec<_> = chunks
                .into_iter()
                .map(|r| s.spawn(move || run(r)))
                .collect();
            handles
                .into_iter()
                .map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)))
                .collect()
        })
    };
    let mut ll = 0.0;
    let mut grad = vec![0.0; k];
    let mut hess = if want_hess {
        vec![0.0; k * k]
    } else {
        Vec::new()
    };
    for p in parts {
        ll += p.ll;
        grad.iter_mut().zip(&p.grad).for_each(|(a, b)| *a += b);
        hess.iter_mut().zip(&p.hess).for_each(|(a, b)| *a += b);
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
        ll,
        grad: if want_grad { grad } else { Vec::new() },
        hess: if want_hess { Some(hess) } else { None },
    }
}

/// Each situation's weighted score (gradient of its log-likelihood term) passed to `f(i, score)`.
/// Used for robust covariance; runs on one core because it feeds group sums.
pub fn for_each_score(d: &Design, kind: Kind, beta: &[f64], mut f: impl FnMut(usize, &[f64])) {
    let k = d.params;
    let j = d.alternatives();
    let mut acc = Acc::new(k, j, false);
    for i in 0..d.situations() {
        acc.grad.iter_mut().for_each(|g| *g = 0.0);
        match kind.family {
            Family::Logit => logit_chunk(d, beta, i..i + 1, true, &mut acc),
            Family::Probit => probit_chunk(d, kind, beta, i..i + 1, true, &mut acc),
        }
        f(i, &acc.grad);
    }
}

/// Choice probabilities `[i * J + j]` at `beta` (0 for unavailable alternatives).
pub fn probabilities(d: &Design, kind: Kind, beta: &[f64]) -> Vec<f64> {
    let j = d.alternatives();
    let mut out = vec![0.0; d.situations() * j];
    let mut v = vec![0.0; j];
    for (i, p) in out.chunks_mut(j).enumerate() {
        d.utilities(beta, i, &mut v);
        probabilities_from_utilities(kind, &v, p);
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
