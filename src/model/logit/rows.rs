//! The logit's choice probabilities of one situation at many coefficient
//! points at once (a mixture's draws or classes): utilities laid out as one
//! row per alternative over the points, so that the maximum, the
//! exponentials and the normalisation each run down contiguous rows and
//! vectorise. The sums over alternatives run in alternative order.

use super::fastmath::exp_nonpositive;

/// Replaces the utilities `v` (`[alternative * points + point]`, -inf =
/// unavailable) by the choice probabilities at each point; a point with no
/// alternative available gets zeros. `scratch` grows to 2 × points.
pub fn softmax_rows(v: &mut [f64], points: usize, scratch: &mut Vec<f64>) {
    if points == 0 {
        return;
    }
    if scratch.len() < 2 * points {
        scratch.resize(2 * points, 0.0);
    }
    #[cfg(target_arch = "x86_64")]
    {
        if super::block::wide_path() {
            // SAFETY: the processor supports AVX-512F, AVX2 and FMA, checked just above.
            return unsafe { rows_avx512(v, points, scratch) };
        }
        if super::block::fast_path() {
            // SAFETY: the processor supports AVX2 and FMA, checked just above.
            return unsafe { rows_avx2(v, points, scratch) };
        }
    }
    rows_body::<false>(v, points, scratch)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn rows_avx2(v: &mut [f64], points: usize, scratch: &mut [f64]) {
    rows_body::<true>(v, points, scratch)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx2,fma")]
fn rows_avx512(v: &mut [f64], points: usize, scratch: &mut [f64]) {
    rows_body::<true>(v, points, scratch)
}

#[inline(always)]
fn rows_body<const F: bool>(v: &mut [f64], r: usize, scratch: &mut [f64]) {
    let (mx, s) = scratch[..2 * r].split_at_mut(r);
    mx.iter_mut().for_each(|m| *m = f64::NEG_INFINITY);
    for row in v.chunks_exact(r) {
        for (m, &x) in mx.iter_mut().zip(row) {
            *m = m.max(x);
        }
    }
    // A point with nothing available: its row of -inf stays -inf (e^-inf = 0).
    for m in mx.iter_mut() {
        if *m == f64::NEG_INFINITY {
            *m = 0.0;
        }
    }
    s.iter_mut().for_each(|x| *x = 0.0);
    for row in v.chunks_exact_mut(r) {
        for ((x, &m), sum) in row.iter_mut().zip(mx.iter()).zip(s.iter_mut()) {
            let e = exp_nonpositive::<F>(*x - m);
            *x = e;
            *sum += e;
        }
    }
    for x in s.iter_mut() {
        *x = if *x > 0.0 { 1.0 / *x } else { 0.0 };
    }
    for row in v.chunks_exact_mut(r) {
        for (x, &inv) in row.iter_mut().zip(s.iter()) {
            *x *= inv;
        }
    }
}
