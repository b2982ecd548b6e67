//! One pass of the latent class logit over its decision makers. For decision
//! maker n with membership shares pi_nc and class logits P_tc over their
//! situations t: L_n = sum_c pi_nc prod_t P_tc(chosen), summed in logs by
//! log-sum-exp. The posterior class probabilities h_nc = pi_nc prod_t P_tc /
//! L_n give the gradient: h_nc times class c's logit score for its
//! utility parameters, (h_nc - pi_nc) z_n for its membership parameters.
//! With class weights given instead of the posteriors (an EM M-step), the
//! pass returns the expected complete-data log-likelihood Q and its
//! gradient. Its Hessian (asked for) is that of Q: per class the weighted
//! logit Hessian, and the membership logit's; it steers the EM steps.
//! Passes are cut into pieces of decision makers that depend on their number
//! alone, summed in piece order.

use super::layout::Layout;
use crate::design::{heavy_pieces, on_ranges, Design};
use crate::model::logit::Compensated;
use crate::model::mixed::Panel;

/// What a pass computes besides the log-likelihood.
#[derive(Clone, Copy, Debug, Default)]
pub struct Want {
    pub grad: bool,
    pub hess: bool,
    /// The log-likelihood's own Hessian (with the posteriors).
    pub full: bool,
    pub scores: bool,
    pub posteriors: bool,
}

/// A pass's sums: log-likelihood (or Q), gradient (K), Q's Hessian (K x K),
/// per decision maker weighted scores (`[n * K + p]`) and class
/// probabilities (`[n * C + c]`: the posteriors, or the weights given).
#[derive(Clone, Debug, Default)]
pub struct Totals {
    pub ll: f64,
    pub grad: Vec<f64>,
    pub hess: Vec<f64>,
    /// The log-likelihood's Hessian (K x K): Q's plus, per decision maker,
    /// sum_c h_c u_c u_c' - u u' with u_c the gradient of log(pi_c L_c).
    pub full: Vec<f64>,
    pub scores: Vec<f64>,
    pub posteriors: Vec<f64>,
}

/// The fixed inputs of a pass.
pub struct Pass<'a> {
    pub lay: &'a Layout,
    pub d: &'a Design,
    pub units: &'a Panel,
    pub beta: &'a [f64],
    /// Class weights per decision maker to use instead of the posteriors.
    pub given: Option<&'a [f64]>,
    pub want: Want,
}

/// One piece's scratch and sums.
struct Work {
    s: usize,
    /// Each class's coefficient in each slot, `[c * S + s]`.
    bs: Vec<f64>,
    x: Vec<f64>,
    v: Vec<f64>,
    p: Vec<f64>,
    xbar: Vec<f64>,
    logl: Vec<f64>,
    g: Vec<f64>,
    h: Vec<f64>,
    pi: Vec<f64>,
    post: Vec<f64>,
    z: Vec<f64>,
    u: Vec<f64>,
    /// [c][K]: the gradient of log(pi_c L_c) of one decision maker.
    uc: Vec<f64>,
    ll: Compensated,
    grad: Vec<f64>,
    hess: Vec<f64>,
    full: Vec<f64>,
    scores: Vec<f64>,
    posteriors: Vec<f64>,
}

impl Pass<'_> {
    pub fn run(&self) -> Totals {
        let k = self.d.params;
        let parts = on_ranges(heavy_pieces(self.units.units, 64), |r| {
            let mut w = self.work();
            for n in r {
                self.unit(&mut w, n);
            }
            w
        });
        let mut t = Totals {
            grad: vec![0.0; if self.want.grad { k } else { 0 }],
            hess: vec![0.0; if self.want.hess { k * k } else { 0 }],
            full: vec![0.0; if self.want.full { k * k } else { 0 }],
            ..Totals::default()
        };
        let mut ll = Compensated::default();
        for w in parts {
            ll.add(w.ll.value());
            t.grad.iter_mut().zip(&w.grad).for_each(|(a, b)| *a += b);
            t.hess.iter_mut().zip(&w.hess).for_each(|(a, b)| *a += b);
            t.full.iter_mut().zip(&w.full).for_each(|(a, b)| *a += b);
            t.scores.extend_from_slice(&w.scores);
            t.posteriors.extend_from_slice(&w.posteriors);
        }
        t.ll = ll.value();
        t
    }

    fn work(&self) -> Work {
        let (lay, d) = (self.lay, self.d);
        let (c, s, j, k) = (lay.classes, lay.slots.len(), d.alternatives(), d.params);
        let mut bs = vec![0.0; c * s];
        for cc in 0..c {
            for ss in 0..s {
                bs[cc * s + ss] = self.beta[lay.index[cc][ss]];
            }
        }
        let second = self.want.hess || self.want.full;
        let hs = if second { c * s * s } else { 0 };
        Work {
            s,
            bs,
            x: vec![0.0; j * s],
            v: vec![0.0; j],
            p: vec![0.0; j],
            xbar: vec![0.0; s],
            logl: vec![0.0; c],
            g: vec![0.0; c * s],
            h: vec![0.0; hs],
            pi: vec![0.0; c],
            post: vec![0.0; c],
            z: vec![0.0; 1 + lay.columns.len()],
            u: vec![0.0; k],
            uc: vec![0.0; if self.want.full { c * k } else { 0 }],
            ll: Compensated::default(),
            grad: vec![0.0; if self.want.grad { k } else { 0 }],
            hess: vec![0.0; if self.want.hess { k * k } else { 0 }],
            full: vec![0.0; if self.want.full { k * k } else { 0 }],
            scores: Vec::new(),
            posteriors: Vec::new(),
        }
    }

    /// Decision maker n: their situations under every class, then their sums.
    fn unit(&self, w: &mut Work, n: usize) {
        w.logl.iter_mut().for_each(|x| *x = 0.0);
        w.g.iter_mut().for_each(|x| *x = 0.0);
        w.h.iter_mut().for_each(|x| *x = 0.0);
        let members = self.units.situations_of(n);
        for &i in members {
            self.situation(w, i as usize);
        }
        let Some(&first) = members.first() else {
            return;
        };
        let first = first as usize;
        self.lay.shares(&self.d.obs, self.beta, first, &mut w.pi);
        self.lay.covariates(self.d, first, &mut w.z);
        let ll_n = self.classes_of(w, n);
        let weight = self.units.weight(self.d, n);
        w.ll.add(weight * ll_n);
        if self.want.posteriors {
            w.posteriors.extend_from_slice(&w.post);
        }
        if self.want.grad || self.want.scores || self.want.full {
            self.unit_gradient(w);
            if self.want.grad {
                w.grad
                    .iter_mut()
                    .zip(&w.u)
                    .for_each(|(a, b)| *a += weight * b);
            }
            if self.want.scores {
                w.scores.extend(w.u.iter().map(|b| weight * b));
            }
        }
        if self.want.hess {
            let mut hess = std::mem::take(&mut w.hess);
            self.unit_hessian(w, weight, &mut hess);
            w.hess = hess;
        }
        if self.want.full {
            let mut full = std::mem::take(&mut w.full);
            self.unit_hessian(w, weight, &mut full);
            self.unit_spread(w, weight, &mut full);
            w.full = full;
        }
    }

    /// The class weights of decision maker n into `post` (posteriors, or
    /// those given) and their term of the log-likelihood (or of Q).
    fn classes_of(&self, w: &mut Work, n: usize) -> f64 {
        let c = self.lay.classes;
        if let Some(given) = self.given {
            w.post.copy_from_slice(&given[n * c..(n + 1) * c]);
            return (0..c)
                .filter(|&k| w.post[k] > 0.0)
                .map(|k| w.post[k] * (w.pi[k].ln() + w.logl[k]))
                .sum();
        }
        for k in 0..c {
            w.post[k] = w.pi[k].ln() + w.logl[k];
        }
        let m = w.post.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        if !m.is_finite() {
            w.post.iter_mut().for_each(|x| *x = 0.0);
            return m;
        }
        let mut sum = 0.0;
        for x in w.post.iter_mut() {
            *x = (*x - m).exp();
            sum += *x;
        }
        w.post.iter_mut().for_each(|x| *x /= sum);
        m + sum.ln()
    }

    /// Situation i under each class: its log-probability of the chosen
    /// alternative, score and (asked for) Hessian sums.
    fn situation(&self, w: &mut Work, i: usize) {
        let d = self.d;
        let (j, s) = (d.alternatives(), w.s);
        w.x.iter_mut().for_each(|x| *x = 0.0);
        for (a, feats) in d.features.iter().enumerate() {
            if !d.available(i, a) {
                continue;
            }
            for f in feats {
                if let Some(slot) = self.lay.slot_of[f.param] {
                    w.x[a * s + slot] += d.value(i, a, f.value);
                }
            }
        }
        let chosen = d.obs.chosen[i] as usize;
        for c in 0..self.lay.classes {
            let b = &w.bs[c * s..(c + 1) * s];
            for a in 0..j {
                w.v[a] = if d.available(i, a) {
                    w.x[a * s..(a + 1) * s]
                        .iter()
                        .zip(b)
                        .map(|(x, y)| x * y)
                        .sum()
                } else {
                    f64::NEG_INFINITY
                };
            }
            let lse = crate::model::logit::softmax(&w.v, &mut w.p);
            w.logl[c] += w.v[chosen] - lse;
            for ss in 0..s {
                let xbar: f64 = (0..j).map(|a| w.p[a] * w.x[a * s + ss]).sum();
                w.xbar[ss] = xbar;
                w.g[c * s + ss] += w.x[chosen * s + ss] - xbar;
            }
            if !w.h.is_empty() {
                let h = &mut w.h[c * s * s..(c + 1) * s * s];
                for a in 0..j {
                    let pa = w.p[a];
                    if pa == 0.0 {
                        continue;
                    }
                    let xa = &w.x[a * s..(a + 1) * s];
                    for s1 in 0..s {
                        let e1 = pa * (xa[s1] - w.xbar[s1]);
                        if e1 == 0.0 {
                            continue;
                        }
                        for s2 in s1..s {
                            h[s1 * s + s2] += e1 * (xa[s2] - w.xbar[s2]);
                        }
                    }
                }
            }
        }
    }

    /// The decision maker's gradient (unweighted) into `u`.
    fn unit_gradient(&self, w: &mut Work) {
        let lay = self.lay;
        let s = w.s;
        w.u.iter_mut().for_each(|x| *x = 0.0);
        for c in 0..lay.classes {
            for ss in 0..s {
                w.u[lay.index[c][ss]] += w.post[c] * w.g[c * s + ss];
            }
        }
        for (c, m) in lay.member.iter().enumerate() {
            let r = w.post[c + 1] - w.pi[c + 1];
            for (p, z) in m.iter().zip(&w.z) {
                w.u[*p] += r * z;
            }
        }
    }

    /// Adds the decision maker's term of Q's Hessian to `hess`.
    fn unit_hessian(&self, w: &Work, weight: f64, hess: &mut [f64]) {
        let lay = self.lay;
        let (s, k) = (w.s, self.d.params);
        for c in 0..lay.classes {
            let f = weight * w.post[c];
            if f == 0.0 {
                continue;
            }
            let h = &w.h[c * s * s..(c + 1) * s * s];
            let idx = &lay.index[c];
            for s1 in 0..s {
                for s2 in s1..s {
                    let v = f * h[s1 * s + s2];
                    hess[idx[s1] * k + idx[s2]] -= v;
                    if s1 != s2 {
                        hess[idx[s2] * k + idx[s1]] -= v;
                    }
                }
            }
        }
        for (c1, m1) in lay.member.iter().enumerate() {
            for (c2, m2) in lay.member.iter().enumerate() {
                let (p1, p2) = (w.pi[c1 + 1], w.pi[c2 + 1]);
                let cov = if c1 == c2 { p1 - p1 * p1 } else { -p1 * p2 };
                for (a, za) in m1.iter().zip(&w.z) {
                    for (b, zb) in m2.iter().zip(&w.z) {
                        hess[a * k + b] -= weight * cov * za * zb;
                    }
                }
            }
        }
    }

    /// Adds sum_c h_c u_c u_c' - u u' (weighted) to the log-likelihood's
    /// Hessian, u_c the gradient of log(pi_c L_c) and u = sum_c h_c u_c.
    fn unit_spread(&self, w: &mut Work, weight: f64, full: &mut [f64]) {
        let lay = self.lay;
        let (s, k) = (w.s, self.d.params);
        w.uc.iter_mut().for_each(|x| *x = 0.0);
        for c in 0..lay.classes {
            let uc = &mut w.uc[c * k..(c + 1) * k];
            for ss in 0..s {
                uc[lay.index[c][ss]] += w.g[c * s + ss];
            }
            for (e, m) in lay.member.iter().enumerate() {
                let r = if c == e + 1 { 1.0 } else { 0.0 } - w.pi[e + 1];
                for (p, z) in m.iter().zip(&w.z) {
                    uc[*p] += r * z;
                }
            }
        }
        for c in 0..lay.classes {
            let f = weight * w.post[c];
            if f == 0.0 {
                continue;
            }
            let uc = &w.uc[c * k..(c + 1) * k];
            for a in 0..k {
                if uc[a] == 0.0 {
                    continue;
                }
                let fa = f * uc[a];
                for b in 0..k {
                    full[a * k + b] += fa * uc[b];
                }
            }
        }
        for a in 0..k {
            if w.u[a] == 0.0 {
                continue;
            }
            let fa = weight * w.u[a];
            for b in 0..k {
                full[a * k + b] -= fa * w.u[b];
            }
        }
    }
}
