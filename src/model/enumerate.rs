//! Sample enumeration: the one place where utilities become choice
//! probabilities for every situation, at the base and, when a what-if is
//! given, after it. Callers fold what they need (shares, switching, segment
//! sums, derivatives, per-situation rows) from each `Situation`; the pass is
//! split into the design's pieces and summed in piece order.

use std::ops::Range;

use super::Family;
use crate::design::{on_pieces, pieces, run_queue, Design};

/// A change to each situation's utilities (a scenario, an arc step, a withdrawal).
pub trait WhatIf: Sync {
    /// Alternatives after the change: the design's J plus any new ones.
    fn alternatives(&self, j: usize) -> usize {
        j
    }
    /// Utilities `v1` (length `alternatives`) of situation `i` after the change,
    /// from its base utilities `v0`; -inf marks an unavailable alternative.
    fn utilities(&self, d: &Design, beta: &[f64], i: usize, v0: &[f64], v1: &mut [f64]);
    /// The family over the alternatives after the change, when it differs from
    /// the base one (added alternatives in a nested model).
    fn family(&self) -> Option<&dyn Family> {
        None
    }
}

/// Any `Fn(i, v)` that edits a copy of the base utilities in place is a what-if
/// that adds no alternative.
pub struct Edit<F>(pub F);

impl<F: Fn(usize, &mut [f64]) + Sync> WhatIf for Edit<F> {
    fn utilities(&self, _d: &Design, _beta: &[f64], i: usize, v0: &[f64], v1: &mut [f64]) {
        v1.copy_from_slice(v0);
        (self.0)(i, v1)
    }
}

/// One situation as a pass sees it. Without a what-if, `v1`/`p1` equal `v0`/`p0`.
/// `p0` has the length of `p1`, zero for alternatives the base does not have.
pub struct Situation<'a> {
    pub i: usize,
    pub v0: &'a [f64],
    pub p0: &'a [f64],
    pub v1: &'a [f64],
    pub p1: &'a [f64],
}

/// Each situation's utilities and choice probabilities at one `beta`, `[i * J + j]`.
#[derive(Clone, Debug, Default)]
pub struct Baseline {
    pub utilities: Vec<f64>,
    pub probabilities: Vec<f64>,
}

impl Baseline {
    /// Computes every situation's utilities and probabilities, over the cores.
    pub fn new(family: &dyn Family, d: &Design, beta: &[f64]) -> Baseline {
        let j = d.alternatives();
        let n = d.situations();
        let mut utilities = vec![0.0; n * j];
        let mut probabilities = vec![0.0; n * j];
        let mut items = Vec::new();
        let (mut u, mut p) = (utilities.as_mut_slice(), probabilities.as_mut_slice());
        for r in pieces(n) {
            let (ua, ub) = u.split_at_mut(r.len() * j);
            let (pa, pb) = p.split_at_mut(r.len() * j);
            items.push((r, ua, pa));
            (u, p) = (ub, pb);
        }
        run_queue(items, |(r, u, p)| {
            for (i, (ui, pi)) in r.zip(u.chunks_mut(j).zip(p.chunks_mut(j))) {
                d.utilities(beta, i, ui);
                family.probabilities(beta, ui, pi);
            }
        });
        Baseline {
            utilities,
            probabilities,
        }
    }
}

/// Choice probabilities `[i * J + j]` of every situation at `beta` (0 where unavailable).
pub fn probabilities(family: &dyn Family, d: &Design, beta: &[f64]) -> Vec<f64> {
    Baseline::new(family, d, beta).probabilities
}

/// A pass over every situation: the family, the design and parameters, and
/// optionally the base cached at these parameters and a what-if.
#[derive(Clone, Copy)]
pub struct Enumeration<'a> {
    family: &'a dyn Family,
    d: &'a Design,
    beta: &'a [f64],
    baseline: Option<&'a Baseline>,
    what_if: Option<&'a dyn WhatIf>,
}

impl<'a> Enumeration<'a> {
    pub fn new(family: &'a dyn Family, d: &'a Design, beta: &'a [f64]) -> Self {
        Enumeration {
            family,
            d,
            beta,
            baseline: None,
            what_if: None,
        }
    }

    /// Uses cached base utilities and probabilities (they must be at this `beta`).
    pub fn baseline(mut self, b: Option<&'a Baseline>) -> Self {
        self.baseline = b;
        self
    }

    /// Adds a what-if: each situation is also seen after it.
    pub fn what_if(mut self, w: &'a dyn WhatIf) -> Self {
        self.what_if = Some(w);
        self
    }

    /// Alternatives after the what-if (J without one).
    pub fn alternatives(&self) -> usize {
        let j = self.d.alternatives();
        self.what_if.map(|w| w.alternatives(j)).unwrap_or(j)
    }

    /// Runs `visit(state, situation)` over every situation; one state per piece
    /// (`init(range)`), returned in piece order.
    pub fn pieces<T: Send>(
        &self,
        init: impl Fn(&Range<usize>) -> T + Sync,
        visit: impl Fn(&mut T, &Situation) + Sync,
    ) -> Vec<T> {
        on_pieces(self.d.situations(), |r| {
            let mut state = init(&r);
            self.run(r, &mut |s| visit(&mut state, s));
            state
        })
    }

    /// Folds every situation into accumulators of length `width`, summed over the pieces.
    pub fn fold(&self, width: usize, visit: impl Fn(&mut [f64], &Situation) + Sync) -> Vec<f64> {
        let parts = self.pieces(|_| vec![0.0; width], |acc, s| visit(acc, s));
        let mut out = vec![0.0; width];
        for p in parts {
            out.iter_mut().zip(&p).for_each(|(a, b)| *a += b);
        }
        out
    }

    /// One range of situations with scratch buffers allocated once.
    fn run(&self, range: Range<usize>, visit: &mut dyn FnMut(&Situation)) {
        let (family, d, beta) = (self.family, self.d, self.beta);
        let after = self.what_if.and_then(|w| w.family()).unwrap_or(family);
        let j = d.alternatives();
        let m = self.alternatives();
        let mut v0 = vec![0.0; j];
        let mut p0 = vec![0.0; m];
        let mut v1 = vec![0.0; m];
        let mut p1 = vec![0.0; m];
        for i in range {
            match self.baseline {
                Some(b) => {
                    v0.copy_from_slice(&b.utilities[i * j..(i + 1) * j]);
                    p0[..j].copy_from_slice(&b.probabilities[i * j..(i + 1) * j]);
                }
                None => {
                    d.utilities(beta, i, &mut v0);
                    family.probabilities(beta, &v0, &mut p0[..j]);
                }
            }
            let Some(w) = self.what_if else {
                visit(&Situation {
                    i,
                    v0: &v0,
                    p0: &p0,
                    v1: &v0,
                    p1: &p0,
                });
                continue;
            };
            w.utilities(d, beta, i, &v0, &mut v1);
            if v1.iter().all(|x| !x.is_finite()) {
                p1.iter_mut().for_each(|x| *x = 0.0); // nothing left to choose
            } else if m == j {
                after.probabilities_after(beta, &v0, &p0, &v1, &mut p1);
            } else {
                after.probabilities(beta, &v1, &mut p1);
            }
            visit(&Situation {
                i,
                v0: &v0,
                p0: &p0,
                v1: &v1,
                p1: &p1,
            });
        }
    }
}
