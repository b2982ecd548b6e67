//! The blocked logit pass: coefficients folded per alternative and value,
//! blocks transposed to rows, vectorised utilities, probabilities, gradient
//! and Hessian sums, compiled per instruction set and chosen at run time.

#[allow(unused_imports)]
use super::*;

/// Situations per block of the logit pass.
pub(crate) const BLOCK: usize = 128;

/// The design at one `beta`, laid out for the logit pass. Values are indexed
/// by a coordinate `d`: 0 is the constant 1, then the attributes the features
/// read, then the characteristics.
pub(crate) struct Plan<'a> {
    pub(crate) obs: &'a Observations,
    pub(crate) j: usize,
    pub(crate) k: usize,
    pub(crate) attrs: Vec<&'a [f64]>,
    pub(crate) chars: Vec<&'a [f64]>,
    /// Coefficient of coordinate `d` in alternative `a`'s utility, repeated over a
    /// block: `tiles[d][t] = theta(d, t % J)` for `t < BLOCK * J`.
    pub(crate) tiles: Vec<Vec<f64>>,
    /// Every feature as (parameter, alternative, coordinate).
    pub(crate) feats: Vec<(usize, usize, usize)>,
    /// The sums of w p_a u_d u_d' the Hessian needs, one per (alternative a,
    /// coordinates d <= d'), each with the cells of the K x K Hessian (upper
    /// triangle) it enters.
    pub(crate) hess_terms: Vec<HessTerm>,
}

pub(crate) struct HessTerm {
    pub(crate) alt: usize,
    pub(crate) d1: usize,
    pub(crate) d2: usize,
    pub(crate) cells: Vec<usize>,
}

impl<'a> Plan<'a> {
    pub(crate) fn new(d: &'a Design, beta: &[f64]) -> Plan<'a> {
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

    pub(crate) fn dims(&self) -> usize {
        self.tiles.len()
    }
}

/// Copies interleaved `src[b * J + a]` into rows `dst[a][b]` (b < nb).
#[inline(always)]
pub(crate) fn to_rows(src: &[f64], dst: &mut [[f64; BLOCK]], j: usize, nb: usize) {
    #[inline(always)]
    pub(crate) fn fixed<const J: usize>(src: &[f64], dst: &mut [[f64; BLOCK]], nb: usize) {
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
pub(crate) fn from_rows(src: &[[f64; BLOCK]], dst: &mut [f64], j: usize, nb: usize) {
    #[inline(always)]
    pub(crate) fn fixed<const J: usize>(src: &[[f64; BLOCK]], dst: &mut [f64], nb: usize) {
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
pub(crate) struct Block {
    /// Attribute part of the utilities (-inf where unavailable), and weighted
    /// residuals: interleaved.
    pub(crate) v: Vec<f64>,
    pub(crate) r: Vec<f64>,
    /// Utilities, then probabilities, then weighted residuals, as rows.
    pub(crate) rows: Vec<[f64; BLOCK]>,
    /// Per situation: largest available utility, chosen utility, log of the
    /// denominator, and the denominator (then its inverse).
    pub(crate) m: [f64; BLOCK],
    pub(crate) vc: [f64; BLOCK],
    pub(crate) lse: [f64; BLOCK],
    pub(crate) sum: [f64; BLOCK],
}

impl Block {
    pub(crate) fn new(plan: &Plan) -> Block {
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

    /// Utilities of situations `i0..i0 + nb` as rows (-inf where unavailable),
    /// and each one's chosen utility in `vc`.
    #[inline(always)]
    pub(crate) fn utilities<const F: bool>(&mut self, plan: &Plan, i0: usize, nb: usize) {
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
        if let Some(o) = &plan.obs.offset {
            for (vi, oi) in v.iter_mut().zip(&o[base..base + l]) {
                *vi += oi;
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
    }

    /// Utilities, probabilities (as rows) and log-denominators of situations `i0..i0 + nb`.
    #[inline(always)]
    pub(crate) fn fill<const F: bool>(&mut self, plan: &Plan, i0: usize, nb: usize) {
        self.utilities::<F>(plan, i0, nb);
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
    pub(crate) fn residuals(&mut self, plan: &Plan, i0: usize, nb: usize, interleaved: bool) {
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
pub(crate) fn dot<const F: bool>(a: &[f64], b: &[f64]) -> f64 {
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
pub(crate) struct HessBlock {
    /// Probabilities.
    pub(crate) p: Vec<[f64; BLOCK]>,
    /// Each attribute's values, `[attr][a]`.
    pub(crate) x: Vec<Vec<[f64; BLOCK]>>,
    /// p times each coordinate's value, `[d][a]`.
    pub(crate) pu: Vec<Vec<[f64; BLOCK]>>,
    /// Per parameter, the probability-weighted mean of its variable in each situation.
    pub(crate) xbar: Vec<[f64; BLOCK]>,
    /// The same times the situation's weight.
    pub(crate) wxbar: Vec<[f64; BLOCK]>,
    pub(crate) ones: [f64; BLOCK],
}

impl HessBlock {
    pub(crate) fn new(plan: &Plan) -> HessBlock {
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
    pub(crate) fn u<'s>(
        &'s self,
        plan: &'s Plan,
        i0: usize,
        nb: usize,
        d: usize,
        a: usize,
    ) -> &'s [f64] {
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
    pub(crate) fn add<const F: bool>(
        &mut self,
        plan: &Plan,
        i0: usize,
        nb: usize,
        acc: &mut LogitAcc,
    ) {
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

/// Whether the processor has AVX2 and FMA (the logit pass then uses them).
pub(crate) fn fast_path() -> bool {
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
pub(crate) fn wide_path() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        fast_path() && std::arch::is_x86_feature_detected!("avx512f")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}
