//! The nested logit's blocked pass: the logit pass's utilities over blocks of
//! situations (rows per alternative, vectorised), the nest quantities row by
//! row with the fast `exp` and `ln`, then the logit's gradient accumulation
//! on the nested residuals w d ln P_c / dV_j, and the scales' gradients.
//! The per-situation code in `pass` stays as the reference it is tested against.

use super::Nested;
use crate::design::{on_pieces, Design};
use crate::model::logit::block::{from_rows, Block, Plan, BLOCK};
use crate::model::logit::fastmath::{exp_nonpositive, ln_positive, madd, Compensated};
use crate::model::Eval;

/// One piece's sums.
struct Acc {
    ll: Compensated,
    /// As the logit's: per coordinate over block positions.
    g: Vec<Vec<f64>>,
    /// Per group: the gradient of its scale.
    lam: Vec<f64>,
}

/// Row buffers per group and per alternative.
struct Rows {
    max: Vec<[f64; BLOCK]>,
    lns: Vec<[f64; BLOCK]>,
    a: Vec<[f64; BLOCK]>,
    q: Vec<[f64; BLOCK]>,
    vbar: Vec<[f64; BLOCK]>,
    cond: Vec<[f64; BLOCK]>,
    logd: [f64; BLOCK],
}

impl Rows {
    fn new(groups: usize, j: usize) -> Rows {
        Rows {
            max: vec![[0.0; BLOCK]; groups],
            lns: vec![[0.0; BLOCK]; groups],
            a: vec![[0.0; BLOCK]; groups],
            q: vec![[0.0; BLOCK]; groups],
            vbar: vec![[0.0; BLOCK]; groups],
            cond: vec![[0.0; BLOCK]; j],
            logd: [0.0; BLOCK],
        }
    }
}

/// The nest quantities of a block from its utility rows `blk.rows`.
#[inline(always)]
fn nests<const F: bool>(m: &Nested, lam: &[f64], blk: &Block, r: &mut Rows, nb: usize) {
    let v = &blk.rows[..];
    let mut top = [f64::NEG_INFINITY; BLOCK];
    for (g, alts) in m.members.iter().enumerate() {
        if let [a] = alts[..] {
            alone(v, r, g, a, nb, &mut top);
        } else {
            nest::<F>(v, alts, lam[g], r, g, nb, &mut top);
        }
    }
    shares::<F>(r, m.members.len(), &top, nb);
}

/// Group `g`, alternative `a` alone (scale 1): its nest quantities are its own.
#[inline(always)]
fn alone(v: &[[f64; BLOCK]], r: &mut Rows, g: usize, a: usize, nb: usize, top: &mut [f64; BLOCK]) {
    for b in 0..nb {
        let on = v[a][b] > f64::NEG_INFINITY;
        r.max[g][b] = v[a][b];
        r.cond[a][b] = if on { 1.0 } else { 0.0 };
        r.vbar[g][b] = if on { v[a][b] } else { 0.0 };
        r.lns[g][b] = 0.0;
        r.a[g][b] = v[a][b];
        top[b] = if v[a][b] > top[b] { v[a][b] } else { top[b] };
    }
}

/// Group `g` of alternatives `alts` with scale `lam`: the conditional shares
/// within it, its mean utility, the log of its sum and its inclusive value
/// `a`; `top` keeps the largest inclusive value.
#[inline(always)]
fn nest<const F: bool>(
    v: &[[f64; BLOCK]],
    alts: &[usize],
    lam: f64,
    r: &mut Rows,
    g: usize,
    nb: usize,
    top: &mut [f64; BLOCK],
) {
    let inv = 1.0 / lam;
    let mx = &mut r.max[g];
    mx[..nb].iter_mut().for_each(|x| *x = f64::NEG_INFINITY);
    for &a in alts {
        for (x, v) in mx[..nb].iter_mut().zip(&v[a][..nb]) {
            *x = if *v > *x { *v } else { *x };
        }
    }
    let mut sum = [0.0; BLOCK];
    for &a in alts {
        let c = &mut r.cond[a];
        for ((e, v), mxb) in c[..nb].iter_mut().zip(&v[a][..nb]).zip(&mx[..nb]) {
            // An empty group (max -inf) gives 0, not NaN.
            let d = if *v > f64::NEG_INFINITY {
                (v - mxb) * inv
            } else {
                f64::NEG_INFINITY
            };
            *e = exp_nonpositive::<F>(d);
        }
        for (s, e) in sum[..nb].iter_mut().zip(&c[..nb]) {
            *s += e;
        }
    }
    let vbar = &mut r.vbar[g];
    vbar[..nb].iter_mut().for_each(|x| *x = 0.0);
    let mut inv_sum = [0.0; BLOCK];
    for (i, s) in inv_sum[..nb].iter_mut().zip(&sum[..nb]) {
        *i = if *s > 0.0 { 1.0 / s } else { 0.0 };
    }
    for &a in alts {
        let c = &mut r.cond[a];
        for (((e, s), vb), v) in c[..nb]
            .iter_mut()
            .zip(&inv_sum[..nb])
            .zip(vbar[..nb].iter_mut())
            .zip(&v[a][..nb])
        {
            *e *= s;
            *vb += if *e > 0.0 { *e * v } else { 0.0 };
        }
    }
    let mx = &r.max[g];
    for b in 0..nb {
        let empty = sum[b] <= 0.0;
        let lns = if empty { 0.0 } else { ln_positive::<F>(sum[b]) };
        r.lns[g][b] = lns;
        r.a[g][b] = if empty {
            f64::NEG_INFINITY
        } else {
            madd::<F>(lam, lns, mx[b])
        };
        top[b] = if r.a[g][b] > top[b] {
            r.a[g][b]
        } else {
            top[b]
        };
    }
}

/// Nest shares: Q_g = exp(a_g - top) / sum_m exp(a_m - top), one exp per nest,
/// and the log of the denominator.
#[inline(always)]
fn shares<const F: bool>(r: &mut Rows, groups: usize, top: &[f64; BLOCK], nb: usize) {
    let mut d = [0.0; BLOCK];
    for (ag, qg) in r.a.iter().zip(r.q.iter_mut()).take(groups) {
        for (((db, q), a), t) in d[..nb]
            .iter_mut()
            .zip(qg[..nb].iter_mut())
            .zip(&ag[..nb])
            .zip(&top[..nb])
        {
            *q = exp_nonpositive::<F>(a - t);
            *db += *q;
        }
    }
    let mut inv = [0.0; BLOCK];
    for b in 0..nb {
        r.logd[b] = top[b] + ln_positive::<F>(d[b]);
        inv[b] = 1.0 / d[b];
    }
    for qg in r.q.iter_mut().take(groups) {
        for (q, i) in qg[..nb].iter_mut().zip(&inv[..nb]) {
            *q *= i;
        }
    }
}

/// Residual rows w d ln P_c / dV_a of a block, in place of its utilities, and
/// the scales' gradients added to `glam`; row by row, so that it vectorises.
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn residuals(
    m: &Nested,
    lam: &[f64],
    inv_lam: &[f64],
    blk: &mut Block,
    r: &Rows,
    w: &[f64],
    ch: &[u32],
    glam: &mut [f64],
) {
    let nb = w.len();
    let mut gc = [0usize; BLOCK];
    for (g, c) in gc[..nb].iter_mut().zip(ch) {
        *g = m.group_of[*c as usize];
    }
    for (g, alts) in m.members.iter().enumerate() {
        let l = lam[g];
        let f = (l - 1.0) / l;
        for &a in alts {
            let (row, cond, q) = (&mut blk.rows[a], &r.cond[a], &r.q[g]);
            for b in 0..nb {
                let within = if gc[b] == g { f * cond[b] } else { 0.0 };
                row[b] = w[b] * (within - q[b] * cond[b]);
            }
        }
        if m.scale[g].is_none() {
            continue;
        }
        let (mx, lns, q, vbar) = (&r.max[g], &r.lns[g], &r.q[g], &r.vbar[g]);
        let (il, il2) = (1.0 / l, 1.0 / (l * l));
        let mut sum = 0.0;
        for b in 0..nb {
            let iv = mx[b] * il + lns[b];
            let own = iv - blk.vc[b] * il2 - (l - 1.0) * vbar[b] * il2;
            let d = -q[b] * (iv - vbar[b] * il) + if gc[b] == g { own } else { 0.0 };
            sum += if q[b] > 0.0 { w[b] * d } else { 0.0 };
        }
        glam[g] += sum;
    }
    for b in 0..nb {
        blk.rows[ch[b] as usize][b] += w[b] * inv_lam[gc[b]];
    }
}

#[inline(always)]
fn chunk_body<const F: bool>(
    m: &Nested,
    plan: &Plan,
    lam: &[f64],
    range: std::ops::Range<usize>,
    want_grad: bool,
) -> Acc {
    let j = plan.j;
    let groups = m.members.len();
    let obs = plan.obs;
    let mut acc = Acc {
        ll: Compensated::default(),
        g: if want_grad {
            vec![vec![0.0; BLOCK * j]; plan.dims()]
        } else {
            Vec::new()
        },
        lam: vec![0.0; groups],
    };
    let mut blk = Block::new(plan);
    let mut r = Rows::new(groups, j);
    let inv_lam: Vec<f64> = lam.iter().map(|l| 1.0 / l).collect();
    let na = plan.attrs.len();
    let mut i0 = range.start;
    while i0 < range.end {
        let nb = BLOCK.min(range.end - i0);
        blk.utilities::<F>(plan, i0, nb);
        nests::<F>(m, lam, &blk, &mut r, nb);
        let w = &obs.weight[i0..i0 + nb];
        let ch = &obs.chosen[i0..i0 + nb];
        let mut ll = 0.0;
        for b in 0..nb {
            let c = ch[b] as usize;
            let g = m.group_of[c];
            let within = (blk.vc[b] - r.max[g][b]) * inv_lam[g] - r.lns[g][b];
            ll += w[b] * (r.a[g][b] - r.logd[b] + within);
        }
        acc.ll.add(ll);
        if want_grad {
            residuals(m, lam, &inv_lam, &mut blk, &r, w, ch, &mut acc.lam);
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
            if na > 0 {
                from_rows(&blk.rows, &mut blk.r, j, nb);
                let lb = nb * j;
                for (a, x) in plan.attrs.iter().enumerate() {
                    let x = &x[i0 * j..i0 * j + lb];
                    for ((g, ri), xi) in acc.g[1 + a][..lb].iter_mut().zip(&blk.r[..lb]).zip(x) {
                        *g = madd::<F>(*ri, *xi, *g);
                    }
                }
            }
        }
        i0 += nb;
    }
    acc
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn chunk_avx2(
    m: &Nested,
    plan: &Plan,
    lam: &[f64],
    range: std::ops::Range<usize>,
    want_grad: bool,
) -> Acc {
    chunk_body::<true>(m, plan, lam, range, want_grad)
}

fn chunk(
    m: &Nested,
    plan: &Plan,
    lam: &[f64],
    range: std::ops::Range<usize>,
    want_grad: bool,
) -> Acc {
    #[cfg(target_arch = "x86_64")]
    {
        if crate::model::logit::block::fast_path() {
            // SAFETY: the processor supports AVX2 and FMA, checked just above.
            return unsafe { chunk_avx2(m, plan, lam, range, want_grad) };
        }
    }
    chunk_body::<false>(m, plan, lam, range, want_grad)
}

/// One blocked pass: log-likelihood and, if asked, its gradient (scales valid).
pub fn evaluate(m: &Nested, d: &Design, beta: &[f64], want_grad: bool) -> Eval {
    let k = d.params;
    let j = d.alternatives();
    let lam: Vec<f64> = m
        .scale
        .iter()
        .map(|s| s.map(|p| beta[p]).unwrap_or(1.0))
        .collect();
    let plan = Plan::new(d, beta);
    let parts = on_pieces(d.situations(), |r| chunk(m, &plan, &lam, r, want_grad));
    let mut ll = Compensated::default();
    let mut gtheta = vec![0.0; plan.dims() * j];
    let mut glam = vec![0.0; lam.len()];
    let na = plan.attrs.len();
    for p in parts {
        ll.add(p.ll.value());
        for (c, g) in p.g.iter().enumerate() {
            let interleaved = (1..=na).contains(&c);
            for (t, x) in g.iter().enumerate() {
                let a = if interleaved { t % j } else { t / BLOCK };
                gtheta[c * j + a] += x;
            }
        }
        glam.iter_mut().zip(&p.lam).for_each(|(a, b)| *a += b);
    }
    let mut grad = vec![0.0; if want_grad { k } else { 0 }];
    if want_grad {
        for &(param, a, c) in &plan.feats {
            grad[param] += gtheta[c * j + a];
        }
        for (g, s) in m.scale.iter().enumerate() {
            if let Some(p) = s {
                grad[*p] += glam[g];
            }
        }
    }
    Eval {
        ll: ll.value(),
        grad,
        hess: None,
    }
}
