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
use crate::model::enumerate::{Baseline, Enumeration, Point};
use crate::model::Family;

#[path = "analytic_points.rs"]
mod points;

/// The figures (as `sensitivity::sensitivities`) and their Jacobian, rows in
/// `Sens::flat` order and columns over `free` (`baseline`, when given, holds
/// the utilities and probabilities at `beta`); `None` when the family has no
/// analytic second derivatives, or its probabilities average over coefficient
/// points that do not give their derivatives by the parameters.
pub fn sensitivities_with_jacobian(
    family: &dyn Family,
    d: &Design,
    map: &TermMap,
    beta: &[f64],
    free: &[usize],
    baseline: Option<&Baseline>,
) -> Option<(Sens, Vec<Vec<f64>>)> {
    // With some alternatives out of focus the figures are differenced
    // instead (the one-pass sums are over every alternative).
    if !map.whole() || !applies(family, beta, d.alternatives()) {
        return None;
    }
    if let Some(m) = family.mixture(d) {
        return points::sensitivities_with_jacobian(family, d, map, (beta, free), &*m, baseline);
    }
    let lay = Layout::new(d, map);
    let sz = Sizes::new(lay, free.len());
    // Each parameter's position among the free ones.
    let mut column = vec![None; beta.len()];
    for (q, &p) in free.iter().enumerate() {
        column[p] = Some(q);
    }
    let w = &d.obs.weight;
    let parts = Enumeration::new(family, d, beta).baseline(baseline).points(
        |_| Scratch::new(sz),
        |s, pt| {
            family.dprob(pt.coefficients, pt.v, pt.p, &mut s.loc.dp);
            let wi = w[pt.i] * pt.weight;
            add_point(
                d,
                map,
                lay,
                pt.i,
                wi,
                pt.coefficients,
                pt.p,
                super::sensitivity::Derivatives {
                    dp: &s.loc.dp,
                    focused: false,
                },
                &mut s.values,
            );
            s.add_derivatives(family, d, map, &column, pt, wi);
        },
    );
    let mut total = Scratch::new(sz);
    for mut part in parts {
        part.flush();
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
        total.pe.iter_mut().zip(&part.pe).for_each(|(a, b)| *a += b);
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

/// Situations gathered before their products are added to the sums (one
/// matrix product per changed alternative and block).
const BLOCK: usize = 128;

impl Sizes {
    fn new(lay: Layout, kf: usize) -> Sizes {
        Sizes { lay, kf }
    }
    /// The multipliers of a changed alternative k: each attribute's value
    /// (x_ak), 1, each characteristic (z_c); all times the weight.
    fn rows(&self) -> usize {
        self.lay.na + 1 + self.lay.nc
    }
    /// A block row of a changed alternative k: G[k][q][j] (q over the free
    /// parameters) then D[j][k].
    fn width(&self) -> usize {
        (self.kf + 1) * self.lay.j
    }
}

/// One piece's sums and the per-situation scratch.
///
/// `sums` holds, per changed alternative k, a `rows × width` matrix: row r
/// (multiplier u_r: x_ak, 1 or z_c, times the weight) and column (q, j) the
/// sum of u_r G[k][q][j], column (kf, j) the sum of u_r D[j][k]. Situations
/// are gathered `BLOCK` at a time and added with one matrix product per k.
struct Scratch {
    sz: Sizes,
    values: Vec<f64>,
    sums: Vec<f64>,
    /// Σ w dP_j/dβ_q, `[q][j]`.
    pe: Vec<f64>,
    /// Of the current situation.
    loc: Local,
    /// Gathered multipliers `[k][situation][row]` and rows `[k][situation][column]`.
    u: Vec<f64>,
    g: Vec<f64>,
    filled: usize,
}

impl Scratch {
    fn new(sz: Sizes) -> Scratch {
        let j = sz.lay.j;
        let (rows, width) = (sz.rows(), sz.width());
        Scratch {
            sz,
            values: vec![0.0; sz.lay.offsets().4],
            sums: vec![0.0; j * rows * width],
            pe: vec![0.0; sz.kf * j],
            loc: Local::new(j, sz.kf),
            u: vec![0.0; j * BLOCK * rows],
            g: vec![0.0; j * BLOCK * width],
            filled: 0,
        }
    }

    /// Gathers situation `pt.i`'s derivative rows (weight `wi`), from `dp`.
    fn add_derivatives(
        &mut self,
        family: &dyn Family,
        d: &Design,
        map: &TermMap,
        column: &[Option<usize>],
        pt: &Point,
        wi: f64,
    ) {
        let Layout { j, na, nc, .. } = self.sz.lay;
        let (rows, width) = (self.sz.rows(), self.sz.width());
        let kf = self.sz.kf;
        let jq = kf * j;
        let i = pt.i;
        // x[q][m] = dV_m/dβ_q and e[q][j] = dP_j/dβ_q.
        self.loc.x.iter_mut().for_each(|v| *v = 0.0);
        self.loc.e.iter_mut().for_each(|v| *v = 0.0);
        for (m, feats) in d.features.iter().enumerate() {
            if !d.available(i, m) {
                continue;
            }
            for f in feats {
                let Some(q) = column[f.param] else { continue };
                let x = d.value(i, m, f.value);
                self.loc.x[q * j + m] += x;
                let e = &mut self.loc.e[q * j..(q + 1) * j];
                for (jj, ej) in e.iter_mut().enumerate() {
                    *ej += self.loc.dp[jj * j + m] * x;
                }
            }
        }
        self.loc.contract(family, pt, wi, &mut self.pe);
        let b = self.filled;
        for k in 0..j {
            let row = &mut self.g[(k * BLOCK + b) * width..][..width];
            row[..jq].copy_from_slice(&self.loc.gs[k * jq..(k + 1) * jq]);
            for jj in 0..j {
                row[jq + jj] = self.loc.dp[jj * j + k];
            }
            let u = &mut self.u[(k * BLOCK + b) * rows..][..rows];
            u.iter_mut().for_each(|x| *x = 0.0);
            if !d.available(i, k) {
                continue;
            }
            for (a, ua) in u[..na].iter_mut().enumerate() {
                if map.attribute[a][k].is_some() {
                    *ua = wi * d.obs.attributes[a][i * j + k];
                }
            }
            u[na] = wi;
            for c in 0..nc {
                u[na + 1 + c] = wi * d.obs.characteristics[c][i];
            }
        }
        self.filled += 1;
        if self.filled == BLOCK {
            self.flush();
        }
    }

    /// Adds the gathered situations' products to the sums.
    fn flush(&mut self) {
        let (rows, width) = (self.sz.rows(), self.sz.width());
        let shape = (self.filled, rows, width, self.sz.lay.j, BLOCK);
        add_products(shape, (&self.u, &self.g), &mut self.sums);
        self.filled = 0;
    }

    /// The Jacobian of `Sens::flat()` by the free parameters from the summed
    /// `values` and `sums`.
    fn jacobian(&self, map: &TermMap, beta: &[f64], free: &[usize], tw: f64) -> Vec<Vec<f64>> {
        let Layout { j, na, nc, .. } = self.sz.lay;
        let kf = self.sz.kf;
        let (rows, width) = (self.sz.rows(), self.sz.width());
        let jq = kf * j;
        let (o1, o2, o3, o4, all) = self.sz.lay.offsets();
        let (v, pe) = (&self.values, &self.pe);
        // Row r of changed alternative k: its G sum at (q, j), its D sum at j.
        let at = |k: usize, r: usize| &self.sums[(k * rows + r) * width..][..width];
        let psum = &v[o4..o4 + j];
        let mut out = vec![vec![0.0; kf]; all - j];
        let quotient = |num: f64, dnum: f64, jj: usize, q: usize| {
            quotient(num, dnum, psum[jj], pe[q * j + jj])
        };
        let own = |param: usize, q: usize| param == free[q];
        for a in 0..na {
            for k in 0..j {
                let Some(param) = map.attribute[a][k] else {
                    continue;
                };
                let b = beta[param];
                let (ra, rb) = (at(k, a), at(k, na));
                for jj in 0..j {
                    let idx = (a * j + k) * j + jj;
                    for q in 0..kf {
                        let (mut dn, mut dm) = (b * ra[q * j + jj], b * rb[q * j + jj]);
                        if own(param, q) {
                            dn += ra[jq + jj];
                            dm += rb[jq + jj];
                        }
                        out[idx][q] = quotient(v[idx], dn, jj, q);
                        out[o1 + idx][q] = dm / tw;
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
                        let (rc, rb) = (at(l, na + 1 + c), at(l, na));
                        dn += b * rc[q * j + jj];
                        dm += b * rb[q * j + jj];
                        if own(param, q) {
                            dn += rc[jq + jj];
                            dm += rb[jq + jj];
                        }
                    }
                    out[o2 + idx][q] = quotient(v[o2 + idx], dn, jj, q);
                    out[o3 + idx][q] = dm / tw;
                }
            }
        }
        out
    }
}

/// The derivative of a figure's sum S over P_j's sum (`psum`, with
/// derivative `dpsum`): dS/Σw P_j − S Σw dP_j/dβ_q / (Σw P_j)².
fn quotient(num: f64, dnum: f64, psum: f64, dpsum: f64) -> f64 {
    if psum > 0.0 {
        dnum / psum - num * dpsum / (psum * psum)
    } else {
        f64::NAN
    }
}

/// Adds, for each changed alternative k (of `alts`), the product of its
/// gathered multipliers (`n` × `rows`, read transposed) and rows (`n` ×
/// `width`) to its `rows × width` block of `sums`; the gathered arrays hold
/// `block` entries per alternative.
fn add_products(
    (n, rows, width, alts, block): (usize, usize, usize, usize, usize),
    (u, g): (&[f64], &[f64]),
    sums: &mut [f64],
) {
    if n == 0 {
        return;
    }
    for k in 0..alts {
        let u = &u[k * block * rows..][..n * rows];
        let g = &g[k * block * width..][..n * width];
        let c = &mut sums[k * rows * width..][..rows * width];
        // SAFETY: u is n × rows (row-major), read as its transpose
        // rows × n; g is n × width; c is rows × width; all in bounds.
        unsafe {
            matrixmultiply::dgemm(
                rows,
                n,
                width,
                1.0,
                u.as_ptr(),
                1,
                rows as isize,
                g.as_ptr(),
                width as isize,
                1,
                1.0,
                c.as_mut_ptr(),
                width as isize,
                1,
            );
        }
    }
}

/// One situation's (or coefficient point's) derivatives: dp = dP/dV, d2p
/// scratch for d²P/dVdV, x[q][m] = dV_m/dβ_q, e[q][j] = dP_j/dβ_q and
/// gs[k][q][j] = Σ_m d²P_j/(dV_k dV_m) x[q][m].
struct Local {
    kf: usize,
    dp: Vec<f64>,
    d2p: Vec<f64>,
    x: Vec<f64>,
    e: Vec<f64>,
    gs: Vec<f64>,
}

impl Local {
    fn new(j: usize, kf: usize) -> Local {
        Local {
            kf,
            dp: vec![0.0; j * j],
            d2p: vec![0.0; j * j * j],
            x: vec![0.0; kf * j],
            e: vec![0.0; kf * j],
            gs: vec![0.0; j * kf * j],
        }
    }

    /// With `dp`, `x` and `e` filled: adds `wi` e to `pe` and contracts the
    /// family's second derivatives at point `pt` with x into `gs`.
    fn contract(&mut self, family: &dyn Family, pt: &Point, wi: f64, pe: &mut [f64]) {
        for (pe, e) in pe.iter_mut().zip(&self.e) {
            *pe += wi * e;
        }
        family.d2prob_along(
            pt.v,
            pt.p,
            &self.dp,
            &mut self.d2p,
            &self.x,
            &self.e,
            self.kf,
            &mut self.gs,
        );
    }
}
