//! The nested logit's analytic Hessian, in one pass over the design in pieces
//! (scratch allocated once per piece). With the notation of `pass.rs` (l_g a
//! group's scale, P_{j|g}, P_j, Q_g, I_g, Vbar_g) and
//! B_g = I_g − Vbar_g/l_g, Var_g = Σ_{j∈g} P_{j|g} (V_j − Vbar_g)², the
//! second derivatives of ln P_c (c chosen, in group h with scale l) are:
//!
//! - by utilities: d²/dV_j dV_m = (l − 1)/l² 1[j, m ∈ h] P_{j|h} (1[j=m] − P_{m|h}) − dP_j/dV_m;
//! - by a utility and a scale: d²/dV_m dl_g = −Q_g (1[m∈g] P_{m|g} − P_m) B_g
//!   \+ Q_g 1[m∈g] P_{m|g} (V_m − Vbar_g)/l_g², plus, when g = h,
//!   1\[m∈h\] P_{m|h}/l − 1\[m=c\]/l² − (l − 1)/l² 1\[m∈h\] P_{m|h} (1 + (V_m − Vbar_h)/l);
//! - by two scales: d²/dl_g dl_k = −Q_g (1[g=k] − Q_k) B_g B_k − 1[g=k] Q_g Var_g/l_g³,
//!   plus, when g = k = h, 2 (V_c − Vbar_h)/l³ + (l − 1) Var_h/l⁴.
//!
//! Utilities are linear in the coefficients (dV_j/dβ = x_j), so the
//! coefficients' block is X' (d²/dV dV) X. Checked against differences of the
//! analytic gradient by the families' suite (`tests/all/families.rs`).

use super::{Nested, Work};
use crate::design::Design;

/// A piece's scratch: utilities, the per-situation second derivatives and
/// the Hessian summed so far.
struct Scratch {
    v: Vec<f64>,
    w: Work,
    var: Vec<f64>,
    b: Vec<f64>,
    /// d²/dV_j dV_m, J × J.
    hvv: Vec<f64>,
    /// d²/dV_m dl_g, J × groups.
    hvl: Vec<f64>,
    /// Σ_m hvv[j][m] x_m, J × K.
    t: Vec<f64>,
    /// Each group's 1/l_g.
    inv: Vec<f64>,
    hess: Vec<f64>,
}

impl Scratch {
    fn new(m: &Nested, d: &Design) -> Scratch {
        let (j, g, k) = (d.alternatives(), m.members.len(), d.params);
        Scratch {
            v: vec![0.0; j],
            w: m.work(),
            var: vec![0.0; g],
            b: vec![0.0; g],
            hvv: vec![0.0; j * j],
            hvl: vec![0.0; j * g],
            t: vec![0.0; j * k],
            inv: vec![0.0; g],
            hess: vec![0.0; k * k],
        }
    }
}

/// The Hessian (K × K, row-major) of the weighted log-likelihood at `beta`.
pub fn hessian(m: &Nested, d: &Design, beta: &[f64]) -> Vec<f64> {
    let k = d.params;
    let parts = crate::design::on_pieces(d.situations(), |r| {
        let mut s = Scratch::new(m, d);
        for i in r {
            situation(m, d, beta, i, &mut s);
        }
        s.hess
    });
    let mut out = vec![0.0; k * k];
    for p in parts {
        out.iter_mut().zip(&p).for_each(|(a, b)| *a += b);
    }
    out
}

/// The groups' spreads and B_g of situation `v` (after `Nested::situation`).
fn spreads(m: &Nested, s: &mut Scratch) {
    let Scratch { v, w, var, b, .. } = s;
    for (g, alts) in m.members.iter().enumerate() {
        var[g] = 0.0;
        b[g] = 0.0;
        if !w.a[g].is_finite() {
            continue;
        }
        for &a in alts {
            if v[a].is_finite() && w.cond[a] > 0.0 {
                var[g] += w.cond[a] * (v[a] - w.vbar[g]).powi(2);
            }
        }
        b[g] = w.iv[g] - w.vbar[g] / w.lam[g];
    }
}

/// Fills `hvv` and `hvl` for situation `i` chosen `c` (group `h`); the
/// groups' reciprocals are taken once, so the loops divide nothing.
fn second_derivatives(m: &Nested, s: &mut Scratch, c: usize) {
    let n = s.v.len();
    let h = m.group_of[c];
    let groups = m.members.len();
    let Scratch {
        v, w, b, hvv, hvl, inv, ..
    } = s;
    for (i, l) in inv.iter_mut().zip(&w.lam) {
        *i = 1.0 / l;
    }
    let l = w.lam[h];
    let (il, within) = (inv[h], (l - 1.0) * inv[h] * inv[h]);
    for j in 0..n {
        let gj = m.group_of[j];
        let (ij, rj) = (inv[gj], (w.lam[gj] - 1.0) * inv[gj]);
        let row = &mut hvv[j * n..(j + 1) * n];
        if !v[j].is_finite() {
            row.iter_mut().for_each(|x| *x = 0.0);
            hvl[j * groups..(j + 1) * groups].iter_mut().for_each(|x| *x = 0.0);
            continue;
        }
        let pj = w.p[j];
        for (mm, x) in row.iter_mut().enumerate() {
            if !v[mm].is_finite() {
                *x = 0.0;
                continue;
            }
            let same = gj == m.group_of[mm];
            let eq = if j == mm { 1.0 } else { 0.0 };
            let mut dp = eq * ij - w.p[mm];
            if same {
                dp += rj * w.cond[mm];
            }
            let mut y = -pj * dp;
            if same && gj == h {
                y += within * w.cond[j] * (eq - w.cond[mm]);
            }
            *x = y;
        }
        for g in 0..groups {
            let at = j * groups + g;
            hvl[at] = 0.0;
            if !w.a[g].is_finite() || m.scale[g].is_none() {
                continue;
            }
            let inside = gj == g;
            let pj_g = if inside { w.cond[j] } else { 0.0 };
            let dev = v[j] - w.vbar[g];
            let mut x = -w.q[g] * (pj_g - pj) * b[g];
            if inside {
                x += w.q[g] * pj_g * dev * inv[g] * inv[g];
            }
            if g == h {
                let eq = if j == c { 1.0 } else { 0.0 };
                x += pj_g * il - eq * il * il - within * pj_g * (1.0 + dev * il);
            }
            hvl[at] = x;
        }
    }
}

/// Adds situation `i`'s weighted Hessian to `s.hess`.
fn situation(m: &Nested, d: &Design, beta: &[f64], i: usize, s: &mut Scratch) {
    let wi = d.obs.weight[i];
    let c = d.obs.chosen[i] as usize;
    d.utilities(beta, i, &mut s.v);
    m.situation(beta, &s.v, &mut s.w);
    spreads(m, s);
    second_derivatives(m, s, c);
    let (n, k, groups) = (s.v.len(), d.params, m.members.len());
    // t[j][q] = Σ_m hvv[j][m] x_m[q].
    s.t.iter_mut().for_each(|x| *x = 0.0);
    for mm in 0..n {
        if !s.v[mm].is_finite() {
            continue;
        }
        for f in &d.features[mm] {
            let x = d.value(i, mm, f.value);
            for j in 0..n {
                s.t[j * k + f.param] += s.hvv[j * n + mm] * x;
            }
        }
    }
    for j in 0..n {
        if !s.v[j].is_finite() {
            continue;
        }
        for f in &d.features[j] {
            let x = wi * d.value(i, j, f.value);
            let row = &mut s.hess[f.param * k..(f.param + 1) * k];
            for (hq, tq) in row.iter_mut().zip(&s.t[j * k..(j + 1) * k]) {
                *hq += x * tq;
            }
            for g in 0..groups {
                if let Some(kg) = m.scale[g] {
                    let y = x * s.hvl[j * groups + g];
                    s.hess[f.param * k + kg] += y;
                    s.hess[kg * k + f.param] += y;
                }
            }
        }
    }
    scales(m, s, c, wi, k);
}

/// The scales' block: d²/dl_g dl_k.
fn scales(m: &Nested, s: &mut Scratch, c: usize, wi: f64, k: usize) {
    let h = m.group_of[c];
    let w = &s.w;
    for (g, kg) in m.scale.iter().enumerate() {
        let (Some(kg), true) = (kg, w.a[g].is_finite()) else {
            continue;
        };
        for (gk, kk) in m.scale.iter().enumerate() {
            let (Some(kk), true) = (kk, w.a[gk].is_finite()) else {
                continue;
            };
            let eq = (g == gk) as u8 as f64;
            let lg = w.lam[g];
            let mut x = -w.q[g] * (eq - w.q[gk]) * s.b[g] * s.b[gk];
            if g == gk {
                x -= w.q[g] * s.var[g] / lg.powi(3);
                if g == h {
                    let l = lg;
                    x += 2.0 * (s.v[c] - w.vbar[g]) / l.powi(3)
                        + (l - 1.0) * s.var[g] / l.powi(4);
                }
            }
            s.hess[*kg * k + *kk] += wi * x;
        }
    }
}
