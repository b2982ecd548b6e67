//! The log-likelihood of logit and binary probit with its analytic gradient
//! and Hessian, in one pass over the design split across the cores. Each
//! thread keeps a few scratch buffers; nothing is allocated per situation.
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
use crate::design::{Design, Feature, Value};
use crate::spec::Family;

use super::normal;

/// The model kind a pass evaluates.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Kind {
    pub family: Family,
    /// Reference alternative (probit's utility difference is other minus base).
    pub base: usize,
}

/// What a pass returns: log-likelihood, gradient (length K) and Hessian (K x K row-major, when asked).
#[derive(Clone, Debug)]
pub struct Eval {
    pub ll: f64,
    pub grad: Vec<f64>,
    pub hess: Option<Vec<f64>>,
}

/// Logit probabilities of situation `i` into `p` from utilities `v` (log-sum-exp); returns log of the denominator.
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

/// Neumaier's compensated sum: exact to rounding whatever the number of terms.
#[derive(Clone, Copy, Debug, Default)]
struct Compensated {
    sum: f64,
    c: f64,
}

impl Compensated {
    #[inline(always)]
    fn add(&mut self, x: f64) {
        let t = self.sum + x;
        if self.sum.abs() >= x.abs() {
            self.c += (self.sum - t) + x;
        } else {
            self.c += (x - t) + self.sum;
        }
        self.sum = t;
    }
    fn value(self) -> f64 {
        self.sum + self.c
    }
}

/// a * b + c, fused into one rounding when `F` (the processor has FMA).
#[inline(always)]
fn madd<const F: bool>(a: f64, b: f64, c: f64) -> f64 {
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
fn exp_nonpositive<const F: bool>(x: f64) -> f64 {
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
fn ln_positive<const F: bool>(s: f64) -> f64 {
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

/// Situations per block of the logit pass.
const BLOCK: usize = 128;

/// The design at one `beta`, laid out for the logit pass. Values are indexed
/// by a coordinate `d`: 0 is the constant 1, then the attributes the features
/// read, then the characteristics.
struct Plan<'a> {
    obs: &'a Observations,
    j: usize,
    k: usize,
    attrs: Vec<&'a [f64]>,
    chars: Vec<&'a [f64]>,
    /// Coefficient of coordinate `d` in alternative `a`'s utility, repeated over a
    /// block: `tiles[d][t] = theta(d, t % J)` for `t < BLOCK * J`.
    tiles: Vec<Vec<f64>>,
    /// Every feature as (parameter, alternative, coordinate).
    feats: Vec<(usize, usize, usize)>,
    /// The sums of w p_a u_d u_d' the Hessian needs, one per (alternative a,
    /// coordinates d <= d'), each with the cells of the K x K Hessian (upper
    /// triangle) it enters.
    hess_terms: Vec<HessTerm>,
}

struct HessTerm {
    alt: usize,
    d1: usize,
    d2: usize,
    cells: Vec<usize>,
}

impl<'a> Plan<'a> {
    fn new(d: &'a Design, beta: &[f64]) -> Plan<'a> {
        let obs = &*d.obs;
        let j = obs.alternatives;
        let mut attr_ids: Vec<usize> = Vec::new();
        let mut char_ids: Vec<usize> = Vec::new();
        for f in d.features.iter().flatten() {
            match f.value {
                Value::Attribute(a) if !attr_ids.contains(&a) => attr_ids.push(a),
                Value::Characteristic(c) if !char_ids.contains(&c) => char_ids.push(c),
                _ => {}
            }
        }
        let coord = |v: Value| match v {
            Value::One => 0,
            Value::Attribute(a) => 1 + attr_ids.iter().position(|&x| x == a).unwrap_or(0),
            Value::Characteristic(c) => {
                1 + attr_ids.len() + char_ids.iter().position(|&x| x == c).unwrap_or(0)
            }
        };
        let dims = 1 + attr_ids.len() + char_ids.len();
        let mut theta = vec![0.0; dims * j];
        let k = d.params;
        let mut feats = Vec::new();
        let mut hess_terms: Vec<HessTerm> = Vec::new();
        for (a, fs) in d.features.iter().enumerate().take(j) {
            for f in fs {
                let c = coord(f.value);
                theta[c * j + a] += beta[f.param];
                feats.push((f.param, a, c));
            }
            // Every ordered pair of the alternative's features with parameters in
            // increasing order: two features of one parameter count in both orders.
            for f1 in fs {
                for f2 in fs {
                    if f1.param > f2.param {
                        continue;
                    }
                    let (c1, c2) = (coord(f1.value), coord(f2.value));
                    let (d1, d2) = (c1.min(c2), c1.max(c2));
                    let cell = f1.param * k + f2.param;
                    match hess_terms
                        .iter_mut()
                        .find(|h| h.alt == a && h.d1 == d1 && h.d2 == d2)
                    {
                        Some(h) => h.cells.push(cell),
                        None => hess_terms.push(HessTerm {
                            alt: a,
                            d1,
                            d2,
                            cells: vec![cell],
                        }),
                    }
                }
            }
        }
        let tiles = (0..dims)
            .map(|c| (0..BLOCK * j).map(|t| theta[c * j + t % j]).collect())
            .collect();
        Plan {
            obs,
            j,
            k,
            attrs: attr_ids
                .iter()
                .map(|&a| obs.attributes[a].as_slice())
                .collect(),
            chars: char_ids
                .iter()
                .map(|&c| obs.characteristics[c].as_slice())
                .collect(),
            tiles,
            feats,
            hess_terms,
        }
    }

    fn dims(&self) -> usize {
        self.tiles.len()
    }
}

/// Copies interleaved `src[b * J + a]` into rows `dst[a][b]` (b < nb).
#[inline(always)]
fn to_rows(src: &[f64], dst: &mut [[f64; BLOCK]], j: usize, nb: usize) {
    #[inline(always)]
    fn fixed<const J: usize>(src: &[f64], dst: &mut [[f64; BLOCK]], nb: usize) {
        let dst = &mut dst[..J];
        for (b, c) in src[..nb * J].chunks_exact(J).take(BLOCK).enumerate() {
            for a in 0..J {
                dst[a][b] = c[a];
            }
        }
    }
    match j {
        2 => fixed::<2>(src, dst, nb),
        3 => fixed::<3>(src, dst, nb),
        4 => fixed::<4>(src, dst, nb),
        5 => fixed::<5>(src, dst, nb),
        6 => fixed::<6>(src, dst, nb),
        7 => fixed::<7>(src, dst, nb),
        8 => fixed::<8>(src, dst, nb),
        _ => {
            for (a, row) in dst.iter_mut().enumerate().take(j) {
                for (x, y) in row[..nb].iter_mut().zip(src[a..].iter().step_by(j)) {
                    *x = *y;
                }
            }
        }
    }
}

/// Copies rows `src[a][b]` into interleaved `dst[b * J + a]` (b < nb).
#[inline(always)]
fn from_rows(src: &[[f64; BLOCK]], dst: &mut [f64], j: usize, nb: usize) {
    #[inline(always)]
    fn fixed<const J: usize>(src: &[[f64; BLOCK]], dst: &mut [f64], nb: usize) {
        let src = &src[..J];
        for (b, c) in dst[..nb * J].chunks_exact_mut(J).take(BLOCK).enumerate() {
            for a in 0..J {
                c[a] = src[a][b];
            }
        }
    }
    match j {
        2 => fixed::<2>(src, dst, nb),
        3 => fixed::<3>(src, dst, nb),
        4 => fixed::<4>(src, dst, nb),
        5 => fixed::<5>(src, dst, nb),
        6 => fixed::<6>(src, dst, nb),
        7 => fixed::<7>(src, dst, nb),
        8 => fixed::<8>(src, dst, nb),
        _ => {
            for (a, row) in src.iter().enumerate().take(j) {
                for (x, y) in dst[a..nb * j].iter_mut().step_by(j).zip(&row[..nb]) {
                    *x = *y;
                }
            }
        }
    }
}

/// A thread's buffers for the logit pass. Interleaved buffers are indexed
/// `[b * J + j]` like the data; the per-situation steps (constants and
/// characteristics, largest utility, exponentials, denominators, residuals)
/// work on rows `[j][b]`, so that they too run over contiguous situations.
struct Block {
    /// Attribute part of the utilities (-inf where unavailable), and weighted
    /// residuals: interleaved.
    v: Vec<f64>,
    r: Vec<f64>,
    /// Utilities, then probabilities, then weighted residuals, as rows.
    rows: Vec<[f64; BLOCK]>,
    /// Per situation: largest available utility, chosen utility, log of the
    /// denominator, and the denominator (then its inverse).
    m: [f64; BLOCK],
    vc: [f64; BLOCK],
    lse: [f64; BLOCK],
    sum: [f64; BLOCK],
}

impl Block {
    fn new(plan: &Plan) -> Block {
        let l = BLOCK * plan.j;
        Block {
            v: vec![0.0; l],
            r: vec![0.0; l],
            rows: vec![[0.0; BLOCK]; plan.j],
            m: [0.0; BLOCK],
            vc: [0.0; BLOCK],
            lse: [0.0; BLOCK],
            sum: [0.0; BLOCK],
        }
    }

    /// Utilities, probabilities (as rows) and log-denominators of situations `i0..i0 + nb`.
    #[inline(always)]
    fn fill<const F: bool>(&mut self, plan: &Plan, i0: usize, nb: usize) {
        let j = plan.j;
        let l = nb * j;
        let base = i0 * j;
        let av = &plan.obs.available[base..base + l];
        let v = &mut self.v[..l];
        v.iter_mut().for_each(|x| *x = 0.0);
        for (a, x) in plan.attrs.iter().enumerate() {
            let x = &x[base..base + l];
            let t = &plan.tiles[1 + a][..l];
            for ((vi, xi), ti) in v.iter_mut().zip(x).zip(t) {
                *vi = madd::<F>(*ti, *xi, *vi);
            }
        }
        for (vi, &a) in v.iter_mut().zip(av) {
            *vi = if a { *vi } else { f64::NEG_INFINITY };
        }
        to_rows(v, &mut self.rows, j, nb);
        // Constants and characteristics, per alternative over the situations.
        let na = plan.attrs.len();
        for (a, row) in self.rows.iter_mut().enumerate() {
            let row = &mut row[..nb];
            let c0 = plan.tiles[0][a];
            row.iter_mut().for_each(|x| *x += c0);
            for (c, z) in plan.chars.iter().enumerate() {
                let th = plan.tiles[1 + na + c][a];
                for (x, zi) in row.iter_mut().zip(&z[i0..i0 + nb]) {
                    *x = madd::<F>(th, *zi, *x);
                }
            }
        }
        let ch = &plan.obs.chosen[i0..i0 + nb];
        for (b, c) in ch.iter().enumerate() {
            self.vc[b] = self.rows[*c as usize][b];
        }
        let m = &mut self.m[..nb];
        m.iter_mut().for_each(|x| *x = f64::NEG_INFINITY);
        for row in self.rows.iter() {
            for (mb, x) in m.iter_mut().zip(&row[..nb]) {
                *mb = if *x > *mb { *x } else { *mb };
            }
        }
        for row in self.rows.iter_mut() {
            for (x, mb) in row[..nb].iter_mut().zip(m.iter()) {
                *x = exp_nonpositive::<F>(*x - *mb);
            }
        }
        let sum = &mut self.sum[..nb];
        sum.iter_mut().for_each(|x| *x = 0.0);
        for row in self.rows.iter() {
            for (s, x) in sum.iter_mut().zip(&row[..nb]) {
                *s += x;
            }
        }
        for ((lse, s), mb) in self.lse[..nb].iter_mut().zip(sum.iter_mut()).zip(m.iter()) {
            *lse = mb + ln_positive::<F>(*s);
            *s = 1.0 / *s;
        }
        for row in self.rows.iter_mut() {
            for (x, inv) in row[..nb].iter_mut().zip(sum.iter()) {
                *x *= inv;
            }
        }
    }

    /// Weighted residuals w (1[j chosen] - p_j) of the block, as rows in place of
    /// the probabilities, and interleaved into `r` if `interleaved`.
    #[inline(always)]
    fn residuals(&mut self, plan: &Plan, i0: usize, nb: usize, interleaved: bool) {
        let w = &plan.obs.weight[i0..i0 + nb];
        let ch = &plan.obs.chosen[i0..i0 + nb];
        for (a, row) in self.rows.iter_mut().enumerate() {
            for ((x, wb), cb) in row[..nb].iter_mut().zip(w).zip(ch) {
                let y = if *cb as usize == a { 1.0 } else { 0.0 };
                *x = wb * (y - *x);
            }
        }
        if interleaved {
            from_rows(&self.rows, &mut self.r, plan.j, nb);
        }
    }
}

/// Dot product with two vectors of four running sums (so that it vectorises).
#[inline(always)]
fn dot<const F: bool>(a: &[f64], b: &[f64]) -> f64 {
    let mut s0 = [0.0f64; 4];
    let mut s1 = [0.0f64; 4];
    let ca = a.chunks_exact(8);
    let cb = b.chunks_exact(8);
    let mut tail = 0.0;
    for (x, y) in ca.remainder().iter().zip(cb.remainder()) {
        tail += x * y;
    }
    for (x, y) in ca.zip(cb) {
        for q in 0..4 {
            s0[q] = madd::<F>(x[q], y[q], s0[q]);
            s1[q] = madd::<F>(x[q + 4], y[q + 4], s1[q]);
        }
    }
    let t = [s0[0] + s1[0], s0[1] + s1[1], s0[2] + s1[2], s0[3] + s1[3]];
    ((t[0] + t[2]) + (t[1] + t[3])) + tail
}

/// Buffers for the Hessian part of the logit pass, all as rows `[a][b]`.
struct HessBlock {
    /// Probabilities.
    p: Vec<[f64; BLOCK]>,
    /// Each attribute's values, `[attr][a]`.
    x: Vec<Vec<[f64; BLOCK]>>,
    /// p times each coordinate's value, `[d][a]`.
    pu: Vec<Vec<[f64; BLOCK]>>,
    /// Per parameter, the probability-weighted mean of its variable in each situation.
    xbar: Vec<[f64; BLOCK]>,
    /// The same times the situation's weight.
    wxbar: Vec<[f64; BLOCK]>,
    ones: [f64; BLOCK],
}

impl HessBlock {
    fn new(plan: &Plan) -> HessBlock {
        let rows = || vec![[0.0; BLOCK]; plan.j];
        HessBlock {
            p: rows(),
            x: (0..plan.attrs.len()).map(|_| rows()).collect(),
            pu: (0..plan.dims()).map(|_| rows()).collect(),
            xbar: vec![[0.0; BLOCK]; plan.k],
            wxbar: vec![[0.0; BLOCK]; plan.k],
            ones: [1.0; BLOCK],
        }
    }

    /// Values of coordinate `d` in alternative `a` over the block's situations.
    #[inline(always)]
    fn u<'s>(&'s self, plan: &'s Plan, i0: usize, nb: usize, d: usize, a: usize) -> &'s [f64] {
        let na = plan.attrs.len();
        if d == 0 {
            &self.ones[..nb]
        } else if d <= na {
            &self.x[d - 1][a][..nb]
        } else {
            &plan.chars[d - 1 - na][i0..i0 + nb]
        }
    }

    /// Adds the block's Hessian sums (probabilities already in `p`).
    #[inline(always)]
    fn add<const F: bool>(&mut self, plan: &Plan, i0: usize, nb: usize, acc: &mut LogitAcc) {
        let j = plan.j;
        let k = plan.k;
        let w = &plan.obs.weight[i0..i0 + nb];
        for (a, x) in plan.attrs.iter().enumerate() {
            to_rows(&x[i0 * j..(i0 + nb) * j], &mut self.x[a], j, nb);
        }
        for d in 0..plan.dims() {
            for a in 0..j {
                let mut row = [0.0; BLOCK];
                for ((o, p), u) in row[..nb]
                    .iter_mut()
                    .zip(&self.p[a][..nb])
                    .zip(self.u(plan, i0, nb, d, a))
                {
                    *o = p * u;
                }
                self.pu[d][a] = row;
            }
        }
        for (h, s) in plan.hess_terms.iter().zip(acc.s.iter_mut()) {
            let pu = &self.pu[h.d1][h.alt][..nb];
            let u = self.u(plan, i0, nb, h.d2, h.alt);
            for (((o, wi), pi), ui) in s[..nb].iter_mut().zip(w).zip(pu).zip(u) {
                *o = madd::<F>(wi * pi, *ui, *o);
            }
        }
        for row in self.xbar.iter_mut() {
            row[..nb].iter_mut().for_each(|x| *x = 0.0);
        }
        for &(param, a, d) in &plan.feats {
            for (x, y) in self.xbar[param][..nb].iter_mut().zip(&self.pu[d][a][..nb]) {
                *x += y;
            }
        }
        for (wrow, row) in self.wxbar.iter_mut().zip(&self.xbar) {
            for ((o, x), wi) in wrow[..nb].iter_mut().zip(&row[..nb]).zip(w) {
                *o = wi * x;
            }
        }
        for a in 0..k {
            let wa = &self.wxbar[a][..nb];
            for b2 in a..k {
                acc.outer[a * k + b2] += dot::<F>(wa, &self.xbar[b2][..nb]);
            }
        }
    }
}

/// One thread's sums over its situations.
struct LogitAcc {
    ll: Compensated,
    /// Gradient per coordinate over block positions, `[d][t]`: attributes
    /// interleaved (`t = b * J + a`), the constant and characteristics as rows
    /// (`t = a * BLOCK + b`).
    g: Vec<Vec<f64>>,
    /// The Hessian's sums of w p u u' per term over the block's situations.
    s: Vec<[f64; BLOCK]>,
    /// The x-bar outer products, K x K upper triangle.
    outer: Vec<f64>,
}

#[inline(always)]
fn logit_chunk_body<const F: bool>(
    plan: &Plan,
    range: std::ops::Range<usize>,
    want_grad: bool,
    want_hess: bool,
) -> LogitAcc {
    let j = plan.j;
    let k = plan.k;
    let l = BLOCK * j;
    let obs = plan.obs;
    let dims = plan.dims();
    let mut acc = LogitAcc {
        ll: Compensated::default(),
        g: if want_grad {
            vec![vec![0.0; l]; dims]
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
    };
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
        let lb = nb * j;
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
            // Constants and characteristics as rows, [a * BLOCK + b].
            for (a, row) in blk.rows.iter().enumerate() {
                let row = &row[..nb];
                let g = &mut acc.g[0][a * BLOCK..a * BLOCK + nb];
                for (g, ri) in g.iter_mut().zip(row) {
                    *g += ri;
                }
                for (c, z) in plan.chars.iter().enumerate() {
                    let g = &mut acc.g[1 + na + c][a * BLOCK..a * BLOCK + nb];
                    for ((g, ri), zi) in g.iter_mut().zip(row).zip(&z[i0..i0 + nb]) {
                        *g = madd::<F>(*ri, *zi, *g);
                    }
                }
            }
            // Attributes interleaved, [b * J + a].
            let r = &blk.r[..lb];
            for (a, x) in plan.attrs.iter().enumerate() {
                let x = &x[i0 * j..i0 * j + lb];
                for ((g, ri), xi) in acc.g[1 + a][..lb].iter_mut().zip(r).zip(x) {
                    *g = madd::<F>(*ri, *xi, *g);
                }
            }
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
fn logit_chunk_avx2(
    plan: &Plan,
    range: std::ops::Range<usize>,
    want_grad: bool,
    want_hess: bool,
) -> LogitAcc {
    logit_chunk_body::<true>(plan, range, want_grad, want_hess)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx2,fma")]
fn logit_chunk_avx512(
    plan: &Plan,
    range: std::ops::Range<usize>,
    want_grad: bool,
    want_hess: bool,
) -> LogitAcc {
    logit_chunk_body::<true>(plan, range, want_grad, want_hess)
}

/// Whether the processor has AVX2 and FMA (the logit pass then uses them).
fn fast_path() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// Whether the processor also has AVX-512.
fn wide_path() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        fast_path() && std::arch::is_x86_feature_detected!("avx512f")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// The logit sums over `range`, with AVX2 vectors and fused multiply-adds
/// where the processor has them.
fn logit_chunk(
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

/// Probit sums over situations.
struct Acc {
    ll: Compensated,
    grad: Vec<f64>,
    hess: Vec<f64>,
    v: Vec<f64>,
    xbar: Vec<f64>,
}

impl Acc {
    fn new(k: usize, j: usize, hess: bool) -> Self {
        Acc {
            ll: Compensated::default(),
            grad: vec![0.0; k],
            hess: if hess { vec![0.0; k * k] } else { Vec::new() },
            v: vec![0.0; j],
            xbar: vec![0.0; k],
        }
    }
}

/// Sparse difference x_other - x_base of a binary situation into the dense `xd`.
#[inline]
fn probit_diff(d: &Design, i: usize, other: usize, base: usize, xd: &mut [f64]) {
    xd.iter_mut().for_each(|x| *x = 0.0);
    let add = |feats: &[Feature], j: usize, sign: f64, xd: &mut [f64]| {
        for f in feats {
            xd[f.param] += sign * d.value(i, j, f.value);
        }
    };
    add(&d.features[other], other, 1.0, xd);
    add(&d.features[base], base, -1.0, xd);
}

fn probit_chunk(
    d: &Design,
    kind: Kind,
    beta: &[f64],
    range: std::ops::Range<usize>,
    want_grad: bool,
    acc: &mut Acc,
) {
    let k = d.params;
    let want_hess = !acc.hess.is_empty();
    let obs = &*d.obs;
    let base = kind.base;
    let other = 1 - base;
    for i in range {
        if !d.available(i, base) || !d.available(i, other) {
            continue; // a one-alternative situation carries no information
        }
        let w = obs.weight[i];
        d.utilities(beta, i, &mut acc.v);
        let diff = acc.v[other] - acc.v[base];
        let q = if obs.chosen[i] as usize == other {
            1.0
        } else {
            -1.0
        };
        let t = q * diff;
        acc.ll.add(w * normal::log_cdf(t));
        if !want_grad {
            continue;
        }
        probit_diff(d, i, other, base, &mut acc.xbar);
        let lam = normal::inv_mills(t);
        let g = w * q * lam;
        for a in 0..k {
            acc.grad[a] += g * acc.xbar[a];
        }
        if want_hess {
            let h = -w * lam * (t + lam);
            for a in 0..k {
                let xa = acc.xbar[a];
                if xa == 0.0 {
                    continue;
                }
                for b in a..k {
                    acc.hess[a * k + b] += h * xa * acc.xbar[b];
                }
            }
        }
    }
}

/// The pieces a pass over `n` situations is cut into: one below 20,000
/// situations, else 2 to 64 of about 16,384 each. They depend on `n` alone, and
/// their sums are added in piece order, so that a pass gives the same figures
/// to the last bit whatever the number of cores and however the threads run.
pub fn pieces(n: usize) -> Vec<std::ops::Range<usize>> {
    let count = if n < 20_000 {
        1
    } else {
        (n / 16_384).clamp(2, 64)
    };
    let size = n.div_ceil(count).max(1);
    (0..count)
        .map(|t| (t * size).min(n)..((t + 1) * size).min(n))
        .filter(|r| !r.is_empty())
        .collect()
}

/// Runs `f` on each of `pieces(n)`, the cores taking the next piece as they
/// finish one (so a core slowed by other work takes fewer); results in piece order.
pub fn on_pieces<T: Send>(n: usize, f: impl Fn(std::ops::Range<usize>) -> T + Sync) -> Vec<T> {
    let pieces = pieces(n);
    let threads = std::thread::available_parallelism()
        .map(|t| t.get())
        .unwrap_or(1)
        .min(pieces.len());
    if threads <= 1 {
        return pieces.into_iter().map(f).collect();
    }
    let next = std::sync::atomic::AtomicUsize::new(0);
    let (f, pieces, next) = (&f, &pieces, &next);
    let mut done: Vec<(usize, T)> = std::thread::scope(|s| {
        let handles: Vec<_> = (0..threads)
            .map(|_| {
                s.spawn(move || {
                    let mut out = Vec::new();
                    loop {
                        let p = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                        let Some(r) = pieces.get(p) else { break };
                        out.push((p, f(r.clone())));
                    }
                    out
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)))
            .collect()
    });
    done.sort_by_key(|d| d.0);
    done.into_iter().map(|d| d.1).collect()
}

/// One pass: log-likelihood and, if asked, gradient and Hessian at `beta` (all K parameters).
pub fn evaluate(d: &Design, kind: Kind, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
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
    match kind.family {
        Family::Logit => {
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
            }
        }
        Family::Probit => {
            let parts = on_pieces(d.situations(), |r| {
                let mut acc = Acc::new(k, j, want_hess);
                probit_chunk(d, kind, beta, r, want_grad, &mut acc);
                acc
            });
            for p in parts {
                ll.add(p.ll.value());
                grad.iter_mut().zip(&p.grad).for_each(|(a, b)| *a += b);
                hess.iter_mut().zip(&p.hess).for_each(|(a, b)| *a += b);
            }
        }
    }
    if want_hess {
        // Only the upper triangle was accumulated.
        for a in 0..k {
            for b in 0..a {
                hess[a * k + b] = hess[b * k + a];
            }
        }
    }
    Eval {
        ll: ll.value(),
        grad: if want_grad { grad } else { Vec::new() },
        hess: if want_hess { Some(hess) } else { None },
    }
}

/// Each situation's weighted score (gradient of its log-likelihood term) passed to `f(i, score)`.
/// Used for robust covariance; runs on one core because it feeds group sums.
pub fn for_each_score(d: &Design, kind: Kind, beta: &[f64], mut f: impl FnMut(usize, &[f64])) {
    let k = d.params;
    let j = d.alternatives();
    match kind.family {
        Family::Logit => {
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
        Family::Probit => {
            let mut acc = Acc::new(k, j, false);
            for i in 0..d.situations() {
                acc.grad.iter_mut().for_each(|g| *g = 0.0);
                probit_chunk(d, kind, beta, i..i + 1, true, &mut acc);
                f(i, &acc.grad);
            }
        }
    }
}

/// Choice probabilities `[i * J + j]` at `beta` (0 for unavailable alternatives).
/// Computed situation by situation exactly as `Design::utilities` and
/// `probabilities_from_utilities` do (so the figures agree to the last bit with
/// code that uses those), split over the cores.
pub fn probabilities(d: &Design, kind: Kind, beta: &[f64]) -> Vec<f64> {
    let j = d.alternatives();
    let parts = on_pieces(d.situations(), |r| {
        let mut out = vec![0.0; r.len() * j];
        let mut v = vec![0.0; j];
        for (i, p) in r.zip(out.chunks_mut(j)) {
            d.utilities(beta, i, &mut v);
            probabilities_from_utilities(kind, &v, p);
        }
        out
    });
    let mut out = Vec::with_capacity(d.situations() * j);
    for p in parts {
        out.extend_from_slice(&p);
    }
    out
}

/// Probabilities of one situation from its utilities (-inf = unavailable).
#[inline]
pub fn probabilities_from_utilities(kind: Kind, v: &[f64], p: &mut [f64]) {
    match kind.family {
        Family::Logit => {
            softmax(v, p);
        }
        Family::Probit => {
            let base = kind.base;
            let other = 1 - base;
            if !v[base].is_finite() || !v[other].is_finite() {
                softmax(v, p);
                return;
            }
            let po = normal::cdf(v[other] - v[base]);
            p[other] = po;
            p[base] = 1.0 - po;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rng::Rng;
    use std::sync::Arc;

    /// A random logit design: `j` alternatives (the first the base), two
    /// attributes (one shared, one per alternative on some), one characteristic,
    /// constants, availability and weights; `n` not a multiple of the block.
    fn design(n: usize, j: usize, seed: u64) -> Design {
        let mut rng = Rng::new(seed);
        let mut available = vec![true; n * j];
        let mut chosen = Vec::new();
        for i in 0..n {
            for a in 1..j {
                available[i * j + a] = rng.uniform() > 0.2;
            }
            let open: Vec<usize> = (0..j).filter(|&a| available[i * j + a]).collect();
            chosen.push(open[rng.below(open.len())] as u32);
        }
        let attr = |rng: &mut Rng| -> Vec<f64> {
            (0..n * j)
                .map(|t| {
                    if available[t] {
                        3.0 * rng.normal()
                    } else {
                        0.0
                    }
                })
                .collect()
        };
        let attributes = vec![attr(&mut rng), attr(&mut rng)];
        let characteristics = vec![(0..n).map(|_| 20.0 + 10.0 * rng.normal()).collect()];
        let weight: Vec<f64> = (0..n).map(|_| 0.5 + rng.uniform()).collect();
        let mut features = vec![Vec::new(); j];
        let mut k = 0;
        for (a, f) in features.iter_mut().enumerate().skip(1) {
            f.push(Feature {
                param: k,
                value: Value::One,
            });
            k += 1;
            let _ = a;
        }
        let shared = k;
        k += 1;
        for f in features.iter_mut() {
            f.push(Feature {
                param: shared,
                value: Value::Attribute(0),
            });
        }
        for f in features.iter_mut().skip(1).step_by(2) {
            f.push(Feature {
                param: k,
                value: Value::Attribute(1),
            });
            k += 1;
        }
        for f in features.iter_mut().skip(1) {
            f.push(Feature {
                param: k,
                value: Value::Characteristic(0),
            });
            k += 1;
        }
        let obs = Observations {
            situations: n,
            alternatives: j,
            chosen,
            available,
            weight_total: weight.iter().sum(),
            weight,
            group: None,
            groups: 0,
            attributes,
            characteristics,
            first_row: (1..=n).collect(),
        };
        Design {
            obs: Arc::new(obs),
            params: k,
            features,
        }
    }

    /// The textbook sums, situation by situation, with the standard library's exp.
    fn reference(d: &Design, beta: &[f64]) -> (f64, Vec<f64>, Vec<f64>) {
        let (n, j, k) = (d.situations(), d.alternatives(), d.params);
        let (mut ll, mut g, mut h) = (0.0, vec![0.0; k], vec![0.0; k * k]);
        let mut v = vec![0.0; j];
        let mut p = vec![0.0; j];
        for i in 0..n {
            let w = d.obs.weight[i];
            let c = d.obs.chosen[i] as usize;
            d.utilities(beta, i, &mut v);
            let lse = softmax(&v, &mut p);
            ll += w * (v[c] - lse);
            let mut x = vec![vec![0.0; k]; j];
            for (a, fs) in d.features.iter().enumerate() {
                for f in fs {
                    x[a][f.param] += d.value(i, a, f.value);
                }
            }
            let xbar: Vec<f64> = (0..k)
                .map(|q| (0..j).map(|a| p[a] * x[a][q]).sum())
                .collect();
            for q in 0..k {
                g[q] += w * (x[c][q] - xbar[q]);
                for r in 0..k {
                    let m: f64 = (0..j).map(|a| p[a] * x[a][q] * x[a][r]).sum();
                    h[q * k + r] -= w * (m - xbar[q] * xbar[r]);
                }
            }
        }
        (ll, g, h)
    }

    #[test]
    fn pieces_cover_the_situations_in_order() {
        for n in [0, 1, 19_999, 20_000, 65_537, 1_000_000, 5_000_003] {
            let p = pieces(n);
            assert!(p.len() <= 64);
            let mut at = 0;
            for r in &p {
                assert_eq!(r.start, at);
                assert!(r.end > r.start);
                at = r.end;
            }
            assert_eq!(at, n);
            let sums = on_pieces(n, |r| r.len());
            assert_eq!(sums.iter().sum::<usize>(), n);
            assert_eq!(sums, p.iter().map(|r| r.len()).collect::<Vec<_>>());
        }
    }

    #[test]
    fn every_code_path_agrees_with_the_textbook_sums() {
        for (n, j) in [(1, 2), (300, 5), (517, 3), (260, 9)] {
            let d = design(n, j, 40 + n as u64);
            let mut rng = Rng::new(7);
            let beta: Vec<f64> = (0..d.params).map(|_| 0.2 * rng.normal()).collect();
            let (ll, g, h) = reference(&d, &beta);
            let e = evaluate(
                &d,
                Kind {
                    family: Family::Logit,
                    base: 0,
                },
                &beta,
                true,
                true,
            );
            let hess = e.hess.unwrap_or_default();
            let close = |a: f64, b: f64, scale: f64| (a - b).abs() <= 1e-10 * scale.max(1.0);
            assert!(
                close(e.ll, ll, ll.abs()),
                "n {n} j {j}: ll {} vs {ll}",
                e.ll
            );
            let gs = g.iter().fold(0.0f64, |m, x| m.max(x.abs()));
            let hs = h.iter().fold(0.0f64, |m, x| m.max(x.abs()));
            for q in 0..d.params {
                assert!(close(e.grad[q], g[q], gs), "n {n} j {j}: gradient {q}");
                for r in 0..d.params {
                    let (a, b) = (hess[q * d.params + r], h[q * d.params + r]);
                    assert!(close(a, b, hs), "n {n} j {j}: hessian ({q},{r}) {a} vs {b}");
                }
            }
            // The portable and vector versions: the same sums to rounding, and the
            // two vector widths the same to the last bit.
            let plan = Plan::new(&d, &beta);
            let plain = logit_chunk_body::<false>(&plan, 0..n, true, true);
            assert!(close(plain.ll.value(), ll, ll.abs()));
            #[cfg(target_arch = "x86_64")]
            {
                if fast_path() {
                    // SAFETY: the processor supports AVX2 and FMA, checked just above.
                    let v2 = unsafe { logit_chunk_avx2(&plan, 0..n, true, true) };
                    assert!(close(v2.ll.value(), ll, ll.abs()));
                    if wide_path() {
                        // SAFETY: the processor supports AVX-512F too, checked just above.
                        let v5 = unsafe { logit_chunk_avx512(&plan, 0..n, true, true) };
                        assert_eq!(v2.ll.value().to_bits(), v5.ll.value().to_bits());
                        assert_eq!(v2.g, v5.g);
                        assert_eq!(v2.s, v5.s);
                        assert_eq!(v2.outer, v5.outer);
                    }
                }
            }
            // Scores sum to the gradient.
            let mut total = vec![0.0; d.params];
            for_each_score(
                &d,
                Kind {
                    family: Family::Logit,
                    base: 0,
                },
                &beta,
                |_, s| total.iter_mut().zip(s).for_each(|(t, x)| *t += x),
            );
            for q in 0..d.params {
                assert!(close(total[q], g[q], gs), "n {n} j {j}: score sum {q}");
            }
        }
    }

    #[test]
    fn exp_matches_std_to_an_ulp_or_two() {
        for fused in [false, true] {
            let e = |x: f64| {
                if fused {
                    exp_nonpositive::<true>(x)
                } else {
                    exp_nonpositive::<false>(x)
                }
            };
            let mut worst: f64 = 0.0;
            let mut x = 0.0;
            while x > -720.0 {
                let a = e(x);
                let b = x.exp();
                if x >= -708.0 {
                    worst = worst.max(((a - b) / b).abs());
                } else {
                    assert_eq!(a, 0.0);
                }
                x -= 0.000_731;
            }
            assert!(worst < 5e-16, "worst relative error {worst:e}");
            assert_eq!(e(0.0), 1.0);
            assert_eq!(e(-1e300), 0.0);
            assert_eq!(e(f64::NEG_INFINITY), 0.0);
        }
    }

    #[test]
    fn ln_matches_std_to_an_ulp_or_two() {
        for fused in [false, true] {
            let l = |x: f64| {
                if fused {
                    ln_positive::<true>(x)
                } else {
                    ln_positive::<false>(x)
                }
            };
            let mut worst: f64 = 0.0;
            let mut x = 1e-3;
            while x < 1e4 {
                let a = l(x);
                let b = x.ln();
                worst = worst.max((a - b).abs() / b.abs().max(f64::MIN_POSITIVE));
                x *= 1.000_137;
            }
            assert!(worst < 5e-16, "worst relative error {worst:e}");
            assert_eq!(l(1.0), 0.0);
            assert_eq!(l(2.0), std::f64::consts::LN_2);
        }
    }

    #[test]
    fn compensated_sum_of_a_million_equal_terms_is_exact() {
        let mut c = Compensated::default();
        for _ in 0..1_000_000 {
            c.add(-1.489_291_313_6);
        }
        assert!((c.value() - -1_489_291.313_6).abs() <= 1e-9);
    }
}
