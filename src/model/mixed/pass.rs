//! The mixed logit's simulated log-likelihood and its analytic gradient, one
//! decision maker at a time. For decision maker n with draws r = 1..R:
//! L_n = (1/R) sum_r prod_t P_t(chosen | beta_nr), the logit kernel P at the
//! drawn coefficients; the pass works on rows of R draws (utilities,
//! exponentials and residuals of one alternative over all draws are one
//! contiguous row), so that its inner loops vectorise. The gradient is
//! sum_r w_nr sum_t (x_chosen - sum_j P_jr x_j) d beta_nr / d theta with
//! w_nr the draw's share of L_n. Passes are cut into pieces of decision
//! makers that depend on their number alone, summed in piece order.

use super::score::{add_score, to_values};
use super::{Mixed, Panel};
use crate::design::{heavy_pieces, on_ranges, Design};
use crate::model::logit::fastmath::{exp_nonpositive, ln_positive, madd, Compensated};
use crate::model::space::Willingness;
use crate::model::RandomCoefficient;

/// What one pass needs, set up once per parameter vector.
pub(crate) struct Plan<'a> {
    pub d: &'a Design,
    pub panel: &'a Panel,
    pub beta: &'a [f64],
    /// The random coefficients, one per draw dimension.
    pub terms: Vec<RandomCoefficient>,
    /// The random dimension of each parameter, if it is a random location.
    pub dim_of: Vec<Option<usize>>,
    /// In willingness-to-pay space: the price scale's parameter and the values'.
    pub space: Option<Willingness>,
}

impl<'a> Plan<'a> {
    pub fn new(m: &Mixed, d: &'a Design, panel: &'a Panel, beta: &'a [f64]) -> Plan<'a> {
        let terms = m.terms.clone();
        let mut dim_of = vec![None; d.params];
        for (dim, t) in terms.iter().enumerate() {
            dim_of[t.location] = Some(dim);
        }
        Plan {
            d,
            panel,
            beta,
            terms,
            dim_of,
            space: m.space.clone(),
        }
    }
}

/// Draws a block of the pass works on at once: its rows stay in the first-level cache.
const BLOCK: usize = 256;
/// Draws held in registers at once in the gradient's sums.
const LANES: usize = 8;

/// One thread's scratch rows, allocated once per piece.
pub(crate) struct Work {
    pub(super) r: usize,
    /// [dim][r]: the drawn coefficients and their derivatives by location.
    pub coef: Vec<f64>,
    pub(super) dm: Vec<f64>,
    /// [r]: the price scale of each draw (willingness-to-pay space).
    pub(super) scale: Vec<f64>,
    /// [r]: scratch.
    pub(super) tmp: Vec<f64>,
    /// [r]: log of the product of the chosen alternatives' probabilities.
    pub logl: Vec<f64>,
    /// [param][r]: sum over situations of x_chosen - sum_j P_j x_j.
    pub(super) g: Vec<f64>,
    /// [j][BLOCK]: utilities, then exponentials, then probabilities of a block of draws.
    v: Vec<f64>,
    mx: Vec<f64>,
    s: Vec<f64>,
    /// The decision maker's situations, set up once per decision maker: per
    /// situation the chosen alternative; per situation and alternative its
    /// availability, the fixed part of the utility and the random values
    /// ([t][j][dim]); and the (parameter, alternative, value) of each feature.
    chosen: Vec<usize>,
    avail: Vec<bool>,
    c: Vec<f64>,
    xr: Vec<f64>,
    feats: Vec<(usize, usize, f64)>,
    feats_at: Vec<usize>,
    /// The draws' shares of the decision maker's likelihood.
    pub omega: Vec<f64>,
}

impl Work {
    pub fn new(plan: &Plan) -> Work {
        let r = plan.panel.draws;
        let dims = plan.terms.len();
        let j = plan.d.alternatives();
        Work {
            r,
            coef: vec![0.0; dims * r],
            dm: vec![0.0; dims * r],
            scale: vec![1.0; r],
            tmp: Vec::with_capacity(r),
            logl: vec![0.0; r],
            g: vec![0.0; plan.d.params * r],
            v: vec![0.0; j * BLOCK],
            mx: vec![0.0; BLOCK],
            s: vec![0.0; BLOCK],
            chosen: Vec::new(),
            avail: Vec::new(),
            c: Vec::new(),
            xr: Vec::new(),
            feats: Vec::new(),
            feats_at: Vec::new(),
            omega: vec![0.0; r],
        }
    }

    /// Sets up decision maker `n`'s situations (buffers grow, never shrink).
    fn situations(&mut self, plan: &Plan, n: usize) {
        let d = plan.d;
        let (j, dims) = (d.alternatives(), plan.terms.len());
        self.chosen.clear();
        self.avail.clear();
        self.c.clear();
        self.xr.clear();
        self.feats.clear();
        self.feats_at.clear();
        for &i in plan.panel.situations_of(n) {
            let i = i as usize;
            self.chosen.push(d.obs.chosen[i] as usize);
            self.feats_at.push(self.feats.len());
            for (a, feats) in d.features.iter().enumerate() {
                let open = d.available(i, a);
                self.avail.push(open);
                let at = self.xr.len();
                self.xr.resize(at + dims, 0.0);
                let mut c = 0.0;
                let price = plan.space.as_ref().map(|w| w.price);
                if open {
                    for f in feats {
                        let x = d.value(i, a, f.value);
                        match plan.dim_of[f.param] {
                            // In willingness space the price enters as -price, times the scale.
                            _ if Some(f.param) == price => c -= x,
                            Some(dim) => self.xr[at + dim] += x,
                            None => c += plan.beta[f.param] * x,
                        }
                        if x != 0.0 {
                            self.feats.push((f.param, a, x));
                        }
                    }
                }
                self.c.push(c);
            }
            // Grouped by parameter: the gradient then updates each row once.
            let at = *self.feats_at.last().unwrap_or(&0);
            self.feats[at..].sort_by_key(|f| f.0);
        }
        self.feats_at.push(self.feats.len());
        debug_assert_eq!(self.c.len(), self.chosen.len() * j);
    }
}

/// The drawn coefficients of decision maker `n`, their derivatives by their
/// locations and, in willingness-to-pay space, each draw's price scale.
pub(crate) fn coefficients(plan: &Plan, n: usize, w: &mut Work) {
    let r = w.r;
    for (dim, t) in plan.terms.iter().enumerate() {
        let m = plan.beta[t.location];
        let coef = &mut w.coef[dim * r..(dim + 1) * r];
        let (p0, d0) = t.loadings[0];
        let e0 = plan.panel.draws_of(n, d0);
        for (c, e) in coef.iter_mut().zip(e0) {
            *c = plan.beta[p0] * e;
        }
        for &(p, d) in &t.loadings[1..] {
            let (b, e) = (plan.beta[p], plan.panel.draws_of(n, d));
            for (c, e) in coef.iter_mut().zip(e) {
                *c += b * e;
            }
        }
        let dm = &mut w.dm[dim * r..(dim + 1) * r];
        for (c, dm) in coef.iter_mut().zip(dm.iter_mut()) {
            let b = t.distribution.coefficient(m, 1.0, *c);
            *c = b;
            *dm = super::terms::slope(t.distribution, b);
        }
    }
    if let Some(space) = &plan.space {
        match plan.dim_of[space.price] {
            Some(dim) => w.scale.copy_from_slice(&w.coef[dim * r..(dim + 1) * r]),
            None => w.scale.fill(plan.beta[space.price]),
        }
    }
}

/// Decision maker `n`'s per-draw log-likelihoods (and gradient rows when
/// `grad`), with `coefficients` already filled. Draws are taken in blocks of
/// `BLOCK`, each block through all of the person's situations.
#[inline(always)]
pub(crate) fn unit<const F: bool>(plan: &Plan, n: usize, w: &mut Work, grad: bool) {
    let j = plan.d.alternatives();
    let dims = plan.terms.len();
    let r = w.r;
    w.situations(plan, n);
    w.logl.fill(0.0);
    if grad {
        w.g.fill(0.0);
    }
    let scaled = plan.space.is_some();
    let mut r0 = 0;
    while r0 < r {
        let nb = BLOCK.min(r - r0);
        for t in 0..w.chosen.len() {
            block::<F>(w, t, (j, dims, scaled), r0, nb, grad);
        }
        r0 += nb;
    }
}

/// Draws `r0..r0 + nb` of situation `t` (set up by `Work::situations`).
#[inline(always)]
fn block<const F: bool>(
    w: &mut Work,
    t: usize,
    (j, dims, scaled): (usize, usize, bool),
    r0: usize,
    nb: usize,
    grad: bool,
) {
    utilities::<F>(w, t, (j, dims, scaled), r0, nb);
    exponentials::<F>(w, t, j, r0, nb);
    if !grad {
        return;
    }
    probabilities(w, t, j, nb);
    gradient::<F>(w, t, r0, nb);
}

/// The utility rows of situation `t`'s available alternatives over the
/// block's draws (times each draw's price scale when `scaled`), and their
/// largest value per draw in `mx`.
#[inline(always)]
fn utilities<const F: bool>(
    w: &mut Work,
    t: usize,
    (j, dims, scaled): (usize, usize, bool),
    r0: usize,
    nb: usize,
) {
    let r = w.r;
    let mx = &mut w.mx[..nb];
    mx.fill(f64::NEG_INFINITY);
    for a in 0..j {
        if !w.avail[t * j + a] {
            continue;
        }
        let row = &mut w.v[a * BLOCK..a * BLOCK + nb];
        row.fill(w.c[t * j + a]);
        for dim in 0..dims {
            let x = w.xr[(t * j + a) * dims + dim];
            if x != 0.0 {
                let coef = &w.coef[dim * r + r0..dim * r + r0 + nb];
                for (v, b) in row.iter_mut().zip(coef) {
                    *v = madd::<F>(*b, x, *v);
                }
            }
        }
        if scaled {
            for (v, a) in row.iter_mut().zip(&w.scale[r0..r0 + nb]) {
                *v *= a;
            }
        }
        for (m, v) in mx.iter_mut().zip(row.iter()) {
            *m = m.max(*v);
        }
    }
}

/// The utility rows turned into exponentials (less the largest), their sums
/// in `s`, and the chosen alternative's log-probability added to `logl`.
#[inline(always)]
fn exponentials<const F: bool>(w: &mut Work, t: usize, j: usize, r0: usize, nb: usize) {
    let chosen = w.chosen[t];
    let mx = &w.mx[..nb];
    let s = &mut w.s[..nb];
    s.fill(0.0);
    let logl = &mut w.logl[r0..r0 + nb];
    for a in 0..j {
        if !w.avail[t * j + a] {
            continue;
        }
        let row = &mut w.v[a * BLOCK..a * BLOCK + nb];
        if a == chosen {
            for ((l, v), m) in logl.iter_mut().zip(row.iter()).zip(mx.iter()) {
                *l += v - m;
            }
        }
        for ((v, m), s) in row.iter_mut().zip(mx.iter()).zip(s.iter_mut()) {
            let e = exp_nonpositive::<F>(*v - m);
            *v = e;
            *s += e;
        }
    }
    for (l, s) in logl.iter_mut().zip(s.iter()) {
        *l -= ln_positive::<F>(*s);
    }
}

/// The exponential rows divided by their sums: the probabilities.
#[inline(always)]
fn probabilities(w: &mut Work, t: usize, j: usize, nb: usize) {
    let s = &mut w.s[..nb];
    for s in s.iter_mut() {
        *s = 1.0 / *s;
    }
    for a in 0..j {
        if w.avail[t * j + a] {
            let row = &mut w.v[a * BLOCK..a * BLOCK + nb];
            for (p, s) in row.iter_mut().zip(s.iter()) {
                *p *= s;
            }
        }
    }
}

/// Adds situation `t`'s residuals x_chosen - sum_a P_a x_a to the gradient
/// rows of each parameter its features enter.
#[inline(always)]
fn gradient<const F: bool>(w: &mut Work, t: usize, r0: usize, nb: usize) {
    let r = w.r;
    let chosen = w.chosen[t];
    let feats = &w.feats[w.feats_at[t]..w.feats_at[t + 1]];
    let mut start = 0;
    while start < feats.len() {
        let param = feats[start].0;
        let end = start + feats[start..].iter().take_while(|f| f.0 == param).count();
        let group = &feats[start..end];
        start = end;
        // x of the chosen alternative, then minus sum_a P_a x_a, eight draws at a time.
        let xc: f64 = group.iter().filter(|f| f.1 == chosen).map(|f| f.2).sum();
        let g = &mut w.g[param * r + r0..param * r + r0 + nb];
        let mut k = 0;
        while k + LANES <= nb {
            let mut acc = [0.0; LANES];
            acc.copy_from_slice(&g[k..k + LANES]);
            for a in acc.iter_mut() {
                *a += xc;
            }
            for &(_, a, x) in group {
                let p = &w.v[a * BLOCK + k..a * BLOCK + k + LANES];
                for l in 0..LANES {
                    acc[l] = madd::<F>(-p[l], x, acc[l]);
                }
            }
            g[k..k + LANES].copy_from_slice(&acc);
            k += LANES;
        }
        for (kk, gk) in g.iter_mut().enumerate().skip(k) {
            let mut acc = *gk + xc;
            for &(_, a, x) in group {
                acc = madd::<F>(-w.v[a * BLOCK + kk], x, acc);
            }
            *gk = acc;
        }
    }
}

/// log L_n from the per-draw log-likelihoods; leaves each draw's share in `omega`.
pub(crate) fn close_unit(w: &mut Work) -> f64 {
    let top = w.logl.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !top.is_finite() {
        w.omega.fill(0.0);
        return top;
    }
    let mut sum = 0.0;
    for (o, l) in w.omega.iter_mut().zip(&w.logl) {
        *o = (l - top).exp();
        sum += *o;
    }
    let inv = 1.0 / sum;
    w.omega.iter_mut().for_each(|o| *o *= inv);
    top + (sum / w.r as f64).ln()
}

/// The sums of one piece of decision makers.
pub(crate) struct PieceSums {
    pub ll: Compensated,
    pub grad: Vec<f64>,
    /// Per decision maker of the piece, its weighted score (when asked).
    pub scores: Vec<f64>,
}

#[inline(always)]
fn piece_body<const F: bool>(
    plan: &Plan,
    units: std::ops::Range<usize>,
    grad: bool,
    scores: bool,
) -> PieceSums {
    let k = plan.d.params;
    let mut w = Work::new(plan);
    let mut out = PieceSums {
        ll: Compensated::default(),
        grad: vec![0.0; if grad { k } else { 0 }],
        scores: Vec::with_capacity(if scores { units.len() * k } else { 0 }),
    };
    for n in units {
        coefficients(plan, n, &mut w);
        unit::<F>(plan, n, &mut w, grad || scores);
        let weight = plan.panel.weight(plan.d, n);
        out.ll.add(weight * close_unit(&mut w));
        if grad || scores {
            to_values(plan, &mut w);
        }
        if grad {
            add_score(plan, n, &w, weight, &mut out.grad);
        }
        if scores {
            let at = out.scores.len();
            out.scores.resize(at + k, 0.0);
            add_score(plan, n, &w, weight, &mut out.scores[at..]);
        }
    }
    out
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn piece_avx2(plan: &Plan, units: std::ops::Range<usize>, grad: bool, scores: bool) -> PieceSums {
    piece_body::<true>(plan, units, grad, scores)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx2,fma")]
fn piece_avx512(plan: &Plan, units: std::ops::Range<usize>, grad: bool, scores: bool) -> PieceSums {
    piece_body::<true>(plan, units, grad, scores)
}

/// One piece, with the widest vectors the processor has.
pub(crate) fn piece(
    plan: &Plan,
    units: std::ops::Range<usize>,
    grad: bool,
    scores: bool,
) -> PieceSums {
    #[cfg(target_arch = "x86_64")]
    {
        use crate::model::logit::block::{fast_path, wide_path};
        if wide_path() {
            // SAFETY: the processor supports AVX-512F, AVX2 and FMA, checked just above.
            return unsafe { piece_avx512(plan, units, grad, scores) };
        }
        if fast_path() {
            // SAFETY: the processor supports AVX2 and FMA, checked just above.
            return unsafe { piece_avx2(plan, units, grad, scores) };
        }
    }
    piece_body::<false>(plan, units, grad, scores)
}

/// Every piece of decision makers, in piece order.
pub(crate) fn pieces(plan: &Plan, grad: bool, scores: bool) -> Vec<PieceSums> {
    on_ranges(heavy_pieces(plan.panel.units, 16), |units| {
        piece(plan, units, grad, scores)
    })
}
