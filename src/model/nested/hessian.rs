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
    /// Gathered rows of situations: x_j (K each) and T_j = w Σ_m hvv[j][m] x_m
    /// followed by w hvl[j][g] (K + groups each); `filled` rows so far.
    xb: Vec<f64>,
    tb: Vec<f64>,
    filled: usize,
    capacity: usize,
    /// Σ T' X over the flushed blocks, (K + groups) × K.
    out: Vec<f64>,
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
            xb: vec![0.0; BLOCK * j * k],
            tb: vec![0.0; BLOCK * j * (k + g)],
            filled: 0,
            capacity: BLOCK * j,
            out: vec![0.0; (k + g) * k],
            inv: vec![0.0; g],
            hess: vec![0.0; k * k],
        }
    }
}

/// Situations gathered before their rows are multiplied out in one product.
const BLOCK: usize = 64;

impl Scratch {
    /// Adds the gathered rows' T' X to `out` (one matrix product).
    fn flush(&mut self, k: usize, wide: usize) {
        let n = self.filled;
        if n == 0 {
            return;
        }
        // SAFETY: tb holds n rows of `wide` (read as its transpose, wide × n),
        // xb n rows of k, out wide × k; every index is within them.
        unsafe {
            matrixmultiply::dgemm(
                wide,
                n,
                k,
                1.0,
                self.tb.as_ptr(),
                1,
                wide as isize,
                self.xb.as_ptr(),
                k as isize,
                1,
                1.0,
                self.out.as_mut_ptr(),
                k as isize,
                1,
            );
        }
        self.filled = 0;
    }

    /// Flushes and moves `out` into the Hessian: the coefficients' block and,
    /// per group with a scale, its row and column of cross derivatives.
    fn finish(&mut self, m: &Nested, k: usize) {
        let wide = k + m.members.len();
        self.flush(k, wide);
        self.hess
            .iter_mut()
            .zip(&self.out[..k * k])
            .for_each(|(h, o)| *h += o);
        for (g, kg) in m.scale.iter().enumerate() {
            let Some(kg) = *kg else { continue };
            for q in 0..k {
                let y = self.out[(k + g) * k + q];
                self.hess[kg * k + q] += y;
                self.hess[q * k + kg] += y;
            }
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
        s.finish(m, k);
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
        v,
        w,
        b,
        hvv,
        hvl,
        inv,
        ..
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
            hvl[j * groups..(j + 1) * groups]
                .iter_mut()
                .for_each(|x| *x = 0.0);
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
    let wide = k + groups;
    let base = s.filled;
    // The situation's rows x_j, dense, into the block.
    let x = &mut s.xb[base * k..(base + n) * k];
    x.iter_mut().for_each(|v| *v = 0.0);
    for j in 0..n {
        if !s.v[j].is_finite() {
            continue;
        }
        for f in &d.features[j] {
            x[j * k + f.param] += d.value(i, j, f.value);
        }
    }
    // Its rows of T: w Σ_m hvv[j][m] x_m, then w hvl[j][g] per group.
    for j in 0..n {
        let t = &mut s.tb[(base + j) * wide..(base + j + 1) * wide];
        t.iter_mut().for_each(|v| *v = 0.0);
        if !s.v[j].is_finite() {
            continue;
        }
        for mm in 0..n {
            let h = wi * s.hvv[j * n + mm];
            if h != 0.0 {
                let xm = &s.xb[(base + mm) * k..(base + mm + 1) * k];
                t[..k].iter_mut().zip(xm).for_each(|(a, b)| *a += h * b);
            }
        }
        for g in 0..groups {
            t[k + g] = wi * s.hvl[j * groups + g];
        }
    }
    s.filled += n;
    if s.filled + n > s.capacity {
        s.flush(k, wide);
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
                    x += 2.0 * (s.v[c] - w.vbar[g]) / l.powi(3) + (l - 1.0) * s.var[g] / l.powi(4);
                }
            }
            s.hess[*kg * k + *kk] += wi * x;
        }
    }
}
