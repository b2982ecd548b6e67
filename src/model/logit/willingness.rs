//! The logit written in willingness-to-pay space (`[model].space =
//! "willingness"`): an exact reparameterisation of the preference-space logit.
//! A pass maps the parameters to preference coefficients (b_price = -alpha,
//! b_k = alpha w_k), runs the logit's pass there and carries the gradient,
//! Hessian and scores back by the chain rule; the search starts from the
//! preference-space logit's estimates, mapped. The analyses see the
//! preference coefficients as the model's one coefficient point.

use std::sync::Arc;

use super::Logit;
use crate::design::Design;
use crate::model::space::Willingness;
use crate::model::{
    Abilities, CoefficientDerivatives, Eval, Family, FamilyRef, FamilyWarning, Points,
};
use crate::spec::Spec;

/// The logit in willingness-to-pay space.
#[derive(Debug)]
pub struct WillingnessLogit {
    pub logit: Logit,
    pub space: Willingness,
}

impl WillingnessLogit {
    fn preference(&self, theta: &[f64]) -> Vec<f64> {
        let mut b = vec![0.0; theta.len()];
        self.space.preference(theta, &mut b);
        b
    }
}

/// The one coefficient point: the preference coefficients.
struct Mapped(Willingness);

impl Points for Mapped {
    fn count(&self) -> usize {
        1
    }
    fn same_as(&self, _i: usize, _previous: usize) -> bool {
        true
    }
    fn fill(&self, beta: &[f64], _i: usize, out: &mut [f64]) {
        self.0.preference(beta, &mut out[..beta.len()]);
    }
    /// b_price = -alpha: -1 by alpha; b_k = alpha w_k: w_k by alpha, alpha by w_k.
    fn derivatives(&self, beta: &[f64], _i: usize, out: &mut CoefficientDerivatives) -> bool {
        let w = &self.0;
        let alpha = beta[w.price];
        out.pairs.clear();
        out.values.clear();
        out.pairs.push((w.price, w.price));
        out.values.push(-1.0);
        for &k in &w.values {
            out.pairs.extend([(k, w.price), (k, k)]);
            out.values.extend([beta[k], alpha]);
        }
        true
    }
}

impl Family for WillingnessLogit {
    fn name(&self) -> &'static str {
        "logit"
    }

    fn abilities(&self) -> Abilities {
        Abilities {
            odds_ratios: false,
            ..self.logit.abilities()
        }
    }

    fn evaluate(&self, d: &Design, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
        let b = self.preference(beta);
        let e = self
            .logit
            .evaluate(d, &b, want_grad || want_hess, want_hess);
        let mut grad = vec![0.0; if want_grad { beta.len() } else { 0 }];
        if want_grad {
            self.space.chain_gradient(beta, &e.grad, &mut grad);
        }
        let hess = match (&e.hess, want_hess) {
            (Some(h), true) => Some(self.space.chain_hessian(beta, &e.grad, h)),
            _ => None,
        };
        Eval {
            ll: e.ll,
            grad,
            hess,
        }
    }

    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
        let b = self.preference(beta);
        let mut out = vec![0.0; beta.len()];
        self.logit.for_each_score(d, &b, &mut |i, s| {
            self.space.chain_gradient(beta, s, &mut out);
            f(i, &out)
        });
    }

    fn probabilities(&self, beta: &[f64], v: &[f64], p: &mut [f64]) {
        self.logit.probabilities(beta, v, p)
    }

    fn probabilities_after(
        &self,
        beta: &[f64],
        v0: &[f64],
        p0: &[f64],
        v1: &[f64],
        p1: &mut [f64],
    ) {
        self.logit.probabilities_after(beta, v0, p0, v1, p1)
    }

    fn probabilities_of_points(
        &self,
        v: &mut [f64],
        points: usize,
        scratch: &mut Vec<f64>,
    ) -> bool {
        self.logit.probabilities_of_points(v, points, scratch)
    }

    fn dprob(&self, beta: &[f64], v: &[f64], p: &[f64], dp: &mut [f64]) {
        self.logit.dprob(beta, v, p, dp)
    }

    /// At the one coefficient point (the preference coefficients): the
    /// logit's; `Mapped::derivatives` carries them to the parameters.
    fn d2prob(&self, v: &[f64], p: &[f64], dp: &[f64], d2p: &mut [f64]) -> bool {
        self.logit.d2prob(v, p, dp, d2p)
    }

    #[allow(clippy::too_many_arguments)]
    fn d2prob_along(
        &self,
        v: &[f64],
        p: &[f64],
        dp: &[f64],
        d2p: &mut [f64],
        x: &[f64],
        e: &[f64],
        kf: usize,
        g: &mut [f64],
    ) -> bool {
        self.logit.d2prob_along(v, p, dp, d2p, x, e, kf, g)
    }

    fn caution(&self, spec: &Spec) -> Option<String> {
        let logit = self.logit.caution(spec);
        let space = format!(
            "The model is written in willingness-to-pay space: each coefficient is a value in units of `{}`, the price, and `{}` is the price scale; it is the same model as the logit in preference space.",
            spec.parameters[self.space.price].name, spec.parameters[self.space.price].name
        );
        Some(match logit {
            Some(l) => format!("{l} {space}"),
            None => space,
        })
    }

    fn start_from(&self) -> Option<FamilyRef> {
        Some(Arc::new(self.logit))
    }

    fn after_first_search(&self, _spec: &Spec, _d: &Design, beta: &mut [f64], by_simpler: bool) {
        if by_simpler {
            let b = beta.to_vec();
            self.space.from_preference(&b, beta);
        }
    }

    fn mixture(&self, _d: &Design) -> Option<Arc<dyn Points>> {
        Some(Arc::new(Mapped(self.space.clone())))
    }

    fn willingness(&self) -> Option<&Willingness> {
        Some(&self.space)
    }

    fn warnings(&self, spec: &Spec, _d: &Design, beta: &[f64]) -> Vec<FamilyWarning> {
        price_scale_warning(spec, &self.space, beta[self.space.price])
    }

    fn structure(&self, spec: &Spec) -> Vec<String> {
        vec![structure_line(spec, &self.space)]
    }
}

/// The warning when the estimated price scale is not positive: the price
/// then raises utility, and the values' signs are reversed.
pub fn price_scale_warning(spec: &Spec, w: &Willingness, alpha: f64) -> Vec<FamilyWarning> {
    if alpha > 0.0 {
        return Vec::new();
    }
    let name = spec.parameters[w.price].name.clone();
    vec![FamilyWarning {
        code: "price_scale_not_positive",
        parameters: vec![name.clone()],
        message: format!(
            "the price scale `{name}` is estimated at {alpha:.4}, not above 0: a higher price makes an alternative more attractive, so the willingness-to-pay values read with reversed signs; check the price's data and sign"
        ),
    }]
}

/// The report's line on the space.
pub fn structure_line(spec: &Spec, w: &Willingness) -> String {
    let price = &spec.parameters[w.price].name;
    format!(
        "willingness-to-pay space: `{price}` is the price scale; every other coefficient is a value in units of `{price}` per unit of its variable"
    )
}
