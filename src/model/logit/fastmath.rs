//! Fast scalar maths for the logit pass: compensated (Neumaier) sums, fused
//! multiply-add, and `exp`/`ln` within two ulps that the compiler can vectorise.

#[allow(unused_imports)]
use super::*;

/// Neumaier's compensated sum: exact to rounding whatever the number of terms.
#[derive(Clone, Copy, Debug, Default)]
pub(crate) struct Compensated {
    pub(crate) sum: f64,
    pub(crate) c: f64,
}

impl Compensated {
    #[inline(always)]
    pub(crate) fn add(&mut self, x: f64) {
        let t = self.sum + x;
        if self.sum.abs() >= x.abs() {
            self.c += (self.sum - t) + x;
        } else {
            self.c += (x - t) + self.sum;
        }
        self.sum = t;
    }
    pub(crate) fn value(self) -> f64 {
        self.sum + self.c
    }
}

/// a * b + c, fused into one rounding when `F` (the processor has FMA).
#[inline(always)]
pub(crate) fn madd<const F: bool>(a: f64, b: f64, c: f64) -> f64 {
    if F {
        a.mul_add(b, c)
    } else {
        a * b + c
    }
}

/// e^x for x <= 0 (and 0 below -708, -inf included), without branches so that
/// a loop of it vectorises: x = n ln 2 + r with |r| <= ln 2 / 2, e^r by its
/// Taylor polynomial of degree 13 (truncation below 1e-17), 2^n from the
/// exponent bits. Within two ulps of the correctly rounded value.
#[inline(always)]
pub(crate) fn exp_nonpositive<const F: bool>(x: f64) -> f64 {
    const LOG2E: f64 = std::f64::consts::LOG2_E;
    // ln 2 split so that n * LN2_HI is exact for |n| < 2^20.
    const LN2_HI: f64 = 0.693_147_180_369_123_8;
    const LN2_LO: f64 = 1.908_214_929_270_587_7e-10;
    // Adding 1.5 * 2^52 rounds to an integer and leaves it in the low mantissa bits.
    const SHIFTER: f64 = 6_755_399_441_055_744.0;
    const C: [f64; 14] = [
        1.0,
        1.0,
        1.0 / 2.0,
        1.0 / 6.0,
        1.0 / 24.0,
        1.0 / 120.0,
        1.0 / 720.0,
        1.0 / 5_040.0,
        1.0 / 40_320.0,
        1.0 / 362_880.0,
        1.0 / 3_628_800.0,
        1.0 / 39_916_800.0,
        1.0 / 479_001_600.0,
        1.0 / 6_227_020_800.0,
    ];
    let under = x < -708.0;
    let xc = if under { -708.0 } else { x };
    let y = madd::<F>(xc, LOG2E, SHIFTER);
    let n = y - SHIFTER;
    let r = madd::<F>(-n, LN2_LO, madd::<F>(-n, LN2_HI, xc));
    let mut q = C[13];
    for c in C[..13].iter().rev() {
        q = madd::<F>(q, r, *c);
    }
    let ni = (y.to_bits() as i64).wrapping_sub(SHIFTER.to_bits() as i64);
    let scale = f64::from_bits((ni.wrapping_add(1023) as u64) << 52);
    if under {
        0.0
    } else {
        q * scale
    }
}

/// ln s for a positive normal s, without branches so that a loop of it
/// vectorises: s = 2^e m with m in [sqrt(1/2), sqrt(2)), ln m = 2 atanh(z) with
/// z = (m - 1) / (m + 1), |z| <= 0.172, by its series to z^21 (truncation
/// below 3e-17). Within two ulps of the correctly rounded value.
#[inline(always)]
pub(crate) fn ln_positive<const F: bool>(s: f64) -> f64 {
    const LN2_HI: f64 = 0.693_147_180_369_123_8;
    const LN2_LO: f64 = 1.908_214_929_270_587_7e-10;
    const MANTISSA: u64 = (1u64 << 52) - 1;
    const ONE: u64 = 1023u64 << 52;
    let bits = s.to_bits();
    let e = ((bits >> 52) & 0x7ff) as i64 - 1023;
    let m = f64::from_bits((bits & MANTISSA) | ONE);
    let big = m > std::f64::consts::SQRT_2;
    let m = if big { 0.5 * m } else { m };
    let e = (if big { e + 1 } else { e }) as f64;
    let f = m - 1.0;
    let z = f / (2.0 + f);
    let w = z * z;
    const C: [f64; 11] = [
        1.0,
        1.0 / 3.0,
        1.0 / 5.0,
        1.0 / 7.0,
        1.0 / 9.0,
        1.0 / 11.0,
        1.0 / 13.0,
        1.0 / 15.0,
        1.0 / 17.0,
        1.0 / 19.0,
        1.0 / 21.0,
    ];
    let mut q = C[10];
    for c in C[..10].iter().rev() {
        q = madd::<F>(q, w, *c);
    }
    // ln s = e ln 2 + 2 z q, with e ln 2 in two parts.
    let t = 2.0 * z * q;
    madd::<F>(e, LN2_HI, madd::<F>(e, LN2_LO, t))
}

fn exp_slice_body<const F: bool>(x: &[f64], y: &mut [f64]) {
    for (y, x) in y.iter_mut().zip(x) {
        *y = exp_nonpositive::<F>(*x);
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn exp_slice_avx2(x: &[f64], y: &mut [f64]) {
    exp_slice_body::<true>(x, y)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx2,fma")]
fn exp_slice_avx512(x: &[f64], y: &mut [f64]) {
    exp_slice_body::<true>(x, y)
}

/// e^x of every x <= 0 with the widest vectors the processor has (the
/// benchmark's measure of what one exponential of a pass costs).
pub fn exp_slice(x: &[f64], y: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        if super::block::wide_path() {
            // SAFETY: the processor supports AVX-512F, AVX2 and FMA, checked just above.
            return unsafe { exp_slice_avx512(x, y) };
        }
        if super::block::fast_path() {
            // SAFETY: the processor supports AVX2 and FMA, checked just above.
            return unsafe { exp_slice_avx2(x, y) };
        }
    }
    exp_slice_body::<false>(x, y)
}
