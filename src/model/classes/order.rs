//! The classes' one numbering: by their share in the sample (the average
//! over decision makers of their membership probabilities), largest first,
//! so that the numbering does not depend on where the search went. The
//! membership parameters are re-expressed against the new class 1.

use super::LatentClass;
use crate::design::Design;

/// The average membership probabilities of the decision makers (weighted).
pub(super) fn sample_shares(lc: &LatentClass, d: &Design, beta: &[f64]) -> Vec<f64> {
    let units = lc.units(d);
    let c = lc.lay.classes;
    let mut sums = vec![0.0; c];
    let mut pi = vec![0.0; c];
    let mut total = 0.0;
    for n in 0..units.units {
        let Some(&i) = units.situations_of(n).first() else {
            continue;
        };
        let w = units.weight(d, n);
        lc.lay.shares(&d.obs, beta, i as usize, &mut pi);
        sums.iter_mut().zip(&pi).for_each(|(s, p)| *s += w * p);
        total += w;
    }
    sums.iter_mut()
        .for_each(|s| *s /= total.max(f64::MIN_POSITIVE));
    sums
}

/// Renumbers the classes of `beta` by share, largest first; `true` when the
/// numbering changed. Ties keep their order.
pub(super) fn canonical(lc: &LatentClass, d: &Design, beta: &mut [f64]) -> bool {
    let lay = &lc.lay;
    let shares = sample_shares(lc, d, beta);
    let mut order: Vec<usize> = (0..lay.classes).collect();
    order.sort_by(|&a, &b| shares[b].total_cmp(&shares[a]));
    if order.iter().enumerate().all(|(new, &old)| new == old) {
        return false;
    }
    let old = beta.to_vec();
    for (new, &from) in order.iter().enumerate() {
        for (s, &p) in lay.index[new].iter().enumerate() {
            beta[p] = old[lay.index[from][s]];
        }
    }
    // Membership: class c's index is gamma_c (gamma of class 1 is 0); the
    // new class c is old class order[c], against the new class 1.
    let gamma = |c: usize, m: usize| match c {
        0 => 0.0,
        _ => old[lay.member[c - 1][m]],
    };
    let width = lay.member.first().map_or(0, |m| m.len());
    for new in 1..lay.classes {
        for m in 0..width {
            beta[lay.member[new - 1][m]] = gamma(order[new], m) - gamma(order[0], m);
        }
    }
    true
}
