//! One thread's sums of the blocked logit pass over its situations
//! (`LogitAcc`): the log-likelihood, the gradient and the Hessian block by
//! block, compiled per instruction set and chosen at run time.

#[allow(unused_imports)]
use super::*;

/// One thread's sums over its situations.
pub(crate) struct LogitAcc {
    pub(crate) ll: Compensated,
    /// Gradient per coordinate over block positions, `[d][t]`: attributes
    /// interleaved (`t = b * J + a`), the constant and characteristics as rows
    /// (`t = a * BLOCK + b`).
    pub(crate) g: Vec<Vec<f64>>,
    /// The Hessian's sums of w p u u' per term over the block's situations.
    pub(crate) s: Vec<[f64; BLOCK]>,
    /// The x-bar outer products, K x K upper triangle.
    pub(crate) outer: Vec<f64>,
}

impl LogitAcc {
    /// Zero sums, with room for the gradient and the Hessian only when wanted.
    #[inline]
    fn new(plan: &Plan, want_grad: bool, want_hess: bool) -> LogitAcc {
        let k = plan.k;
        LogitAcc {
            ll: Compensated::default(),
            g: if want_grad {
                vec![vec![0.0; BLOCK * plan.j]; plan.dims()]
            } else {
                Vec::new()
            },
            s: if want_hess {
                vec![[0.0; BLOCK]; plan.hess_terms.len()]
            } else {
                Vec::new()
            },
            outer: if want_hess {
                vec![0.0; k * k]
            } else {
                Vec::new()
            },
        }
    }

    /// Adds the block's gradient sums (residuals already in `blk`).
    #[inline(always)]
    fn add_gradient<const F: bool>(&mut self, plan: &Plan, blk: &Block, i0: usize, nb: usize) {
        let j = plan.j;
        let na = plan.attrs.len();
        let lb = nb * j;
        // Constants and characteristics as rows, [a * BLOCK + b].
        for (a, row) in blk.rows.iter().enumerate() {
            let row = &row[..nb];
            let g = &mut self.g[0][a * BLOCK..a * BLOCK + nb];
            for (g, ri) in g.iter_mut().zip(row) {
                *g += ri;
            }
            for (c, z) in plan.chars.iter().enumerate() {
                let g = &mut self.g[1 + na + c][a * BLOCK..a * BLOCK + nb];
                for ((g, ri), zi) in g.iter_mut().zip(row).zip(&z[i0..i0 + nb]) {
                    *g = madd::<F>(*ri, *zi, *g);
                }
            }
        }
        // Attributes interleaved, [b * J + a].
        let r = &blk.r[..lb];
        for (a, x) in plan.attrs.iter().enumerate() {
            let x = &x[i0 * j..i0 * j + lb];
            for ((g, ri), xi) in self.g[1 + a][..lb].iter_mut().zip(r).zip(x) {
                *g = madd::<F>(*ri, *xi, *g);
            }
        }
    }
}

#[inline(always)]
pub(crate) fn logit_chunk_body<const F: bool>(
    plan: &Plan,
    range: std::ops::Range<usize>,
    want_grad: bool,
    want_hess: bool,
) -> LogitAcc {
    let obs = plan.obs;
    let mut acc = LogitAcc::new(plan, want_grad, want_hess);
    let mut hb = if want_hess {
        Some(HessBlock::new(plan))
    } else {
        None
    };
    let mut blk = Block::new(plan);
    let na = plan.attrs.len();
    let mut i0 = range.start;
    while i0 < range.end {
        let nb = BLOCK.min(range.end - i0);
        blk.fill::<F>(plan, i0, nb);
        if let Some(hb) = hb.as_mut() {
            hb.p.copy_from_slice(&blk.rows);
        }
        let w = &obs.weight[i0..i0 + nb];
        let mut ll = 0.0;
        for ((wb, vc), lse) in w.iter().zip(&blk.vc).zip(&blk.lse) {
            ll += wb * (vc - lse);
        }
        acc.ll.add(ll);
        if want_grad {
            blk.residuals(plan, i0, nb, na > 0);
            acc.add_gradient::<F>(plan, &blk, i0, nb);
        }
        if let Some(hb) = hb.as_mut() {
            hb.add::<F>(plan, i0, nb, &mut acc);
        }
        i0 += nb;
    }
    acc
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
pub(crate) fn logit_chunk_avx2(
    plan: &Plan,
    range: std::ops::Range<usize>,
    want_grad: bool,
    want_hess: bool,
) -> LogitAcc {
    logit_chunk_body::<true>(plan, range, want_grad, want_hess)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx2,fma")]
pub(crate) fn logit_chunk_avx512(
    plan: &Plan,
    range: std::ops::Range<usize>,
    want_grad: bool,
    want_hess: bool,
) -> LogitAcc {
    logit_chunk_body::<true>(plan, range, want_grad, want_hess)
}

/// The logit sums over `range`, with AVX2 vectors and fused multiply-adds
/// where the processor has them.
pub(crate) fn logit_chunk(
    plan: &Plan,
    range: std::ops::Range<usize>,
    want_grad: bool,
    want_hess: bool,
) -> LogitAcc {
    #[cfg(target_arch = "x86_64")]
    {
        if wide_path() {
            // SAFETY: the processor supports AVX-512F, AVX2 and FMA, checked just above.
            return unsafe { logit_chunk_avx512(plan, range, want_grad, want_hess) };
        }
        if fast_path() {
            // SAFETY: the processor supports AVX2 and FMA, checked just above.
            return unsafe { logit_chunk_avx2(plan, range, want_grad, want_hess) };
        }
    }
    logit_chunk_body::<false>(plan, range, want_grad, want_hess)
}
