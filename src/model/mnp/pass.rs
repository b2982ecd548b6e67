//! The multinomial probit's simulated log-likelihood pass: each situation's
//! chosen alternative against the others available, through its pattern's
//! Cholesky factor and the GHK kernel on that situation's own uniforms, with
//! the gradient by the utility parameters (through the utility differences)
//! and by the covariance parameters (through dC of the pattern). Pieces are
//! cut by work (situations x draws) and summed in piece order.

use std::collections::HashMap;
use std::ops::Range;

use super::covariance::{factor, free_entries, Factor, Pattern};
use super::kernel::{self, Work};
use super::Mnp;
use crate::data::Observations;
use crate::design::Design;
use crate::model::logit::Compensated;

/// Marks a situation with fewer than two alternatives (no information).
const SKIP: u32 = u32::MAX;

/// What a data set needs for the pass, built once: the patterns of chosen and
/// available alternatives, each situation's pattern, and the uniforms
/// `[situation][dimension][draw]`.
#[derive(Debug)]
pub struct Prepared {
    pub patterns: Vec<Pattern>,
    pub of: Vec<u32>,
    pub uniforms: Vec<f64>,
    pub dims: usize,
    pub draws: usize,
}

impl Prepared {
    pub fn new(obs: &Observations, uniforms: Vec<f64>, dims: usize, draws: usize) -> Prepared {
        let j = obs.alternatives;
        let mut index: HashMap<Pattern, u32> = HashMap::new();
        let mut patterns = Vec::new();
        let mut of = Vec::with_capacity(obs.situations);
        for i in 0..obs.situations {
            let chosen = obs.chosen[i] as usize;
            let avail = |a: usize| obs.available[i * j + a];
            let others: Vec<usize> = (0..j).filter(|&a| a != chosen && avail(a)).collect();
            if others.is_empty() || chosen >= j || !avail(chosen) {
                of.push(SKIP);
                continue;
            }
            let p = Pattern { chosen, others };
            let next = patterns.len() as u32;
            let k = *index.entry(p.clone()).or_insert_with(|| {
                patterns.push(p);
                next
            });
            of.push(k);
        }
        Prepared {
            patterns,
            of,
            uniforms,
            dims,
            draws,
        }
    }
}

/// Per-piece sums and scratch.
pub struct Acc {
    pub ll: Compensated,
    pub impossible: bool,
    pub grad: Vec<f64>,
    v: Vec<f64>,
    b: Vec<f64>,
    work: Work,
}

impl Acc {
    pub fn new(k: usize, j: usize, grad: bool) -> Acc {
        Acc {
            ll: Compensated::default(),
            impossible: false,
            grad: vec![0.0; if grad { k } else { 0 }],
            v: vec![0.0; j],
            b: vec![0.0; j],
            work: Work::default(),
        }
    }
}

/// The factors of every pattern at `beta` (with derivatives when `grad`), or
/// `None` when a differenced covariance is not positive definite.
pub fn factors(family: &Mnp, prep: &Prepared, beta: &[f64], grad: bool) -> Option<Vec<Factor>> {
    let n = family.j - 1;
    let l = family.structure.factor(n, beta);
    let entries = (grad && family.structure.count(n) > 0).then(|| free_entries(n));
    prep.patterns
        .iter()
        .map(|p| factor(p, &family.pos, &l, n, entries.as_deref()))
        .collect()
}

/// Adds situation `i`'s weighted log-likelihood (and gradient) to `acc`.
pub fn situation(
    family: &Mnp,
    d: &Design,
    prep: &Prepared,
    factors: &[Factor],
    beta: &[f64],
    i: usize,
    acc: &mut Acc,
) {
    let pi = prep.of[i];
    if pi == SKIP {
        return;
    }
    let pat = &prep.patterns[pi as usize];
    let f = &factors[pi as usize];
    let m = f.m;
    d.utilities(beta, i, &mut acc.v);
    let c = pat.chosen;
    for (t, &o) in pat.others.iter().enumerate() {
        acc.b[t] = acc.v[c] - acc.v[o];
    }
    let per = prep.dims * prep.draws;
    let u = &prep.uniforms[i * per..(i + 1) * per];
    let grad = !acc.grad.is_empty();
    let lp = kernel::log_probability(
        &f.c,
        m,
        &acc.b[..m],
        u,
        prep.draws,
        prep.draws,
        grad,
        &mut acc.work,
    );
    let w = d.obs.weight[i];
    if !lp.is_finite() {
        if w > 0.0 {
            acc.impossible = true;
        }
        return;
    }
    acc.ll.add(w * lp);
    if !grad {
        return;
    }
    let gb = &acc.work.gb;
    let total: f64 = gb.iter().sum();
    let add = |j: usize, dv: f64, g: &mut [f64]| {
        for feat in &d.features[j] {
            g[feat.param] += w * dv * d.value(i, j, feat.value);
        }
    };
    add(c, total, &mut acc.grad);
    for (t, &o) in pat.others.iter().enumerate() {
        add(o, -gb[t], &mut acc.grad);
    }
    if let super::Structure::Full { first } = family.structure {
        let gc = &acc.work.gc;
        for (q, dc) in f.dc.iter().enumerate() {
            let mut s = 0.0;
            for a in 0..m {
                for b in 0..=a {
                    s += gc[a * m + b] * dc[a * m + b];
                }
            }
            acc.grad[first + q] += w * s;
        }
    }
}

/// The pieces of a pass over `n` situations with `draws` draws each: cut by
/// work, depending on `n` and `draws` alone.
pub fn pieces(n: usize, draws: usize) -> Vec<Range<usize>> {
    crate::design::heavy_pieces(n, (262_144 / draws.max(1)).max(8))
}
