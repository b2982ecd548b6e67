//! The mixed logit's score of one decision maker from the per-draw gradient
//! rows of the pass: in willingness-to-pay space the rows are first turned
//! from the preference coefficients to the price scale and the values; then
//! each row is averaged over the draws with the draws' shares of the
//! decision maker's likelihood and carried to the locations, spreads and
//! Cholesky entries by the chain rule.

use super::pass::{Plan, Work};

/// In willingness-to-pay space, turns the gradient rows by the preference
/// coefficients (b_price = -alpha, b_k = alpha w_k) into rows by the price
/// scale and the values: by alpha, -g_price + sum_k g_k w_k; by w_k, alpha g_k.
pub(crate) fn to_values(plan: &Plan, w: &mut Work) {
    let Some(space) = &plan.space else {
        return;
    };
    let r = w.r;
    let price = space.price;
    let mut by_scale = std::mem::take(&mut w.tmp);
    by_scale.clear();
    by_scale.extend(w.g[price * r..(price + 1) * r].iter().map(|g| -g));
    for &k in &space.values {
        let g = &w.g[k * r..(k + 1) * r];
        match plan.dim_of[k] {
            Some(dim) => {
                let values = &w.coef[dim * r..(dim + 1) * r];
                for ((a, g), v) in by_scale.iter_mut().zip(g).zip(values) {
                    *a += g * v;
                }
            }
            None => {
                let v = plan.beta[k];
                for (a, g) in by_scale.iter_mut().zip(g) {
                    *a += g * v;
                }
            }
        }
        for (g, a) in w.g[k * r..(k + 1) * r].iter_mut().zip(&w.scale) {
            *g *= a;
        }
    }
    w.g[price * r..(price + 1) * r].copy_from_slice(&by_scale);
    w.tmp = by_scale;
}

/// Adds `weight` times decision maker n's score (gradient of log L_n) to `out`.
pub(crate) fn add_score(plan: &Plan, n: usize, w: &Work, weight: f64, out: &mut [f64]) {
    let r = w.r;
    for (k, o) in out.iter_mut().enumerate() {
        if plan.dim_of[k].is_some() {
            continue;
        }
        let g = &w.g[k * r..(k + 1) * r];
        let s: f64 = g.iter().zip(&w.omega).map(|(g, o)| g * o).sum();
        *o += weight * s;
    }
    for (dim, t) in plan.terms.iter().enumerate() {
        let loc = t.location;
        let g = &w.g[loc * r..(loc + 1) * r];
        let dm = &w.dm[dim * r..(dim + 1) * r];
        let mut a = 0.0;
        for ((o, g), dm) in w.omega.iter().zip(g).zip(dm) {
            a += o * g * dm;
        }
        out[loc] += weight * a;
        for &(p, d) in &t.loadings {
            let e = plan.panel.draws_of(n, d);
            let mut b = 0.0;
            for (((o, g), dm), e) in w.omega.iter().zip(g).zip(dm).zip(e) {
                b += o * g * dm * e;
            }
            out[p] += weight * b;
        }
    }
}
