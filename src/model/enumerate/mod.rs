//! Sample enumeration: the one place where utilities become choice
//! probabilities for every situation, at the base and, when a what-if is
//! given, after it. Callers fold what they need (shares, switching, segment
//! sums, derivatives, per-situation rows) from each `Situation`; the pass is
//! split into the design's pieces and summed in piece order. A family whose
//! coefficients vary across decision makers (`Family::mixture`) gives each
//! situation a set of coefficient points; its probabilities, base and what-if,
//! are the averages of the family's one-point probabilities over them.

use std::ops::Range;
use std::sync::Arc;

mod mix;

use super::{Family, Points};
use crate::design::{heavy_pieces, on_ranges, pieces, run_queue, Design};
use mix::Mix;

/// A change to each situation's utilities (a scenario, an arc step, a withdrawal).
pub trait WhatIf: Sync {
    /// Alternatives after the change: the design's J plus any new ones.
    fn alternatives(&self, j: usize) -> usize {
        j
    }
    /// Utilities `v1` (length `alternatives`) of situation `i` after the change,
    /// from its base utilities `v0`; -inf marks an unavailable alternative.
    fn utilities(&self, d: &Design, beta: &[f64], i: usize, v0: &[f64], v1: &mut [f64]);
    /// Utilities after the change of situation `i` at many coefficient points
    /// at once: `coefs` holds one row per parameter over the points, `v0`
    /// the base utilities and `v1` those after one row per alternative (as
    /// `Design::utilities_of_points`), each point's equal to `utilities` at
    /// its coefficients. `false` (the default): callers ask point by point.
    fn utilities_of_points(
        &self,
        d: &Design,
        coefs: &[f64],
        (i, points): (usize, usize),
        v0: &[f64],
        v1: &mut [f64],
    ) -> bool {
        let _ = (d, coefs, i, points, v0, v1);
        false
    }
    /// The family over the alternatives after the change, when it differs from
    /// the base one (added alternatives in a nested model).
    fn family(&self) -> Option<&dyn Family> {
        None
    }
}

/// Any `Fn(i, coefficients, v)` that edits a copy of the base utilities in
/// place is a what-if that adds no alternative. `coefficients` are those the
/// utilities were computed with (a coefficient point's draws for a family
/// with random coefficients): a change of a value x moves v by coefficients[p] * dx.
pub struct Edit<F>(pub F);

impl<F: Fn(usize, &[f64], &mut [f64]) + Sync> WhatIf for Edit<F> {
    fn utilities(&self, _d: &Design, beta: &[f64], i: usize, v0: &[f64], v1: &mut [f64]) {
        v1.copy_from_slice(v0);
        (self.0)(i, beta, v1)
    }
}

/// One situation as a pass sees it: its probabilities at the base and after
/// the what-if (equal without one). `p0` has the length of `p1`, zero for
/// alternatives the base does not have.
pub struct Situation<'a> {
    pub i: usize,
    pub p0: &'a [f64],
    pub p1: &'a [f64],
}

/// One coefficient point of a situation (the only one for fixed coefficients):
/// its weight in the average, coefficients, base utilities and probabilities.
pub struct Point<'a> {
    pub i: usize,
    pub weight: f64,
    pub coefficients: &'a [f64],
    pub v: &'a [f64],
    pub p: &'a [f64],
}

/// Each situation's utilities and choice probabilities at one `beta`, `[i * J + j]`.
/// With coefficient draws the utilities are those at `beta` itself (the
/// locations) and the probabilities the averages over the draws.
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
        let mixture = family.mixture(d);
        let ranges = ranges(n, mixture.as_deref(), family);
        let mut utilities = vec![0.0; n * j];
        let mut probabilities = vec![0.0; n * j];
        let mut items = Vec::new();
        let (mut u, mut p) = (utilities.as_mut_slice(), probabilities.as_mut_slice());
        for r in ranges {
            let (ua, ub) = u.split_at_mut(r.len() * j);
            let (pa, pb) = p.split_at_mut(r.len() * j);
            items.push((r, ua, pa));
            (u, p) = (ub, pb);
        }
        run_queue(items, |(r, u, p)| {
            let mut mix = mixture
                .as_ref()
                .map(|m| Mix::new(m.clone(), beta.len(), (j, j), family, family));
            for (i, (ui, pi)) in r.zip(u.chunks_mut(j).zip(p.chunks_mut(j))) {
                d.utilities(beta, i, ui);
                match mix.as_mut() {
                    None => family.probabilities(beta, ui, pi),
                    Some(m) => m.situation(family, family, d, beta, i, None, pi, &mut []),
                }
            }
        });
        Baseline {
            utilities,
            probabilities,
        }
    }
}

/// The pieces a pass over `n` situations is cut into: by situations, or by
/// the work they make when each situation's probabilities average over
/// coefficient points or are simulated (a small sample is then still spread
/// over the cores). They depend on `n`, the number of points and the
/// family's abilities alone, never on the cores.
fn ranges(n: usize, mixture: Option<&dyn Points>, family: &dyn Family) -> Vec<Range<usize>> {
    match mixture {
        Some(m) => heavy_pieces(n, (8_192 / m.count().max(1)).max(1)),
        None if family.abilities().simulation_draws => heavy_pieces(n, SIMULATED_PIECE),
        None => pieces(n),
    }
}

/// Situations per piece of a pass whose probabilities are simulated (each a
/// simulation over hundreds of draws).
const SIMULATED_PIECE: usize = 64;

/// Choice probabilities `[i * J + j]` of every situation at `beta` (0 where unavailable).
pub fn probabilities(family: &dyn Family, d: &Design, beta: &[f64]) -> Vec<f64> {
    Baseline::new(family, d, beta).probabilities
}

/// A pass over every situation: the family, the design and parameters, and
/// optionally the base cached at these parameters and a what-if.
#[derive(Clone)]
pub struct Enumeration<'a> {
    family: &'a dyn Family,
    d: &'a Design,
    beta: &'a [f64],
    baseline: Option<&'a Baseline>,
    what_if: Option<&'a dyn WhatIf>,
    mixture: Option<Arc<dyn Points>>,
}

impl<'a> Enumeration<'a> {
    pub fn new(family: &'a dyn Family, d: &'a Design, beta: &'a [f64]) -> Self {
        Enumeration {
            family,
            d,
            beta,
            baseline: None,
            what_if: None,
            mixture: family.mixture(d),
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
        on_ranges(
            ranges(self.d.situations(), self.mixture.as_deref(), self.family),
            |r| {
                let mut state = init(&r);
                match &self.mixture {
                    None => self.run(r, &mut |s| visit(&mut state, s)),
                    Some(m) => self.run_mixed(m, r, &mut |s| visit(&mut state, s)),
                }
                state
            },
        )
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

    /// Runs `visit(state, point)` over every coefficient point of every
    /// situation at the base (one per situation for fixed coefficients, read
    /// from the cached baseline when there is one); one state per piece,
    /// returned in piece order.
    pub fn points<T: Send>(
        &self,
        init: impl Fn(&Range<usize>) -> T + Sync,
        visit: impl Fn(&mut T, &Point) + Sync,
    ) -> Vec<T> {
        let (family, d, beta) = (self.family, self.d, self.beta);
        let j = d.alternatives();
        let k = beta.len();
        on_ranges(
            ranges(d.situations(), self.mixture.as_deref(), family),
            |range| {
                let mut state = init(&range);
                if let Some(m) = &self.mixture {
                    let mut mix = Mix::new(m.clone(), k, (j, j), family, family);
                    for i in range {
                        mix.each_point(family, d, (beta, i), &mut |pt| visit(&mut state, pt));
                    }
                    return state;
                }
                let (mut v, mut p) = (vec![0.0; j], vec![0.0; j]);
                for i in range {
                    match self.baseline {
                        Some(b) => {
                            v.copy_from_slice(&b.utilities[i * j..(i + 1) * j]);
                            p.copy_from_slice(&b.probabilities[i * j..(i + 1) * j]);
                        }
                        None => {
                            d.utilities(beta, i, &mut v);
                            family.probabilities(beta, &v, &mut p);
                        }
                    }
                    let point = Point {
                        i,
                        weight: 1.0,
                        coefficients: beta,
                        v: &v,
                        p: &p,
                    };
                    visit(&mut state, &point);
                }
                state
            },
        )
    }

    /// One range of situations with coefficient points, scratch allocated once.
    fn run_mixed(
        &self,
        m: &Arc<dyn Points>,
        range: Range<usize>,
        visit: &mut dyn FnMut(&Situation),
    ) {
        let (family, d, beta) = (self.family, self.d, self.beta);
        let after = self.what_if.and_then(|w| w.family()).unwrap_or(family);
        let j = d.alternatives();
        let alts = self.alternatives();
        let mut mix = Mix::new(m.clone(), beta.len(), (j, alts), family, after);
        let mut p0 = vec![0.0; alts];
        let mut p1 = vec![0.0; alts];
        for i in range {
            mix.situation(family, after, d, beta, i, self.what_if, &mut p0, &mut p1);
            let p1 = if self.what_if.is_some() { &p1 } else { &p0 };
            visit(&Situation { i, p0: &p0, p1 });
        }
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
                    p0: &p0,
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
                p0: &p0,
                p1: &p1,
            });
        }
    }
}
