//! The nested logit's log-likelihood and analytic gradient in one pass over
//! the design, in pieces spread over the cores (scratch allocated once per
//! piece, nothing per situation), and its per-situation scores.
//!
//! With l the scale of the chosen alternative c's group, P_{j|g} the
//! probability of j within its group g, P_j overall and I_g the inclusive
//! value: d ln P_c / dV_j = 1[j=c]/l + 1[g(j)=g(c)] (l - 1)/l P_{j|g} - P_j;
//! for a group g with scale l_g, mean within-group utility Vbar_g and nest
//! probability Q_g, d ln P_c / d l_g = -Q_g (I_g - Vbar_g/l_g), plus, when g is
//! c's group, I_g - V_c/l^2 - (l - 1) Vbar_g/l^2.

use super::{Nested, Work};
use crate::design::Design;
use crate::model::logit::Compensated;
use crate::model::Eval;

/// A piece's scratch and its log-likelihood sum.
struct Scratch {
    v: Vec<f64>,
    w: Work,
    ll: Compensated,
}

impl Scratch {
    fn new(m: &Nested, d: &Design) -> Scratch {
        Scratch {
            v: vec![0.0; d.alternatives()],
            w: m.work(),
            ll: Compensated::default(),
        }
    }
}

/// Adds situation `i`'s weighted log-likelihood term to `s.ll` and, when `grad`
/// is given, its weighted score to `grad`.
fn situation(
    m: &Nested,
    d: &Design,
    beta: &[f64],
    i: usize,
    s: &mut Scratch,
    grad: Option<&mut [f64]>,
) {
    let Scratch { v, w, ll } = s;
    let obs = &*d.obs;
    let wi = obs.weight[i];
    let c = obs.chosen[i] as usize;
    d.utilities(beta, i, v);
    m.situation(beta, v, w);
    let gc = m.group_of[c];
    let lam = w.lam[gc];
    let log_within = (v[c] - w.max[gc]) / lam - w.sum[gc].ln();
    ll.add(wi * (w.a[gc] - w.log_denominator + log_within));
    let Some(grad) = grad else { return };
    for (j, vj) in v.iter().enumerate() {
        if !vj.is_finite() {
            continue;
        }
        let mut r = -w.p[j];
        if j == c {
            r += 1.0 / lam;
        }
        if m.group_of[j] == gc {
            r += (lam - 1.0) / lam * w.cond[j];
        }
        if r == 0.0 {
            continue;
        }
        for f in &d.features[j] {
            grad[f.param] += wi * r * d.value(i, j, f.value);
        }
    }
    for (g, k) in m.scale.iter().enumerate() {
        let (Some(k), true) = (k, w.a[g].is_finite()) else {
            continue;
        };
        let l = w.lam[g];
        let mut r = -w.q[g] * (w.iv[g] - w.vbar[g] / l);
        if g == gc {
            r += w.iv[g] - v[c] / (l * l) - (l - 1.0) * w.vbar[g] / (l * l);
        }
        grad[*k] += wi * r;
    }
}

/// One pass: log-likelihood and, if asked, its gradient at `beta`. A scale at
/// or below zero gives a log-likelihood of -inf (outside the model). The
/// blocked pass does the work; this per-situation one is its reference.
pub fn evaluate(m: &Nested, d: &Design, beta: &[f64], want_grad: bool) -> Eval {
    let k = d.params;
    if !m.scales_valid(beta) {
        return Eval {
            ll: f64::NEG_INFINITY,
            grad: if want_grad { vec![0.0; k] } else { Vec::new() },
            hess: None,
        };
    }
    super::block::evaluate(m, d, beta, want_grad)
}

/// The same pass situation by situation (the blocked pass's reference in tests).
#[cfg(test)]
pub fn evaluate_reference(m: &Nested, d: &Design, beta: &[f64], want_grad: bool) -> Eval {
    let k = d.params;
    let parts = crate::design::on_pieces(d.situations(), |r| {
        let mut s = Scratch::new(m, d);
        let mut g = vec![0.0; if want_grad { k } else { 0 }];
        for i in r {
            let grad = want_grad.then_some(g.as_mut_slice());
            situation(m, d, beta, i, &mut s, grad);
        }
        (s.ll, g)
    });
    let mut ll = Compensated::default();
    let mut grad = vec![0.0; if want_grad { k } else { 0 }];
    for (l, g) in parts {
        ll.add(l.value());
        grad.iter_mut().zip(&g).for_each(|(a, b)| *a += b);
    }
    Eval {
        ll: ll.value(),
        grad,
        hess: None,
    }
}

/// Each situation's weighted score, in situation order.
pub fn for_each_score(m: &Nested, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
    let mut s = Scratch::new(m, d);
    let mut g = vec![0.0; d.params];
    for i in 0..d.situations() {
        g.iter_mut().for_each(|x| *x = 0.0);
        situation(m, d, beta, i, &mut s, Some(&mut g));
        f(i, &g);
    }
}
