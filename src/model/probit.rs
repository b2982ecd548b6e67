//! Binary probit: P(other) = Phi(V_other - V_base), with its analytic
//! gradient and Hessian (tail-safe log Phi and inverse Mills ratio): the
//! probit family with two alternatives (its spec rules, shared with the
//! multinomial probit, are in `mnp::rules`).

use crate::design::{Design, Feature};
use crate::spec::Spec;

use super::logit::{softmax, Compensated};
use super::{normal, Abilities, Eval, Family};

/// The binary probit family; `base` is the reference alternative.
#[derive(Clone, Copy, Debug)]
pub struct Probit {
    pub base: usize,
}

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
    base: usize,
    beta: &[f64],
    range: std::ops::Range<usize>,
    want_grad: bool,
    acc: &mut Acc,
) {
    let k = d.params;
    let want_hess = !acc.hess.is_empty();
    let obs = &*d.obs;
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

/// One pass: log-likelihood and, if asked, gradient and Hessian at `beta` (all K parameters).
impl Family for Probit {
    fn name(&self) -> &'static str {
        "probit"
    }

    fn abilities(&self) -> Abilities {
        Abilities {
            analytic_hessian: true,
            binary_only: true,
            ..Abilities::default()
        }
    }

    fn evaluate(&self, d: &Design, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
        let k = d.params;
        let j = d.alternatives();
        let want_grad = want_grad || want_hess;
        let parts = crate::design::on_pieces(d.situations(), |r| {
            let mut acc = Acc::new(k, j, want_hess);
            probit_chunk(d, self.base, beta, r, want_grad, &mut acc);
            acc
        });
        let mut ll = Compensated::default();
        let mut grad = vec![0.0; k];
        let mut hess = if want_hess {
            vec![0.0; k * k]
        } else {
            Vec::new()
        };
        for p in parts {
            ll.add(p.ll.value());
            grad.iter_mut().zip(&p.grad).for_each(|(a, b)| *a += b);
            hess.iter_mut().zip(&p.hess).for_each(|(a, b)| *a += b);
        }
        if want_hess {
            super::logit::mirror_upper(&mut hess, k);
        }
        Eval {
            ll: ll.value(),
            grad: if want_grad { grad } else { Vec::new() },
            hess: want_hess.then_some(hess),
        }
    }

    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
        let mut acc = Acc::new(d.params, d.alternatives(), false);
        for i in 0..d.situations() {
            acc.grad.iter_mut().for_each(|g| *g = 0.0);
            probit_chunk(d, self.base, beta, i..i + 1, true, &mut acc);
            f(i, &acc.grad);
        }
    }

    fn probabilities(&self, _beta: &[f64], v: &[f64], p: &mut [f64]) {
        let base = self.base;
        let other = 1 - base;
        if !v[base].is_finite() || !v[other].is_finite() {
            softmax(v, p);
            return;
        }
        let po = normal::cdf(v[other] - v[base]);
        p[other] = po;
        p[base] = 1.0 - po;
    }

    fn dprob(&self, _beta: &[f64], v: &[f64], _p: &[f64], dp: &mut [f64]) {
        let n = v.len();
        dp.iter_mut().for_each(|x| *x = 0.0);
        let (b, o) = (self.base, 1 - self.base);
        if v[b].is_finite() && v[o].is_finite() {
            let phi = normal::pdf(v[o] - v[b]);
            dp[o * n + o] = phi;
            dp[o * n + b] = -phi;
            dp[b * n + o] = -phi;
            dp[b * n + b] = phi;
        }
    }

    /// With t = V_other − V_base: dφ(t)/dV_other = −t φ(t), dφ(t)/dV_base = t φ(t).
    fn d2prob(&self, v: &[f64], _p: &[f64], _dp: &[f64], d2p: &mut [f64]) -> bool {
        let n = v.len();
        d2p.iter_mut().for_each(|x| *x = 0.0);
        let (b, o) = (self.base, 1 - self.base);
        if v[b].is_finite() && v[o].is_finite() {
            let t = v[o] - v[b];
            let g = -t * normal::pdf(t); // d phi / dV_other
            for (j, sj) in [(o, 1.0), (b, -1.0)] {
                for (k, sk) in [(o, 1.0), (b, -1.0)] {
                    for (m, sm) in [(o, 1.0), (b, -1.0)] {
                        d2p[(j * n + k) * n + m] = sj * sk * sm * g;
                    }
                }
            }
        }
        true
    }

    fn caution(&self, _spec: &Spec) -> Option<String> {
        None
    }
}
