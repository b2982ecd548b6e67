//! The GHK simulator's fast kernel for the multinomial probit: log P(w < b)
//! for w ~ N(0, C C') with C lower triangular, simulated on fixed uniforms,
//! with its gradient by b and C in reverse mode (one sweep back over the
//! dimensions per draw, O(m^2) instead of carrying every derivative forward).
//! The first dimension is the same for every draw, so its probability is
//! exact and kept in logs: log P = log Phi(z_1) + log mean_r prod_{k>1} Phi(z_kr).
//! Draws go in blocks of `BLOCK`, each dimension a loop over the block that
//! the compiler vectorises (branch-free functions of `vector`; AVX-512 or
//! AVX2 with FMA where the processor has them). `model::ghk` is the plain
//! forward-mode version this kernel is tested against.

use super::vector::{self, Stages, TERMS};
use crate::model::normal;

/// Draws per block.
const BLOCK: usize = 64;
/// Smallest argument handed to the quantile (keeps it finite).
const TINY: f64 = 1e-300;

/// Scratch for one call (reused: no allocation per situation).
#[derive(Clone, Debug, Default)]
pub struct Work {
    /// Per dimension, a block of z, eta, lambda, d eta / d z (`[k * BLOCK + r]`).
    z: Vec<f64>,
    eta: Vec<f64>,
    lam: Vec<f64>,
    ratio: Vec<f64>,
    etabar: Vec<f64>,
    prod: Vec<f64>,
    pk: Vec<f64>,
    stages: Option<Stages>,
    /// d log P / d b (length m), after a call with `grad`.
    pub gb: Vec<f64>,
    /// d log P / d C (m x m row-major, lower triangle), after a call with `grad`.
    pub gc: Vec<f64>,
}

impl Work {
    fn prepare(&mut self, m: usize, grad: bool) {
        for v in [
            &mut self.z,
            &mut self.eta,
            &mut self.lam,
            &mut self.ratio,
            &mut self.etabar,
        ] {
            v.resize(m * BLOCK, 0.0);
        }
        self.prod.resize(BLOCK, 0.0);
        self.pk.resize(BLOCK, 0.0);
        if self.stages.is_none() {
            self.stages = Some(Stages::new(BLOCK));
        }
        if grad {
            self.gb.clear();
            self.gb.resize(m, 0.0);
            self.gc.clear();
            self.gc.resize(m * m, 0.0);
        }
    }
}

/// The simulated log P(w < b), w ~ N(0, C C'), `c` lower triangular m x m
/// row-major with a positive diagonal; the uniforms of dimension k (k < m - 1)
/// are `u[k * stride..][..draws]`. With `grad`, `w.gb` and `w.gc` hold the
/// gradient of log P. Returns -inf when every draw's probability underflows.
#[allow(clippy::too_many_arguments)]
pub fn log_probability(
    c: &[f64],
    m: usize,
    b: &[f64],
    u: &[f64],
    stride: usize,
    draws: usize,
    grad: bool,
    w: &mut Work,
) -> f64 {
    w.prepare(m, grad);
    let c00 = c[0];
    let z0 = b[0] / c00;
    let log_p0 = normal::log_cdf(z0);
    let lam0 = normal::inv_mills(z0);
    if m == 1 {
        if grad {
            w.gb[0] = lam0 / c00;
            w.gc[0] = -lam0 * z0 / c00;
        }
        return log_p0;
    }
    let args = Args {
        c,
        m,
        b,
        u,
        stride,
        draws,
        grad,
        z0,
        p0: log_p0.exp(),
    };
    let total = dispatch(&args, w);
    if total <= 0.0 || !total.is_finite() {
        if grad {
            w.gb.iter_mut().for_each(|g| *g = 0.0);
            w.gc.iter_mut().for_each(|g| *g = 0.0);
        }
        return f64::NEG_INFINITY;
    }
    if grad {
        let inv = 1.0 / total;
        w.gb.iter_mut().for_each(|g| *g *= inv);
        w.gc.iter_mut().for_each(|g| *g *= inv);
        w.gb[0] += lam0 / c00;
        w.gc[0] -= lam0 * z0 / c00;
    }
    log_p0 + (total / draws as f64).ln()
}

struct Args<'a> {
    c: &'a [f64],
    m: usize,
    b: &'a [f64],
    u: &'a [f64],
    stride: usize,
    draws: usize,
    grad: bool,
    z0: f64,
    p0: f64,
}

/// The sum over draws of prod_{k>1} Phi(z_kr) (and, with `grad`, that sum's
/// gradient by b and C, unscaled, in `w`), with the widest vectors there are.
fn dispatch(a: &Args, w: &mut Work) -> f64 {
    #[cfg(target_arch = "x86_64")]
    {
        if crate::model::logit::block::wide_path() {
            // SAFETY: the processor supports AVX-512F, AVX2 and FMA, checked just above.
            return unsafe { sum_avx512(a, w) };
        }
        if crate::model::logit::block::fast_path() {
            // SAFETY: the processor supports AVX2 and FMA, checked just above.
            return unsafe { sum_avx2(a, w) };
        }
    }
    sum_body::<false>(a, w)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn sum_avx2(a: &Args, w: &mut Work) -> f64 {
    sum_body::<true>(a, w)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx2,fma")]
fn sum_avx512(a: &Args, w: &mut Work) -> f64 {
    sum_body::<true>(a, w)
}

#[inline(always)]
fn sum_body<const F: bool>(a: &Args, w: &mut Work) -> f64 {
    let cheb = vector::coefficients();
    let mut total = 0.0;
    let mut start = 0;
    while start < a.draws {
        let n = BLOCK.min(a.draws - start);
        total += block::<F>(a, w, start, n, cheb);
        start += n;
    }
    total
}

/// One block of `n` draws from `start`: forward through the dimensions, then
/// (with `grad`) the reverse sweep; returns the block's sum of products.
#[inline(always)]
fn block<const F: bool>(
    a: &Args,
    w: &mut Work,
    start: usize,
    n: usize,
    cheb: &[f64; TERMS],
) -> f64 {
    let (m, c) = (a.m, a.c);
    let prod = &mut w.prod[..n];
    prod.iter_mut().for_each(|p| *p = 1.0);
    for k in 0..m {
        let ckk = c[k * m + k];
        let zk = &mut w.z[k * BLOCK..k * BLOCK + n];
        // z_k = (b_k - sum_{l<k} C_kl eta_l) / C_kk.
        if k == 0 {
            zk.iter_mut().for_each(|z| *z = a.z0);
        } else {
            zk.iter_mut().for_each(|z| *z = a.b[k]);
            for l in 0..k {
                let ckl = c[k * m + l];
                let el = &w.eta[l * BLOCK..l * BLOCK + n];
                for (z, e) in zk.iter_mut().zip(el) {
                    *z = vector_madd::<F>(-ckl, *e, *z);
                }
            }
            let inv = 1.0 / ckk;
            zk.iter_mut().for_each(|z| *z *= inv);
        }
        let last = k + 1 == m;
        let lam = &mut w.lam[k * BLOCK..k * BLOCK + n];
        let pk = &mut w.pk[..n];
        if k == 0 {
            pk.iter_mut().for_each(|p| *p = a.p0);
        } else {
            let Some(stages) = w.stages.as_mut() else {
                return 0.0;
            };
            vector::phi_block::<F>(zk, pk, lam, cheb, stages);
            for (pr, p) in prod.iter_mut().zip(pk.iter()) {
                *pr *= p;
            }
        }
        if !last {
            let uk = &a.u[k * a.stride + start..k * a.stride + start + n];
            let eta = &mut w.eta[k * BLOCK..k * BLOCK + n];
            for r in 0..n {
                eta[r] = vector::quantile::<F>((uk[r] * pk[r]).max(TINY));
            }
            if a.grad {
                // d eta / d z = u phi(z) / phi(eta), in one exponential.
                let ratio = &mut w.ratio[k * BLOCK..k * BLOCK + n];
                for r in 0..n {
                    let (e, z) = (eta[r], zk[r]);
                    ratio[r] = uk[r] * vector::exp::<F>(0.5 * (e * e - z * z));
                }
            }
        }
    }
    let sum: f64 = prod.iter().sum();
    if a.grad {
        backward::<F>(a, w, n);
    }
    sum
}

#[inline(always)]
fn vector_madd<const F: bool>(a: f64, b: f64, c: f64) -> f64 {
    crate::model::logit::fastmath::madd::<F>(a, b, c)
}

/// The reverse sweep of one block: adds sum_r prod_r d log prod_r into `w.gb`, `w.gc`.
#[inline(always)]
fn backward<const F: bool>(a: &Args, w: &mut Work, n: usize) {
    let (m, c) = (a.m, a.c);
    w.etabar[..m * BLOCK].iter_mut().for_each(|e| *e = 0.0);
    for k in (0..m).rev() {
        let ckk = c[k * m + k];
        let inv = 1.0 / ckk;
        let (head, tail) = w.etabar.split_at_mut(k * BLOCK);
        let ebk = &tail[..n];
        let lam = &w.lam[k * BLOCK..k * BLOCK + n];
        let ratio = &w.ratio[k * BLOCK..k * BLOCK + n];
        let zk = &w.z[k * BLOCK..k * BLOCK + n];
        let prod = &w.prod[..n];
        // zbar = lambda_k + etabar_k d eta_k / d z_k; s = prod zbar / C_kk.
        let mut sb = 0.0;
        let mut sz = 0.0;
        let mut zbar = [0.0; BLOCK];
        for r in 0..n {
            let mut zb = if k > 0 { lam[r] } else { 0.0 };
            if k + 1 < m {
                zb = vector_madd::<F>(ebk[r], ratio[r], zb);
            }
            zbar[r] = zb;
            let s = prod[r] * zb * inv;
            sb += s;
            sz += s * zk[r];
        }
        w.gb[k] += sb;
        w.gc[k * m + k] -= sz;
        for l in 0..k {
            let ckl = c[k * m + l] * inv;
            let el = &w.eta[l * BLOCK..l * BLOCK + n];
            let ebl = &mut head[l * BLOCK..l * BLOCK + n];
            let mut se = 0.0;
            for r in 0..n {
                se += prod[r] * zbar[r] * el[r];
                ebl[r] = vector_madd::<F>(-zbar[r], ckl, ebl[r]);
            }
            w.gc[k * m + l] -= se * inv;
        }
    }
}
