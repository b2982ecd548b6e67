//! The one-pass figures and Jacobian of `analytic` for families whose
//! probabilities average over coefficient points (`Family::mixture`) that give
//! their coefficients' derivatives by the parameters (`Points::derivatives`).
//!
//! At point r (weight ω, coefficients c, D = dP/dV and T = d²P/dVdV at its
//! utilities) dV_m/dβ_q = Σ_k X[m][k] ∂c[k]/∂β_q (= x[q][m]); each figure's
//! summand ω D[j][k]·(value)·c[param] has the derivative
//! ω (G[k][q][j] c[param] + D[j][k] ∂c[param]/∂β_q)·(value), with
//! G[k][q][j] = Σ_m T[j][k][m] x[q][m]; the probability sums' derivatives are
//! Σ ω Σ_m D[j][m] x[q][m]. The G terms are gathered `BLOCK` points at a time
//! and added with one matrix product per changed alternative (the point's
//! coefficient folded into the multipliers); the D terms, sparse in q, are
//! added directly. Points whose weights move with the parameters (latent
//! classes' shares) add ∂ω/∂β_q times the point's summands at unit weight.
//! Sums per piece, in piece order.

use crate::analysis::sensitivity::{add_point, finish, Derivatives, Layout, Sens, TermMap};
use crate::design::Design;
use crate::model::enumerate::{Baseline, Enumeration, Point};
use crate::model::{CoefficientDerivatives, Family, Points};

use super::Local;

/// Points gathered before their products are added to the sums.
const BLOCK: usize = 128;

/// `super::sensitivities_with_jacobian` over coefficient points; `None`
/// when the points do not give their derivatives.
pub(super) fn sensitivities_with_jacobian(
    family: &dyn Family,
    d: &Design,
    map: &TermMap,
    (beta, free): (&[f64], &[usize]),
    points: &dyn Points,
    baseline: Option<&Baseline>,
) -> Option<(Sens, Vec<Vec<f64>>)> {
    let mut probe = CoefficientDerivatives::default();
    if d.situations() == 0 || !points.derivatives(beta, 0, &mut probe) {
        return None;
    }
    let deps = Deps::new(beta.len(), free, &probe.pairs);
    let by_weight = weight_columns(free, &probe.weight_params, beta.len());
    let lay = Layout::new(d, map);
    let kf = free.len();
    let w = &d.obs.weight;
    let parts = Enumeration::new(family, d, beta).baseline(baseline).points(
        |_| Scratch::new(lay, kf, deps.len()),
        |s, pt| {
            s.next_point((points, beta), d, &deps, pt.i);
            family.dprob(pt.coefficients, pt.v, pt.p, &mut s.loc.dp);
            let wi = w[pt.i] * pt.weight;
            let der = Derivatives {
                dp: &s.loc.dp,
                focused: false,
            };
            add_point(
                d,
                map,
                lay,
                pt.i,
                wi,
                pt.coefficients,
                pt.p,
                der,
                &mut s.values,
            );
            s.add_derivatives(family, (d, map), &deps, pt, wi);
            if !by_weight.is_empty() {
                s.add_weight_terms(d, map, &by_weight, pt);
            }
        },
    );
    let mut total = Scratch::new(lay, kf, deps.len());
    for mut part in parts {
        part.flush();
        for (a, b) in [
            (&mut total.values, &part.values),
            (&mut total.sums, &part.sums),
            (&mut total.pe, &part.pe),
            (&mut total.dsum, &part.dsum),
        ] {
            a.iter_mut().zip(b).for_each(|(a, b)| *a += b);
        }
    }
    let tw = d.total_weight();
    let sens = finish(lay, &total.values, tw);
    let jac = total.jacobian(map, tw);
    Some((sens, jac))
}

/// The weights' derivatives that move with a free parameter: (entry of
/// `weight_params`, column).
fn weight_columns(free: &[usize], params: &[usize], k: usize) -> Vec<(usize, usize)> {
    let mut column = vec![None; k];
    for (q, &p) in free.iter().enumerate() {
        column[p] = Some(q);
    }
    let at = |(e, &p): (usize, &usize)| Some((e, column[p]?));
    params.iter().enumerate().filter_map(at).collect()
}

/// For each parameter k (a coefficient of the points), the free parameters
/// its coefficient moves with: entries (column q, where the derivative is
/// read: `None` = 1, the coefficient is its parameter; `Some(e)` = pair e).
struct Deps {
    at: Vec<usize>,
    entries: Vec<(usize, Option<usize>)>,
}

impl Deps {
    fn new(k: usize, free: &[usize], pairs: &[(usize, usize)]) -> Deps {
        let mut column = vec![None; k];
        for (q, &p) in free.iter().enumerate() {
            column[p] = Some(q);
        }
        let mut listed = vec![false; k];
        for &(c, _) in pairs {
            listed[c] = true;
        }
        let mut at = vec![0];
        let mut entries = Vec::new();
        for c in 0..k {
            if !listed[c] {
                entries.extend(column[c].map(|q| (q, None)));
            }
            for (e, &(_, p)) in pairs.iter().enumerate().filter(|(_, pr)| pr.0 == c) {
                entries.extend(column[p].map(|q| (q, Some(e))));
            }
            at.push(entries.len());
        }
        Deps { at, entries }
    }
    fn len(&self) -> usize {
        self.entries.len()
    }
    /// The entries of coefficient `c`: their positions and columns.
    fn of(&self, c: usize) -> impl Iterator<Item = (usize, usize)> + '_ {
        (self.at[c]..self.at[c + 1]).map(|t| (t, self.entries[t].0))
    }
}

/// One piece's sums and the per-point scratch.
///
/// `sums` holds, per changed alternative k, a `rows × (kf J)` matrix: row
/// (multiplier u: ω x_ak c_ak, ω c_ak, ω z_c c_ck, ω c_ck) and column (q, j)
/// the sum of u G[k][q][j]. `dsum[s * kf + q]` holds the D terms of each sum s
/// of the `Layout` (attribute numerators and marginal effects, characteristic
/// numerators and marginal effects).
struct Scratch {
    lay: Layout,
    kf: usize,
    values: Vec<f64>,
    sums: Vec<f64>,
    dsum: Vec<f64>,
    /// A point's summands at unit weight (points with moving weights).
    unit: Vec<f64>,
    /// Σ ω dP_j/dβ_q, `[q][j]`.
    pe: Vec<f64>,
    /// Of the current point; dv[t] the value of `Deps` entry t.
    loc: Local,
    dv: Vec<f64>,
    /// The current situation's derivatives and the point's place in them,
    /// and its features that move with a free parameter: (alternative,
    /// parameter, value).
    cd: CoefficientDerivatives,
    feats: Vec<(usize, usize, f64)>,
    situation: usize,
    r: usize,
    /// Gathered multipliers `[k][point][row]` and rows `[k][point][column]`.
    u: Vec<f64>,
    g: Vec<f64>,
    filled: usize,
}

impl Scratch {
    fn new(lay: Layout, kf: usize, deps: usize) -> Scratch {
        let j = lay.j;
        let (rows, width) = (2 * (lay.na + lay.nc), kf * j);
        let o4 = lay.offsets().3;
        Scratch {
            lay,
            kf,
            values: vec![0.0; lay.offsets().4],
            sums: vec![0.0; j * rows * width],
            dsum: vec![0.0; o4 * kf],
            unit: vec![0.0; lay.offsets().4],
            pe: vec![0.0; kf * j],
            loc: Local::new(j, kf),
            dv: vec![0.0; deps],
            cd: CoefficientDerivatives::default(),
            feats: Vec::new(),
            situation: usize::MAX,
            r: 0,
            u: vec![0.0; j * BLOCK * rows],
            g: vec![0.0; j * BLOCK * width],
            filled: 0,
        }
    }

    /// Moves to the next point (of situation `i`): its situation's points'
    /// derivatives and features are read at its first point.
    fn next_point(
        &mut self,
        (points, beta): (&dyn Points, &[f64]),
        d: &Design,
        deps: &Deps,
        i: usize,
    ) {
        if i == self.situation {
            self.r += 1;
            return;
        }
        points.derivatives(beta, i, &mut self.cd);
        self.situation = i;
        self.r = 0;
        self.feats.clear();
        for (m, feats) in d.features.iter().enumerate() {
            if !d.available(i, m) {
                continue;
            }
            for f in feats {
                if deps.of(f.param).next().is_some() {
                    self.feats.push((m, f.param, d.value(i, m, f.value)));
                }
            }
        }
    }

    /// Adds point `pt`'s derivative terms (weight `wi`), from `dp`.
    fn add_derivatives(
        &mut self,
        family: &dyn Family,
        (d, map): (&Design, &TermMap),
        deps: &Deps,
        pt: &Point,
        wi: f64,
    ) {
        let j = self.lay.j;
        let np = self.cd.pairs.len();
        let at = &self.cd.values[self.r * np..(self.r + 1) * np];
        for (dv, &(_, src)) in self.dv.iter_mut().zip(&deps.entries) {
            *dv = src.map_or(1.0, |e| at[e]);
        }
        // x[q][m] = dV_m/dβ_q, then e[q][j] = dP_j/dβ_q.
        self.loc.x.iter_mut().for_each(|v| *v = 0.0);
        for &(m, param, x) in &self.feats {
            for (t, q) in deps.of(param) {
                self.loc.x[q * j + m] += x * self.dv[t];
            }
        }
        for (eq, xq) in self
            .loc
            .e
            .chunks_exact_mut(j)
            .zip(self.loc.x.chunks_exact(j))
        {
            for (jj, ej) in eq.iter_mut().enumerate() {
                let row = &self.loc.dp[jj * j..(jj + 1) * j];
                *ej = row.iter().zip(xq).map(|(a, b)| a * b).sum();
            }
        }
        self.loc.contract(family, pt, wi, &mut self.pe);
        self.gather(d, map, pt, wi);
        self.add_direct(d, map, deps, pt.i, wi);
        self.filled += 1;
        if self.filled == BLOCK {
            self.flush();
        }
    }

    /// Gathers the point's G rows and their multipliers (the point's
    /// coefficients folded in).
    fn gather(&mut self, d: &Design, map: &TermMap, pt: &Point, wi: f64) {
        let Layout { j, na, nc, .. } = self.lay;
        let (rows, width) = (2 * (na + nc), self.kf * j);
        let (i, c, b) = (pt.i, pt.coefficients, self.filled);
        for k in 0..j {
            let row = &mut self.g[(k * BLOCK + b) * width..][..width];
            row.copy_from_slice(&self.loc.gs[k * width..(k + 1) * width]);
            let u = &mut self.u[(k * BLOCK + b) * rows..][..rows];
            u.iter_mut().for_each(|x| *x = 0.0);
            if d.available(i, k) {
                for a in 0..na {
                    if let Some(param) = map.attribute[a][k] {
                        u[a] = wi * c[param] * d.obs.attributes[a][i * j + k];
                        u[na + a] = wi * c[param];
                    }
                }
            }
            for ch in 0..nc {
                if let Some(param) = map.characteristic[ch][k] {
                    u[2 * na + ch] = wi * c[param] * d.obs.characteristics[ch][i];
                    u[2 * na + nc + ch] = wi * c[param];
                }
            }
        }
    }

    /// Adds the terms of the coefficients' own derivatives, ω D[j][k] ·
    /// (value) · ∂c[param]/∂β_q, to `dsum`.
    fn add_direct(&mut self, d: &Design, map: &TermMap, deps: &Deps, i: usize, wi: f64) {
        let Layout { j, na, nc, .. } = self.lay;
        let kf = self.kf;
        let (o1, o2, o3, _, _) = self.lay.offsets();
        for a in 0..na {
            for k in 0..j {
                let Some(param) = map.attribute[a][k] else {
                    continue;
                };
                if !d.available(i, k) {
                    continue;
                }
                let x = d.obs.attributes[a][i * j + k];
                for (t, q) in deps.of(param) {
                    let v = wi * self.dv[t];
                    for jj in 0..j {
                        let dpk = v * self.loc.dp[jj * j + k];
                        let idx = (a * j + k) * j + jj;
                        self.dsum[idx * kf + q] += dpk * x;
                        self.dsum[(o1 + idx) * kf + q] += dpk;
                    }
                }
            }
        }
        for c in 0..nc {
            let z = d.obs.characteristics[c][i];
            for l in 0..j {
                let Some(param) = map.characteristic[c][l] else {
                    continue;
                };
                for (t, q) in deps.of(param) {
                    let v = wi * self.dv[t];
                    for jj in 0..j {
                        let dpl = v * self.loc.dp[jj * j + l];
                        self.dsum[(o2 + c * j + jj) * kf + q] += dpl * z;
                        self.dsum[(o3 + c * j + jj) * kf + q] += dpl;
                    }
                }
            }
        }
    }

    /// Adds the terms of a point's weight's derivatives, dω/dβ_q times the
    /// point's summands at unit weight (figures and probability sums).
    fn add_weight_terms(&mut self, d: &Design, map: &TermMap, by: &[(usize, usize)], pt: &Point) {
        let (kf, j, o4) = (self.kf, self.lay.j, self.lay.offsets().3);
        self.unit.iter_mut().for_each(|u| *u = 0.0);
        let der = Derivatives {
            dp: &self.loc.dp,
            focused: false,
        };
        let (i, c) = (pt.i, pt.coefficients);
        add_point(d, map, self.lay, i, 1.0, c, pt.p, der, &mut self.unit);
        let nw = self.cd.weight_params.len();
        let at = &self.cd.weight_values[self.r * nw..(self.r + 1) * nw];
        for &(e, q) in by {
            let f = d.obs.weight[i] * at[e];
            for (s, u) in self.unit[..o4].iter().enumerate() {
                self.dsum[s * kf + q] += f * u;
            }
            for (jj, u) in self.unit[o4..].iter().enumerate() {
                self.pe[q * j + jj] += f * u;
            }
        }
    }

    /// Adds the gathered points' products to the sums.
    fn flush(&mut self) {
        let Layout { j, na, nc, .. } = self.lay;
        let (rows, width) = (2 * (na + nc), self.kf * j);
        super::add_products(
            (self.filled, rows, width, j, BLOCK),
            (&self.u, &self.g),
            &mut self.sums,
        );
        self.filled = 0;
    }

    /// The Jacobian of `Sens::flat()` by the free parameters.
    #[allow(clippy::needless_range_loop)] // q indexes several arrays
    fn jacobian(&self, map: &TermMap, tw: f64) -> Vec<Vec<f64>> {
        let Layout { j, na, nc, .. } = self.lay;
        let kf = self.kf;
        let (rows, width) = (2 * (na + nc), kf * j);
        let (o1, o2, o3, o4, all) = self.lay.offsets();
        let v = &self.values;
        let at = |k: usize, r: usize| &self.sums[(k * rows + r) * width..][..width];
        let psum = &v[o4..o4 + j];
        let quotient = |num: f64, dnum: f64, jj: usize, q: usize| {
            super::quotient(num, dnum, psum[jj], self.pe[q * j + jj])
        };
        let ds = |s: usize, q: usize| self.dsum[s * kf + q];
        let mut out = vec![vec![0.0; kf]; all - j];
        for a in 0..na {
            for k in 0..j {
                if map.attribute[a][k].is_none() {
                    continue;
                }
                let (rn, rm) = (at(k, a), at(k, na + a));
                for jj in 0..j {
                    let idx = (a * j + k) * j + jj;
                    for q in 0..kf {
                        let dn = ds(idx, q) + rn[q * j + jj];
                        let dm = ds(o1 + idx, q) + rm[q * j + jj];
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
                    let (mut dn, mut dm) = (ds(o2 + idx, q), ds(o3 + idx, q));
                    for l in 0..j {
                        dn += at(l, 2 * na + c)[q * j + jj];
                        dm += at(l, 2 * na + nc + c)[q * j + jj];
                    }
                    out[o2 + idx][q] = quotient(v[o2 + idx], dn, jj, q);
                    out[o3 + idx][q] = dm / tw;
                }
            }
        }
        out
    }
}
