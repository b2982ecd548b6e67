//! The Hessian a covariance needs: the family's analytic one where it has it,
//! else central differences of its analytic gradient with a step chosen per
//! parameter, made symmetric; and the outer product of the scores, a cheap
//! starting metric for the search of such families.

use super::{Eval, Family};
use crate::design::Design;

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
    for &a in free {
        let step = STEP * beta[a].abs().max(1.0);
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
