//! A prepared scenario's utilities at many coefficient points of one
//! situation at once (a mixture's draws), one row per alternative over the
//! points: the same terms in the same order as `Prepared::utilities` gives
//! each point, with loops that run down the rows.

use super::prepare::Prepared;
use crate::design::Design;

/// Situation `i`'s scenario utilities at `points` coefficient points into
/// `out` (one row per alternative of the scenario), from the points'
/// coefficients `coefs` (one row per parameter) and base utilities `base`
/// (one row per spec alternative).
pub(super) fn utilities_of_points(
    s: &Prepared,
    d: &Design,
    coefs: &[f64],
    (i, r): (usize, usize),
    base: &[f64],
    out: &mut [f64],
) {
    let j = base.len() / r.max(1);
    let coef = |p: usize| &coefs[p * r..(p + 1) * r];
    out[..j * r].copy_from_slice(base);
    let mut add = |k: usize, p: usize, x: f64| {
        for (v, b) in out[k * r..(k + 1) * r].iter_mut().zip(coef(p)) {
            if v.is_finite() {
                *v += b * x;
            }
        }
    };
    for (_, param, k, delta) in &s.attribute_deltas {
        add(*k, *param, delta[i]);
    }
    for (c, delta) in &s.characteristic_deltas {
        for (l, p) in s.map.characteristic[*c].iter().enumerate() {
            if let Some(p) = p {
                add(l, *p, delta[i]);
            }
        }
    }
    for (k, removed) in s.removed.iter().enumerate() {
        if *removed {
            out[k * r..(k + 1) * r].fill(f64::NEG_INFINITY);
        }
    }
    for (m, na) in s.new.iter().enumerate() {
        let row = &mut out[(j + m) * r..(j + m + 1) * r];
        if !na.available[i] {
            row.fill(f64::NEG_INFINITY);
            continue;
        }
        match (na.constant, s.constant_param[na.like]) {
            (Some(c), _) => match s.price_param {
                Some(p) => row.iter_mut().zip(coef(p)).for_each(|(v, b)| *v = -b * c),
                None => row.fill(c),
            },
            (None, Some(p)) => row.copy_from_slice(coef(p)),
            (None, None) => row.fill(0.0),
        }
        let mut add = |p: usize, x: f64| {
            row.iter_mut().zip(coef(p)).for_each(|(v, b)| *v += b * x);
        };
        for (param, values) in &na.attributes {
            add(*param, values[i]);
        }
        for (c, params) in s.map.characteristic.iter().enumerate() {
            if let Some(p) = params[na.like] {
                let mut z = d.obs.characteristics[c][i];
                if let Some((_, delta)) = s.characteristic_deltas.iter().find(|x| x.0 == c) {
                    z += delta[i];
                }
                add(p, z);
            }
        }
    }
}
