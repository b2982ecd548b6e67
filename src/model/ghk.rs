//! The GHK simulator (Geweke 1989; Hajivassiliou and McFadden 1998; Börsch-Supan
//! and Hajivassiliou 1993; Train, Discrete Choice Methods with Simulation, 2nd
//! ed., ch. 5.6): P(w < b) for w ~ N(0, L L'), L lower triangular, by
//! drawing the standardised components one at a time from their normal
//! distribution truncated so that the earlier inequalities hold:
//! P = (1/R) sum_r prod_k Phi(z_kr), z_kr = (b_k - sum_{l<k} L_kl eta_lr) / L_kk,
//! eta_kr = Phi^-1(u_kr Phi(z_kr)). With the uniforms u fixed the simulated
//! probability is a smooth function of b and L; its gradient is carried
//! forward through the recursion (d eta / d z = u phi(z) / phi(eta)).
//!
//! The building block of a multinomial probit (the probability of a choice is
//! such a rectangle probability of the utility differences); not yet used by a
//! family.

use super::normal;

/// Scratch for one call, sized for dimension `m`.
#[derive(Clone, Debug, Default)]
pub struct Work {
    eta: Vec<f64>,
    /// d eta_l / d theta, [l][theta].
    deta: Vec<f64>,
    dz: Vec<f64>,
    dlogp: Vec<f64>,
}

/// Number of derivative slots: the m upper limits, then the m x m entries of L (row-major).
pub fn slots(m: usize) -> usize {
    m + m * m
}

/// The simulated P(w < b), w ~ N(0, L L') with `l` lower triangular (row-major,
/// m x m, positive diagonal), over `draws` rows of m - 1 uniforms in `u`
/// (`[draw][k]`). With `grad` (length `slots(m)`), its gradient by b (first m)
/// and by the entries of L (then m x m, row-major; the upper triangle stays 0).
pub fn probability(
    l: &[f64],
    m: usize,
    b: &[f64],
    u: &[f64],
    draws: usize,
    mut grad: Option<&mut [f64]>,
    w: &mut Work,
) -> f64 {
    let p_slots = slots(m);
    w.eta.resize(m, 0.0);
    let want = grad.is_some();
    if want {
        w.deta.resize(m * p_slots, 0.0);
        w.dz.resize(p_slots, 0.0);
        w.dlogp.resize(p_slots, 0.0);
    }
    if let Some(g) = grad.as_deref_mut() {
        g.iter_mut().for_each(|x| *x = 0.0);
    }
    let dims = m.saturating_sub(1);
    let mut total = 0.0;
    for r in 0..draws.max(1) {
        let ur = if dims == 0 {
            &[][..]
        } else {
            &u[r * dims..(r + 1) * dims]
        };
        let pr = draw_log_probability(l, m, b, ur, want, w).exp();
        total += pr;
        if let Some(g) = grad.as_deref_mut() {
            for (g, d) in g.iter_mut().zip(&w.dlogp) {
                *g += pr * d;
            }
        }
    }
    let n = draws.max(1) as f64;
    if let Some(g) = grad {
        g.iter_mut().for_each(|x| *x /= n);
    }
    total / n
}

/// One draw's log of prod_k Phi(z_k) with the uniforms `ur`; with `want`, its
/// gradient in `w.dlogp`.
#[inline]
fn draw_log_probability(
    l: &[f64],
    m: usize,
    b: &[f64],
    ur: &[f64],
    want: bool,
    w: &mut Work,
) -> f64 {
    let p_slots = slots(m);
    let mut logp = 0.0;
    if want {
        w.dlogp.iter_mut().for_each(|x| *x = 0.0);
    }
    for k in 0..m {
        let lkk = l[k * m + k];
        let mut mu = 0.0;
        for j in 0..k {
            mu += l[k * m + j] * w.eta[j];
        }
        let z = (b[k] - mu) / lkk;
        let log_phi = normal::log_cdf(z);
        logp += log_phi;
        if want {
            carry_z(l, m, k, z, w);
        }
        if k + 1 < m {
            let uk = ur[k];
            let target = (uk * log_phi.exp()).clamp(1e-300, 1.0 - 1e-16);
            let eta = normal::quantile(target);
            w.eta[k] = eta;
            if want {
                // d eta / d z = u phi(z) / phi(eta), in logs for the tails.
                let ratio = uk * (-0.5 * z * z + 0.5 * eta * eta).exp();
                for t in 0..p_slots {
                    w.deta[k * p_slots + t] = ratio * w.dz[t];
                }
            }
        }
    }
    logp
}

/// The derivatives of z_k into `w.dz`, and lambda(z_k) dz_k added to `w.dlogp`.
#[inline]
fn carry_z(l: &[f64], m: usize, k: usize, z: f64, w: &mut Work) {
    let p_slots = slots(m);
    let lkk = l[k * m + k];
    // dz = (db_k - dmu) / L_kk - z dL_kk / L_kk
    w.dz.iter_mut().for_each(|x| *x = 0.0);
    w.dz[k] = 1.0 / lkk;
    for j in 0..k {
        w.dz[m + k * m + j] -= w.eta[j] / lkk;
        let lkj = l[k * m + j];
        for t in 0..p_slots {
            w.dz[t] -= lkj * w.deta[j * p_slots + t] / lkk;
        }
    }
    w.dz[m + k * m + k] -= z / lkk;
    let lambda = normal::inv_mills(z);
    for (d, dz) in w.dlogp.iter_mut().zip(&w.dz) {
        *d += lambda * dz;
    }
}
