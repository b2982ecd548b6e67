//! Uncertainty of derived figures: the delta method (with a Jacobian given
//! analytically or by central differences), and Krinsky-Robb draws of the parameter vector from the
//! estimated asymptotic normal distribution.

use nalgebra::DMatrix;

use crate::estimate::Fit;
use crate::rng::Rng;

/// The most parameter draws asked for at once (Krinsky-Robb intervals, forecast bands).
pub const MAX_DRAWS: usize = 1_000_000;

/// Refuses more than `MAX_DRAWS` draws of `params` parameters, each also
/// keeping `extra` numbers, with the memory the request would take.
pub fn check_draws(n: usize, params: usize, extra: usize) -> crate::error::Result<()> {
    crate::error::check_count("--draws", n, MAX_DRAWS, 8 * (params + extra) + 24)
}

/// Standard errors of the figures `f(beta)` by the delta method, using the fit's
/// inference covariance. `f` returns a vector of fixed length.
pub fn delta_se(fit: &Fit, f: &dyn Fn(&[f64]) -> Vec<f64>) -> Vec<f64> {
    delta_se_with(fit, f, &|| {})
}

/// `delta_se`, calling `each` after the figures at the estimates and after
/// each free parameter's pair of differences (1 + free parameters calls).
pub fn delta_se_with(fit: &Fit, f: &dyn Fn(&[f64]) -> Vec<f64>, each: &dyn Fn()) -> Vec<f64> {
    se_from_jacobian(fit, &numeric_jacobian_with(fit, f, each))
}

/// The central-difference Jacobian of `f` at the estimates (rows: the figures,
/// columns: the free parameters), each step a thousandth of the parameter's
/// standard error.
pub fn numeric_jacobian(fit: &Fit, f: &dyn Fn(&[f64]) -> Vec<f64>) -> Vec<Vec<f64>> {
    numeric_jacobian_with(fit, f, &|| {})
}

/// `numeric_jacobian`, calling `each` as `delta_se_with` does.
pub fn numeric_jacobian_with(
    fit: &Fit,
    f: &dyn Fn(&[f64]) -> Vec<f64>,
    each: &dyn Fn(),
) -> Vec<Vec<f64>> {
    let cov = fit.inference_covariance();
    let base = f(&fit.beta);
    each();
    let m = base.len();
    let free = &fit.free;
    let mut jac = vec![vec![0.0; free.len()]; m];
    for (x, &p) in free.iter().enumerate() {
        let se = cov[(p, p)].sqrt();
        let h = if se.is_finite() && se > 0.0 {
            1e-3 * se
        } else {
            1e-6 * fit.beta[p].abs().max(1e-3)
        };
        let mut up = fit.beta.clone();
        up[p] += h;
        let mut dn = fit.beta.clone();
        dn[p] -= h;
        let fu = f(&up);
        let fd = f(&dn);
        for r in 0..m {
            jac[r][x] = (fu[r] - fd[r]) / (2.0 * h);
        }
        each();
    }
    jac
}

/// Delta-method standard errors sqrt(J V J') of figures whose Jacobian by the
/// free parameters is `jac` (one row per figure), with the fit's inference covariance.
pub fn se_from_jacobian(fit: &Fit, jac: &[Vec<f64>]) -> Vec<f64> {
    let cov = fit.inference_covariance();
    let free = &fit.free;
    jac.iter()
        .map(|row| {
            let mut v = 0.0;
            for (a, &pa) in free.iter().enumerate() {
                for (b, &pb) in free.iter().enumerate() {
                    v += row[a] * cov[(pa, pb)] * row[b];
                }
            }
            v.max(0.0).sqrt()
        })
        .collect()
}

/// Parameter vectors drawn from N(beta, covariance) over the free parameters
/// (fixed ones stay put). `None` when the covariance is not positive definite.
pub fn draws(fit: &Fit, n: usize, seed: u64) -> Option<Vec<Vec<f64>>> {
    let cov = fit.inference_covariance();
    let m = fit.free.len();
    let sub = DMatrix::from_fn(m, m, |a, b| cov[(fit.free[a], fit.free[b])]);
    if sub.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let l = sub.cholesky()?.l();
    let mut rng = Rng::new(seed);
    let mut out = Vec::with_capacity(n);
    let mut z = vec![0.0; m];
    for _ in 0..n {
        z.iter_mut().for_each(|x| *x = rng.normal());
        let mut b = fit.beta.clone();
        for a in 0..m {
            let mut s = 0.0;
            for c in 0..=a {
                s += l[(a, c)] * z[c];
            }
            b[fit.free[a]] += s;
        }
        out.push(b);
    }
    Some(out)
}

/// The p-th quantile (0..1) of values, by linear interpolation between order statistics.
pub fn quantile(sorted: &[f64], p: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let h = p * (sorted.len() - 1) as f64;
    let lo = h.floor() as usize;
    let hi = h.ceil() as usize;
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}
