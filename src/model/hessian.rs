//! The Hessian a covariance needs: the family's analytic one where it has it,
//! else central differences of its analytic gradient with a step chosen per
//! parameter, made symmetric; the outer product of the scores, a cheap
//! starting metric for the search of such families; and each parameter's
//! scale in the data's units, which keeps steps and tests unit-free.

use super::{Eval, Family};
use crate::design::{Design, Value};

/// Relative step of the central differences: the cube root of the machine
/// epsilon balances truncation against rounding (common practice).
const STEP: f64 = 6.055_454_452_393_343e-6;

/// Log-likelihood, gradient and Hessian at `beta`; only the rows and columns of
/// `free` are differenced (the others stay zero) when the Hessian is not analytic.
pub fn with_hessian(family: &dyn Family, d: &Design, beta: &[f64], free: &[usize]) -> Eval {
    if family.abilities().analytic_hessian {
        return family.evaluate(d, beta, true, true);
    }
    let mut e = family.evaluate(d, beta, true, false);
    e.hess = Some(differenced(family, d, beta, free));
    e
}

/// The Hessian (K x K row-major) by central differences of the analytic gradient.
pub fn differenced(family: &dyn Family, d: &Design, beta: &[f64], free: &[usize]) -> Vec<f64> {
    let k = beta.len();
    let mut h = vec![0.0; k * k];
    let mut b = beta.to_vec();
    let scale = scales_at(family, d, beta);
    for &a in free {
        // Relative to the parameter's size, or to the size that moves utility
        // by one standard deviation of its variable when it is near 0, so that
        // the step does not depend on the units of the data.
        let step = STEP * beta[a].abs().max(1.0 / scale[a]);
        b[a] = beta[a] + step;
        let up = family.evaluate(d, &b, true, false).grad;
        b[a] = beta[a] - step;
        let down = family.evaluate(d, &b, true, false).grad;
        b[a] = beta[a];
        for &c in free {
            h[c * k + a] = (up[c] - down[c]) / (2.0 * step);
        }
    }
    for &a in free {
        for &c in free {
            if c > a {
                let m = 0.5 * (h[a * k + c] + h[c * k + a]);
                h[a * k + c] = m;
                h[c * k + a] = m;
            }
        }
    }
    h
}

/// Minus the outer product of the per-situation (or per-decision-maker)
/// scores over the free parameters, negated back: the information-matrix
/// approximation of the negative Hessian (Berndt, Hall, Hall and Hausman
/// 1974), free block only, from one pass of scores.
pub fn outer_product(
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    free: &[usize],
) -> nalgebra::DMatrix<f64> {
    let m = free.len();
    let mut a = nalgebra::DMatrix::<f64>::zeros(m, m);
    family.for_each_score(d, beta, &mut |_, s| {
        for x in 0..m {
            let sx = s[free[x]];
            if sx == 0.0 {
                continue;
            }
            for y in x..m {
                a[(x, y)] += sx * s[free[y]];
            }
        }
    });
    for x in 0..m {
        for y in 0..x {
            a[(x, y)] = a[(y, x)];
        }
    }
    a
}

/// Each parameter's scale in the data's units: the standard deviation of its
/// variable over the available alternatives of every situation (a change of
/// 1 / scale in the coefficient moves utility by one standard deviation);
/// 1 for constants and the family's own parameters, and for a variable that
/// does not vary. The spread of a random coefficient whose distribution is
/// not on the log scale takes its location's scale; the location and spread
/// of a coefficient's logarithm are unitless (scale 1).
pub fn scales(family: &dyn Family, d: &Design) -> Vec<f64> {
    let mut out: Vec<f64> = (0..d.params).map(|p| variable_spread(d, p)).collect();
    family.adjust_scales(d, &mut out);
    for rc in family.random_coefficients() {
        if rc.location >= out.len() {
            continue;
        }
        let unit = if rc.distribution.is_log() {
            // The location and spread of the coefficient's logarithm: unitless.
            out[rc.location] = 1.0;
            1.0
        } else {
            out[rc.location]
        };
        // The spread and any Cholesky entries of its row share its unit.
        for &(p, _) in &rc.loadings {
            if p < out.len() {
                out[p] = unit;
            }
        }
    }
    out
}

/// `scales` at the parameters `beta`: in willingness-to-pay space a value
/// moves utility by the price scale times its variable, so its scale is the
/// variable's standard deviation times the price scale (at its median, for a
/// lognormal one).
pub fn scales_at(family: &dyn Family, d: &Design, beta: &[f64]) -> Vec<f64> {
    let mut out = scales(family, d);
    if let (Some(w), Some(alpha)) = (
        family.willingness(),
        super::space::price_scale(family, beta),
    ) {
        let spread_of = |k: usize| {
            family
                .random_coefficients()
                .into_iter()
                .find(|t| t.location == k)
                .filter(|t| !t.distribution.is_log())
                .map(|t| t.loadings)
        };
        for &k in &w.values {
            out[k] *= alpha;
            for (p, _) in spread_of(k).unwrap_or_default() {
                out[p] *= alpha;
            }
        }
    }
    out
}

/// The standard deviation of parameter `p`'s variable (1 for a constant, for
/// a parameter without a variable or a variable that does not vary).
pub fn variable_spread(d: &Design, p: usize) -> f64 {
    let (mut n, mut s, mut s2) = (0.0, 0.0, 0.0);
    for (j, feats) in d.features.iter().enumerate() {
        for f in feats.iter().filter(|f| f.param == p) {
            if f.value == Value::One {
                return 1.0;
            }
            for i in 0..d.situations() {
                if d.available(i, j) {
                    let x = d.value(i, j, f.value);
                    n += 1.0;
                    s += x;
                    s2 += x * x;
                }
            }
        }
    }
    if n < 2.0 {
        return 1.0;
    }
    // Centred on the mean: one pass, with the mean's square taken out.
    let sd = ((s2 - s * s / n) / (n - 1.0)).max(0.0).sqrt();
    if sd > 0.0 && sd.is_finite() {
        sd
    } else {
        1.0
    }
}
