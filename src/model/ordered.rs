//! Ordered logit and ordered probit for ratings and scales (McCullagh 1980;
//! Greene, Econometric Analysis, 7th ed., ch. 18.3): one latent index x'b of
//! the characteristics (no constants, no base) and cut-points c_1 < ... < c_{J-1}
//! between the J ordered categories, P(y <= k) = F(c_k - x'b) with F the
//! logistic or standard normal distribution. The cut-points are parameters
//! `cut_<category>` for every category but the last; the search never leaves
//! the ordered region (an unordered vector has log-likelihood -inf), so they
//! are estimated and reported as thresholds, their errors from the Hessian in
//! that form (the delta method of any other parameterisation gives the same).
//! Gradient and Hessian are analytic.
//! Every alternative's utility is the index, so dP/dV is carried on the first.

use super::normal;
use super::{Abilities, Eval, Family};
use crate::design::{on_pieces, Design};
use crate::model::logit::Compensated;
use crate::spec::{FamilyParameter, FamilyRules, Layout, Spec, SpecView};

/// Ordered logit (`probit = false`) or ordered probit.
#[derive(Clone, Debug)]
pub struct Ordered {
    pub probit: bool,
    /// Parameter index of each cut-point, lowest first (J - 1 of them).
    pub cuts: Vec<usize>,
}

/// The spec rules of both ordered families.
pub struct Rules {
    pub probit: bool,
}

impl FamilyRules for Rules {
    fn single_index(&self) -> bool {
        true
    }

    fn check_parameters(&self, parameters: &[crate::spec::Parameter]) -> Result<(), String> {
        let cuts: Vec<&crate::spec::Parameter> = parameters
            .iter()
            .filter(|p| matches!(p.term, crate::spec::Term::Family(_)))
            .collect();
        for w in cuts.windows(2) {
            if w[1].start <= w[0].start {
                return Err(format!(
                    "[parameters].{}: cut-points must increase from the lowest category up; {} = {} is not above {} = {}",
                    w[1].name, w[1].name, w[1].start, w[0].name, w[0].start
                ));
            }
        }
        Ok(())
    }

    fn check(&self, spec: &SpecView) -> Result<Vec<FamilyParameter>, String> {
        let family = if self.probit {
            "ordered-probit"
        } else {
            "ordered-logit"
        };
        if !matches!(spec.layout, Layout::Wide { .. }) {
            return Err(format!(
                "[data].layout: family \"{family}\" reads one rating per row: use layout \"wide\""
            ));
        }
        if let Some(a) = spec.attributes.first() {
            return Err(format!(
                "[[attribute]] {}: family \"{family}\" has no attributes (one latent index of the rater's characteristics); use [[characteristic]]",
                a.name
            ));
        }
        let j = spec.alternatives.len();
        if j < 3 {
            return Err(format!(
                "[alternatives]: family \"{family}\" needs three or more ordered categories, found {j}; with two it is a binary model (family \"logit\" or \"probit\")"
            ));
        }
        let mut out = Vec::new();
        for (k, alt) in spec.alternatives[..j - 1].iter().enumerate() {
            let name = format!("cut_{}", alt.name);
            if spec.parameters.iter().any(|p| p.name == name) {
                return Err(format!("[[characteristic]] {name}: the name is taken by the cut-point above category `{}`", alt.name));
            }
            out.push(FamilyParameter {
                name,
                label: "cut-points".into(),
                // Evenly spaced around 0: ordered, as the search needs.
                start: k as f64 - (j as f64 - 2.0) / 2.0,
                null: 0.0,
                in_reference: true,
            });
        }
        Ok(out)
    }
}

impl Ordered {
    pub fn new(spec: &Spec, probit: bool) -> Ordered {
        let j = spec.alternatives.len();
        let cuts = spec.alternatives[..j.saturating_sub(1)]
            .iter()
            .filter_map(|a| spec.parameter_index(&format!("cut_{}", a.name)))
            .collect();
        Ordered { probit, cuts }
    }

    fn cdf(&self, t: f64) -> f64 {
        if t.is_infinite() {
            return if t > 0.0 { 1.0 } else { 0.0 };
        }
        if self.probit {
            normal::cdf(t)
        } else if t >= 0.0 {
            1.0 / (1.0 + (-t).exp())
        } else {
            let e = t.exp();
            e / (1.0 + e)
        }
    }

    /// The density's derivative f'(t).
    fn dpdf(&self, t: f64) -> f64 {
        if !t.is_finite() {
            0.0
        } else if self.probit {
            -t * normal::pdf(t)
        } else {
            let e = (-t.abs()).exp();
            let f = e / ((1.0 + e) * (1.0 + e));
            // f' = f (1 - 2F), F(t) = 1/(1+e^-t); with e = e^-|t|, 1 - 2F = -sign(t)(1-e)/(1+e).
            -t.signum() * f * (1.0 - e) / (1.0 + e)
        }
    }

    fn pdf(&self, t: f64) -> f64 {
        if self.probit {
            normal::pdf(t)
        } else {
            let e = (-t.abs()).exp();
            e / ((1.0 + e) * (1.0 + e))
        }
    }

    /// F(hi) - F(lo) for lo < hi (either may be infinite), accurate in both tails.
    fn between(&self, lo: f64, hi: f64) -> f64 {
        if lo > 0.0 {
            self.cdf(-lo) - self.cdf(-hi)
        } else {
            self.cdf(hi) - self.cdf(lo)
        }
    }

    /// The thresholds around category `k`: (c_{k-1}, c_k), infinite at the ends.
    fn bounds(&self, beta: &[f64], k: usize) -> (f64, f64) {
        let lo = if k == 0 {
            f64::NEG_INFINITY
        } else {
            beta[self.cuts[k - 1]]
        };
        let hi = self.cuts.get(k).map(|&p| beta[p]).unwrap_or(f64::INFINITY);
        (lo, hi)
    }

    fn ordered(&self, beta: &[f64]) -> bool {
        self.cuts.windows(2).all(|w| beta[w[0]] < beta[w[1]])
            && self.cuts.iter().all(|&p| beta[p].is_finite())
    }

    /// Adds situation `i`'s weighted term to `ll`, its score to `grad` and, when
    /// given, its Hessian (K x K, row-major) to `hess`; `x` is scratch of length K.
    #[allow(clippy::too_many_arguments)]
    fn situation(
        &self,
        d: &Design,
        beta: &[f64],
        i: usize,
        v: &mut [f64],
        x: &mut [f64],
        ll: &mut Compensated,
        grad: Option<&mut [f64]>,
        hess: Option<&mut [f64]>,
    ) {
        let w = d.obs.weight[i];
        let c = d.obs.chosen[i] as usize;
        d.utilities(beta, i, v);
        let xb = v[c];
        let (lo, hi) = self.bounds(beta, c);
        let (a, b) = (hi - xb, lo - xb);
        let p = self.between(b, a);
        ll.add(w * p.ln());
        let Some(g) = grad else { return };
        let fa = if a.is_finite() { self.pdf(a) } else { 0.0 };
        let fb = if b.is_finite() { self.pdf(b) } else { 0.0 };
        // The index's values: x (dense over the K parameters).
        x.iter_mut().for_each(|e| *e = 0.0);
        for f in &d.features[c] {
            x[f.param] += d.value(i, c, f.value);
        }
        let (ga, gb) = (fa / p, -fb / p);
        for (gk, xk) in g.iter_mut().zip(x.iter()) {
            *gk -= w * (ga + gb) * xk;
        }
        let upper = self.cuts.get(c).copied();
        let lower = c.checked_sub(1).map(|k| self.cuts[k]);
        if let Some(u) = upper {
            g[u] += w * ga;
        }
        if let Some(l) = lower {
            g[l] += w * gb;
        }
        let Some(h) = hess else { return };
        let k = x.len();
        let haa = self.dpdf(a) / p - ga * ga;
        let hbb = -self.dpdf(b) / p - gb * gb;
        let hab = -ga * gb;
        // d/d beta = -(d/da + d/db) x; cut-points enter a (upper) and b (lower).
        let hxx = haa + 2.0 * hab + hbb;
        for r in 0..k {
            if x[r] == 0.0 {
                continue;
            }
            for s in 0..k {
                h[r * k + s] += w * hxx * x[r] * x[s];
            }
        }
        let mut cross = |cut: usize, hc: f64, hself: f64| {
            for r in 0..k {
                h[r * k + cut] -= w * hc * x[r];
                h[cut * k + r] -= w * hc * x[r];
            }
            h[cut * k + cut] += w * hself;
        };
        if let Some(u) = upper {
            cross(u, haa + hab, haa);
        }
        if let Some(l) = lower {
            cross(l, hab + hbb, hbb);
        }
        if let (Some(u), Some(l)) = (upper, lower) {
            h[u * k + l] += w * hab;
            h[l * k + u] += w * hab;
        }
    }
}

impl Family for Ordered {
    fn name(&self) -> &'static str {
        if self.probit {
            "ordered-probit"
        } else {
            "ordered-logit"
        }
    }

    fn abilities(&self) -> Abilities {
        Abilities {
            analytic_hessian: true,
            ordered: true,
            ..Abilities::default()
        }
    }

    fn evaluate(&self, d: &Design, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
        let k = d.params;
        let want_grad = want_grad || want_hess;
        if !self.ordered(beta) {
            return Eval {
                ll: f64::NEG_INFINITY,
                grad: if want_grad { vec![0.0; k] } else { Vec::new() },
                hess: want_hess.then(|| vec![0.0; k * k]),
            };
        }
        let parts = on_pieces(d.situations(), |r| {
            let mut v = vec![0.0; d.alternatives()];
            let mut x = vec![0.0; k];
            let mut ll = Compensated::default();
            let mut g = vec![0.0; if want_grad { k } else { 0 }];
            let mut h = vec![0.0; if want_hess { k * k } else { 0 }];
            for i in r {
                let grad = want_grad.then_some(g.as_mut_slice());
                let hess = want_hess.then_some(h.as_mut_slice());
                self.situation(d, beta, i, &mut v, &mut x, &mut ll, grad, hess);
            }
            (ll, g, h)
        });
        let mut ll = Compensated::default();
        let mut grad = vec![0.0; if want_grad { k } else { 0 }];
        let mut hess = vec![0.0; if want_hess { k * k } else { 0 }];
        for (l, g, h) in parts {
            ll.add(l.value());
            grad.iter_mut().zip(&g).for_each(|(a, b)| *a += b);
            hess.iter_mut().zip(&h).for_each(|(a, b)| *a += b);
        }
        Eval {
            ll: ll.value(),
            grad,
            hess: want_hess.then_some(hess),
        }
    }

    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
        let mut v = vec![0.0; d.alternatives()];
        let mut x = vec![0.0; d.params];
        let mut g = vec![0.0; d.params];
        let mut ll = Compensated::default();
        for i in 0..d.situations() {
            g.iter_mut().for_each(|e| *e = 0.0);
            self.situation(d, beta, i, &mut v, &mut x, &mut ll, Some(&mut g), None);
            f(i, &g);
        }
    }

    /// Category probabilities; the index is read from the first utility.
    fn probabilities(&self, beta: &[f64], v: &[f64], p: &mut [f64]) {
        let xb = v[0];
        for (k, pk) in p.iter_mut().enumerate() {
            let (lo, hi) = self.bounds(beta, k);
            *pk = self.between(lo - xb, hi - xb);
        }
    }

    /// dP_k/dV_0 = f(c_{k-1} - xb) - f(c_k - xb); the other columns are 0.
    fn dprob(&self, beta: &[f64], v: &[f64], _p: &[f64], dp: &mut [f64]) {
        let n = v.len();
        let xb = v[0];
        dp.iter_mut().for_each(|x| *x = 0.0);
        for k in 0..n {
            let (lo, hi) = self.bounds(beta, k);
            let f_hi = if hi.is_finite() {
                self.pdf(hi - xb)
            } else {
                0.0
            };
            let f_lo = if lo.is_finite() {
                self.pdf(lo - xb)
            } else {
                0.0
            };
            dp[k * n] = f_lo - f_hi;
        }
    }

    fn check_observations(
        &self,
        spec: &Spec,
        obs: &crate::data::Observations,
    ) -> Result<(), String> {
        let mut seen = vec![false; obs.alternatives];
        for &c in &obs.chosen {
            seen[c as usize] = true;
        }
        match seen.iter().position(|s| !s) {
            Some(k) => Err(format!(
                "[alternatives.{0}]: category `{0}` is never observed in {1}, so the cut-points around it are not identified; merge it with a neighbouring category or leave it out",
                spec.alternatives[k].name, spec.data.file_written
            )),
            None => Ok(()),
        }
    }

    /// Every category observed identifies the cut-points of a fit; a
    /// forecast reads no observed rating.
    fn check_forecast_data(&self, _spec: &Spec, _d: &Design) -> Result<(), String> {
        Ok(())
    }

    fn caution(&self, _spec: &Spec) -> Option<String> {
        Some(format!(
            "The {} model assumes one latent index moves every category in the same direction (a single index with parallel cut-points); the categories' distances are not known, so compare probabilities, not average ratings.",
            self.name()
        ))
    }
}
