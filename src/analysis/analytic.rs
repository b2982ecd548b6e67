//! The aggregate elasticities and marginal effects together with their
//! derivatives by the free parameters, in one pass over the situations, for
//! families whose probabilities depend on the parameters only through the
//! utilities and that give their second derivatives (`Family::d2prob`).
//!
//! With D = dP/dV and T = d²P/dV dV of a situation and X[m][q] the value
//! multiplying parameter q in alternative m (so dV_m/dβ_q = X[m][q]):
//! dP_j/dβ_q = Σ_m D[j][m] X[m][q] and dD[j][k]/dβ_q = Σ_m T[j][k][m] X[m][q]
//! (called G below). Each figure is a weighted sum over situations of D
//! times values and coefficients, so its derivative is the same sum of G plus,
//! for the coefficient that multiplies the changed value, the sum of D itself;
//! elasticities are ratios to the summed probabilities (quotient rule).
//! Everything is summed per piece of the situations, in piece order.

use super::sensitivity::{add_point, finish, Layout, Sens, TermMap};
use crate::design::Design;
use crate::model::enumerate::Enumeration;
use crate::model::Family;

/// The figures (as `sensitivity::sensitivities`) and their Jacobian, rows in
/// `Sens::flat` order and columns over `free`; `None` when the family has no
/// analytic second derivatives or its coefficients vary across decision makers.
pub fn sensitivities_with_jacobian(
    family: &dyn Family,
    d: &Design,
    map: &TermMap,
    beta: &[f64],
    free: &[usize],
) -> Option<(Sens, Vec<Vec<f64>>)> {
    if family.mixture(d).is_some() || !applies(family, beta, d.alternatives()) {
        return None;
    }
    let lay = Layout::new(d, map);
    let sz = Sizes::new(lay, free.len());
    // Each parameter's position among the free ones.
    let mut column = vec![None; beta.len()];
    for (q, &p) in free.iter().enumerate() {
        column[p] = Some(q);
    }
    let w = &d.obs.weight;
    let parts = Enumeration::new(family, d, beta).points(
        |_| Scratch::new(sz),
        |s, pt| {
            family.dprob(pt.coefficients, pt.v, pt.p, &mut s.dp);
            family.d2prob(pt.v, pt.p, &s.dp, &mut s.d2p);
            let wi = w[pt.i] * pt.weight;
            add_point(
                d,
                map,
                lay,
                pt.i,
                wi,
                pt.coefficients,
                pt.p,
                &s.dp,
                &mut s.values,
            );
            s.add_derivatives(d, map, &column, pt.i, wi);
        },
    );
    let mut total = Scratch::new(sz);
    for part in parts {
        total
            .values
            .iter_mut()
            .zip(&part.values)
            .for_each(|(a, b)| *a += b);
        total
            .sums
            .iter_mut()
            .zip(&part.sums)
            .for_each(|(a, b)| *a += b);
    }
    let tw = d.total_weight();
    let sens = finish(lay, &total.values, tw);
    let jac = total.jacobian(map, beta, free, tw);
    Some((sens, jac))
}

/// Whether the family gives second derivatives (asked on a situation where
/// every alternative is available).
fn applies(family: &dyn Family, beta: &[f64], j: usize) -> bool {
    let v = vec![0.0; j];
    let mut p = vec![0.0; j];
    let mut dp = vec![0.0; j * j];
    family.probabilities(beta, &v, &mut p);
    family.dprob(beta, &v, &p, &mut dp);
    family.d2prob(&v, &p, &dp, &mut vec![0.0; j * j * j])
}

/// The dimensions: alternatives, attributes, characteristics, free parameters.
#[derive(Clone, Copy, Debug)]
struct Sizes {
    lay: Layout,
    kf: usize,
}

impl Sizes {
    fn new(lay: Layout, kf: usize) -> Sizes {
        Sizes { lay, kf }
    }
    /// Offsets in `Scratch::sums` of
    /// `[A a,k,j][AG a,k,q,j][BD k,j][BG k,q,j][CD c,l,j][CG c,l,q,j][PE q,j]`
    /// (A: Σ w x_ak D[j][k]; AG: Σ w x_ak G[j][k][q]; B: the same without x;
    /// C: the same with the characteristic z_c; PE: Σ w dP_j/dβ_q), and the width.
    fn offsets(&self) -> [usize; 7] {
        let Layout { j, na, nc } = self.lay;
        let jq = j * self.kf * j;
        let ag = na * j * j;
        let bd = ag + na * jq;
        let bg = bd + j * j;
        let cd = bg + jq;
        let cg = cd + nc * j * j;
        let pe = cg + nc * jq;
        [ag, bd, bg, cd, cg, pe, pe + self.kf * j]
    }
}

/// One piece's sums and the per-situation scratch.
struct Scratch {
    sz: Sizes,
    values: Vec<f64>,
    sums: Vec<f64>,
    dp: Vec<f64>,
    d2p: Vec<f64>,
    /// G[k][q][j] = dD[j][k]/dβ_q of the current situation.
    g: Vec<f64>,
    /// E[q][j] = dP_j/dβ_q of the current situation.
    e: Vec<f64>,
}

impl Scratch {
    fn new(sz: Sizes) -> Scratch {
        let j = sz.lay.j;
        Scratch {
            sz,
            values: vec![0.0; sz.lay.offsets().4],
            sums: vec![0.0; sz.offsets()[6]],
            dp: vec![0.0; j * j],
            d2p: vec![0.0; j * j * j],
            g: vec![0.0; j * sz.kf * j],
            e: vec![0.0; sz.kf * j],
        }
    }

    /// Adds situation `i`'s derivative sums (weight `wi`), from `dp` and `d2p`.
    fn add_derivatives(
        &mut self,
        d: &Design,
        map: &TermMap,
        column: &[Option<usize>],
        i: usize,
        wi: f64,
    ) {
        let Layout { j, na, nc } = self.sz.lay;
        let kf = self.sz.kf;
        let jq = kf * j;
        let [ag, bd, bg, cd, cg, pe, _] = self.sz.offsets();
        self.g.iter_mut().for_each(|x| *x = 0.0);
        self.e.iter_mut().for_each(|x| *x = 0.0);
        for (m, feats) in d.features.iter().enumerate() {
            if !d.available(i, m) {
                continue;
            }
            for f in feats {
                let Some(q) = column[f.param] else { continue };
                let x = d.value(i, m, f.value);
                for jj in 0..j {
                    self.e[q * j + jj] += self.dp[jj * j + m] * x;
                }
                for k in 0..j {
                    let g = &mut self.g[(k * kf + q) * j..(k * kf + q + 1) * j];
                    for (jj, gj) in g.iter_mut().enumerate() {
                        *gj += self.d2p[(jj * j + k) * j + m] * x;
                    }
                }
            }
        }
        let s = &mut self.sums;
        for k in 0..j {
            if !d.available(i, k) {
                continue;
            }
            let gk = &self.g[k * jq..(k + 1) * jq];
            for a in 0..na {
                if map.attribute[a][k].is_none() {
                    continue;
                }
                let wx = wi * d.obs.attributes[a][i * j + k];
                for jj in 0..j {
                    s[(a * j + k) * j + jj] += wx * self.dp[jj * j + k];
                }
                axpy(&mut s[ag + (a * j + k) * jq..][..jq], wx, gk);
            }
            for jj in 0..j {
                s[bd + k * j + jj] += wi * self.dp[jj * j + k];
            }
            axpy(&mut s[bg + k * jq..][..jq], wi, gk);
            for c in 0..nc {
                let wz = wi * d.obs.characteristics[c][i];
                for jj in 0..j {
                    s[cd + (c * j + k) * j + jj] += wz * self.dp[jj * j + k];
                }
                axpy(&mut s[cg + (c * j + k) * jq..][..jq], wz, gk);
            }
        }
        axpy(&mut s[pe..pe + jq], wi, &self.e);
    }

    /// The Jacobian of `Sens::flat()` by the free parameters from the summed
    /// `values` and `sums`.
    fn jacobian(&self, map: &TermMap, beta: &[f64], free: &[usize], tw: f64) -> Vec<Vec<f64>> {
        let Layout { j, na, nc } = self.sz.lay;
        let kf = self.sz.kf;
        let jq = kf * j;
        let [ag, bd, bg, cd, cg, pe, _] = self.sz.offsets();
        let (o1, o2, o3, o4, width) = self.sz.lay.offsets();
        let (v, s) = (&self.values, &self.sums);
        let psum = &v[o4..o4 + j];
        let mut rows = vec![vec![0.0; kf]; width - j];
        // A figure's sum S over P_j's sum: dS/Σw P_j − S Σw dP_j/dβ_q / (Σw P_j)².
        let quotient = |num: f64, dnum: f64, jj: usize, q: usize| {
            if psum[jj] > 0.0 {
                dnum / psum[jj] - num * s[pe + q * j + jj] / (psum[jj] * psum[jj])
            } else {
                f64::NAN
            }
        };
        let own = |param: Option<usize>, q: usize| param == Some(free[q]);
        for a in 0..na {
            for k in 0..j {
                let Some(param) = map.attribute[a][k] else {
                    continue;
                };
                let b = beta[param];
                for jj in 0..j {
                    let idx = (a * j + k) * j + jj;
                    for q in 0..kf {
                        let at = (k * kf + q) * j + jj;
                        let (mut dn, mut dm) =
                            (b * s[ag + (a * j + k) * jq + q * j + jj], b * s[bg + at]);
                        if own(Some(param), q) {
                            dn += s[idx];
                            dm += s[bd + k * j + jj];
                        }
                        rows[idx][q] = quotient(v[idx], dn, jj, q);
                        rows[o1 + idx][q] = dm / tw;
                    }
                }
            }
        }
        for c in 0..nc {
            for jj in 0..j {
                let idx = c * j + jj;
                for q in 0..kf {
                    let (mut dn, mut dm) = (0.0, 0.0);
                    for l in 0..j {
                        let Some(param) = map.characteristic[c][l] else {
                            continue;
                        };
                        let b = beta[param];
                        dn += b * s[cg + (c * j + l) * jq + q * j + jj];
                        dm += b * s[bg + (l * kf + q) * j + jj];
                        if own(Some(param), q) {
                            dn += s[cd + (c * j + l) * j + jj];
                            dm += s[bd + l * j + jj];
                        }
                    }
                    rows[o2 + idx][q] = quotient(v[o2 + idx], dn, jj, q);
                    rows[o3 + idx][q] = dm / tw;
                }
            }
        }
        rows
    }
}

/// y += a x.
#[inline]
fn axpy(y: &mut [f64], a: f64, x: &[f64]) {
    for (yi, xi) in y.iter_mut().zip(x) {
        *yi += a * xi;
    }
}
