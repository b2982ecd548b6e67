//! The logit family (multinomial, conditional and binary): its log-likelihood
//! with analytic gradient and Hessian, in one pass over the design split across
//! the cores. Each thread keeps a few scratch buffers; nothing is allocated per
//! situation.
//!
//! The logit pass works on blocks of situations. At the start of a pass the
//! parameters are folded into one coefficient per alternative and value
//! (the constant 1, each attribute, each characteristic), so that a block's
//! utilities are a few multiply-adds over contiguous arrays. The per-situation
//! steps (largest utility, exponentials, log-sum-exp, residuals) run on a
//! transposed copy of the block, one row per alternative, with a vectorisable
//! `exp` and `ln` (within two ulps). The gradient is accumulated per
//! (alternative, value) and mapped back to the parameters at the end; so are
//! the Hessian's sums of w p u u', and its x-bar outer products are vectorised
//! dot products. The block code is compiled for AVX-512, for AVX2 with FMA and
//! portably, and the version is chosen at run time.
//!
//! The log-likelihood is summed with compensation (Neumaier), so that it is
//! exact to rounding however many situations there are: a plain running sum
//! of a million near-identical terms drifts by 1e-5 and stalls the Newton steps.
//! A pass is cut into pieces that depend on the number of situations alone and
//! summed in piece order, so its figures do not depend on the number of cores.

use crate::data::Observations;
use crate::design::{on_pieces, Design, Value};
use crate::spec::{FamilyParameter, FamilyRules, Spec, SpecView};

use super::{Abilities, Eval, Family};

pub(crate) mod block;
pub(crate) mod chunk;
pub mod fastmath;
pub mod rows;
pub mod willingness;

use block::*;
use chunk::*;
pub(crate) use fastmath::Compensated;
use fastmath::*;

/// The logit family; `binary` when the spec has two alternatives (odds ratios apply).
#[derive(Clone, Copy, Debug)]
pub struct Logit {
    pub binary: bool,
}

/// Its spec rules: nothing beyond the common ones.
pub struct Rules;

impl FamilyRules for Rules {
    fn model_keys(&self) -> &'static [&'static str] {
        &super::space::KEYS
    }

    /// Sampled choice sets keep the logit's estimates consistent (McFadden
    /// 1978); in willingness-to-pay space they are not supported.
    fn sampled_sets(&self, keys: &toml::Table) -> bool {
        let space = keys
            .get("model")
            .and_then(|m| m.get("space"))
            .and_then(|v| v.as_str());
        space.is_none_or(|s| s == "preference")
    }

    fn check(&self, spec: &SpecView) -> Result<Vec<FamilyParameter>, String> {
        super::space::check(spec)?;
        Ok(Vec::new())
    }
}

/// The logit for a validated spec: in preference space, or written in
/// willingness-to-pay space.
pub fn build(spec: &Spec) -> crate::error::Result<super::FamilyRef> {
    let logit = Logit {
        binary: spec.alternatives.len() == 2,
    };
    Ok(match super::space::Willingness::of(spec) {
        None => std::sync::Arc::new(logit),
        Some(space) => {
            super::space::check_fixed(spec, &space, false)
                .map_err(|m| crate::error::Error::spec(&spec.path, m))?;
            std::sync::Arc::new(willingness::WillingnessLogit { logit, space })
        }
    })
}

#[inline]
pub fn softmax(v: &[f64], p: &mut [f64]) -> f64 {
    let m = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let mut s = 0.0;
    for (pj, vj) in p.iter_mut().zip(v) {
        let e = if vj.is_finite() { (vj - m).exp() } else { 0.0 };
        *pj = e;
        s += e;
    }
    for pj in p.iter_mut() {
        *pj /= s;
    }
    m + s.ln()
}

/// Copies the upper triangle of a K x K row-major matrix into the lower one.
pub(crate) fn mirror_upper(hess: &mut [f64], k: usize) {
    for a in 0..k {
        for b in 0..a {
            hess[a * k + b] = hess[b * k + a];
        }
    }
}

/// Logit scenario probabilities from the base ones: P'_j = P_j r_j / sum_l P_l r_l with
/// r_j = exp(V'_j - V_j), so that only the alternatives whose utility changed cost an
/// exponential, and a situation nothing touched keeps its probabilities exactly.
/// Returns false (the caller then uses the full softmax) when the shortcut does not
/// apply: an alternative that becomes available, or a utility rising by more than 50.
#[inline]
fn rescale(v0: &[f64], v1: &[f64], p0: &[f64], p1: &mut [f64]) -> bool {
    let mut changed = false;
    let mut s = 0.0;
    for a in 0..v0.len() {
        let (b, n) = (v0[a], v1[a]);
        let r = if b == n || (!b.is_finite() && !n.is_finite()) {
            1.0
        } else if !b.is_finite() {
            return false;
        } else if !n.is_finite() {
            changed = true;
            0.0
        } else if n - b > 50.0 {
            return false;
        } else {
            changed = true;
            (n - b).exp()
        };
        p1[a] = p0[a] * r;
        s += p1[a];
    }
    if !changed {
        p1.copy_from_slice(p0);
        return true;
    }
    if s.is_nan() || s <= 0.0 {
        return false;
    }
    p1.iter_mut().for_each(|x| *x /= s);
    true
}

impl Family for Logit {
    fn name(&self) -> &'static str {
        "logit"
    }

    fn abilities(&self) -> Abilities {
        Abilities {
            analytic_hessian: true,
            new_alternatives: true,
            iia: true,
            odds_ratios: self.binary,
            ..Abilities::default()
        }
    }

    fn evaluate(&self, d: &Design, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
        evaluate(d, beta, want_grad, want_hess)
    }

    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
        for_each_score(d, beta, f)
    }

    fn probabilities(&self, _beta: &[f64], v: &[f64], p: &mut [f64]) {
        softmax(v, p);
    }

    fn probabilities_after(
        &self,
        _beta: &[f64],
        v0: &[f64],
        p0: &[f64],
        v1: &[f64],
        p1: &mut [f64],
    ) {
        if !rescale(v0, v1, p0, p1) {
            softmax(v1, p1);
        }
    }

    fn probabilities_of_points(
        &self,
        v: &mut [f64],
        points: usize,
        scratch: &mut Vec<f64>,
    ) -> bool {
        rows::softmax_rows(v, points, scratch);
        true
    }

    fn dprob_columns(
        &self,
        _beta: &[f64],
        (_v, p): (&[f64], &[f64]),
        columns: &[usize],
        _full: &mut [f64],
        dp: &mut [f64],
    ) {
        let c = columns.len();
        for (j, row) in dp.chunks_mut(c).enumerate().take(p.len()) {
            for (d, &k) in row.iter_mut().zip(columns) {
                *d = p[j] * (((j == k) as u8 as f64) - p[k]);
            }
        }
    }

    fn dprob(&self, _beta: &[f64], _v: &[f64], p: &[f64], dp: &mut [f64]) {
        let n = p.len();
        dp.iter_mut().for_each(|x| *x = 0.0);
        for j in 0..n {
            if p[j] == 0.0 {
                continue;
            }
            for k in 0..n {
                dp[j * n + k] = p[j] * (((j == k) as u8 as f64) - p[k]);
            }
        }
    }

    /// d/dV_m of P_j (δ_jk − P_k): D_jm (δ_jk − P_k) − P_j D_km, with D = dP/dV.
    fn d2prob(&self, _v: &[f64], p: &[f64], dp: &[f64], d2p: &mut [f64]) -> bool {
        let n = p.len();
        for j in 0..n {
            for k in 0..n {
                let c = ((j == k) as u8 as f64) - p[k];
                let row = &mut d2p[(j * n + k) * n..(j * n + k + 1) * n];
                for (m, out) in row.iter_mut().enumerate() {
                    *out = dp[j * n + m] * c - p[j] * dp[k * n + m];
                }
            }
        }
        true
    }

    /// With T_jkm = D_jm (δ_jk − P_k) − P_j D_km: Σ_m T_jkm x_qm =
    /// (δ_jk − P_k) e_qj − P_j e_qk, without the J³ array.
    fn d2prob_along(
        &self,
        _v: &[f64],
        p: &[f64],
        _dp: &[f64],
        _d2p: &mut [f64],
        _x: &[f64],
        e: &[f64],
        kf: usize,
        g: &mut [f64],
    ) -> bool {
        let n = p.len();
        if kf * n == 0 {
            return true; // no parameter moves (all fixed): nothing to contract
        }
        for (k, (gk, &pk)) in g.chunks_exact_mut(kf * n).zip(p).enumerate() {
            for (out, eq) in gk.chunks_exact_mut(n).zip(e.chunks_exact(n)) {
                let ek = eq[k];
                for ((o, &ej), &pj) in out.iter_mut().zip(eq).zip(p) {
                    *o = -pk * ej - pj * ek;
                }
                out[k] += ek;
            }
        }
        true
    }

    fn caution(&self, spec: &Spec) -> Option<String> {
        (spec.alternatives.len() > 2).then(|| {
            "Logit assumes independence from irrelevant alternatives (IIA): a changed or removed option draws share from all others in proportion to their shares.".to_string()
        })
    }
}

/// One logit pass: log-likelihood and, if asked, gradient and Hessian at `beta`.
pub fn evaluate(d: &Design, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
    let k = d.params;
    let j = d.alternatives();
    let want_grad = want_grad || want_hess;
    let mut ll = Compensated::default();
    let mut grad = vec![0.0; k];
    let mut hess = if want_hess {
        vec![0.0; k * k]
    } else {
        Vec::new()
    };
    let plan = Plan::new(d, beta);
    let parts = on_pieces(d.situations(), |r| {
        logit_chunk(&plan, r, want_grad, want_hess)
    });
    let dims = plan.dims();
    let mut gtheta = vec![0.0; dims * j];
    let mut sterm = vec![0.0; plan.hess_terms.len()];
    for p in parts {
        ll.add(p.ll.value());
        let na = plan.attrs.len();
        for (c, g) in p.g.iter().enumerate() {
            // Attributes were summed interleaved, the rest as rows.
            let interleaved = (1..=na).contains(&c);
            for (t, x) in g.iter().enumerate() {
                let a = if interleaved { t % j } else { t / BLOCK };
                gtheta[c * j + a] += x;
            }
        }
        for (o, sq) in sterm.iter_mut().zip(&p.s) {
            *o += sq.iter().sum::<f64>();
        }
        hess.iter_mut().zip(&p.outer).for_each(|(a, b)| *a += b);
    }
    if want_grad {
        for &(param, a, c) in &plan.feats {
            grad[param] += gtheta[c * j + a];
        }
    }
    if want_hess {
        for (h, v) in plan.hess_terms.iter().zip(&sterm) {
            for &cell in &h.cells {
                hess[cell] -= v;
            }
        }
        // Only the upper triangle was accumulated.
        mirror_upper(&mut hess, k);
    }
    Eval {
        ll: ll.value(),
        grad: if want_grad { grad } else { Vec::new() },
        hess: want_hess.then_some(hess),
    }
}

/// Each situation's weighted score (gradient of its log-likelihood term) passed to `f(i, score)`.
/// Used for robust covariance; runs on one core because it feeds group sums.
pub fn for_each_score(d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
    let k = d.params;
    let j = d.alternatives();
    let plan = Plan::new(d, beta);
    let na = plan.attrs.len();
    let mut blk = Block::new(&plan);
    // Attribute values as rows, and each parameter's score over the block.
    let mut x: Vec<Vec<[f64; BLOCK]>> = vec![vec![[0.0; BLOCK]; j]; na];
    let mut sc: Vec<[f64; BLOCK]> = vec![[0.0; BLOCK]; k];
    let mut score = vec![0.0; k];
    let n = d.situations();
    let mut i0 = 0;
    while i0 < n {
        let nb = BLOCK.min(n - i0);
        blk.fill::<false>(&plan, i0, nb);
        blk.residuals(&plan, i0, nb, false);
        for (xa, attr) in x.iter_mut().zip(&plan.attrs) {
            to_rows(&attr[i0 * j..(i0 + nb) * j], xa, j, nb);
        }
        sc.iter_mut().for_each(|row| row.fill(0.0));
        for &(param, a, c) in &plan.feats {
            let r = &blk.rows[a][..nb];
            let out = &mut sc[param][..nb];
            if c == 0 {
                out.iter_mut().zip(r).for_each(|(o, ri)| *o += ri);
            } else {
                let u = if c <= na {
                    &x[c - 1][a][..nb]
                } else {
                    &plan.chars[c - 1 - na][i0..i0 + nb]
                };
                for ((o, ri), ui) in out.iter_mut().zip(r).zip(u) {
                    *o += ri * ui;
                }
            }
        }
        for b in 0..nb {
            for (s, row) in score.iter_mut().zip(&sc) {
                *s = row[b];
            }
            f(i0 + b, &score);
        }
        i0 += nb;
    }
}

#[cfg(test)]
mod tests;
