//! Averaging one situation's choice probabilities over its coefficient
//! points (a mixture's draws, a latent class model's classes), at the base
//! and after a what-if. A family that gives the probabilities of many points
//! at once (`Family::probabilities_of_points`) gets every point's utilities
//! as rows (`Design::utilities_of_points`) and answers in one call whose
//! loops run down the rows; any other family is asked point by point.

use std::sync::Arc;

use super::{Point, WhatIf};
use crate::design::Design;
use crate::model::{Family, Points};

/// Scratch for averaging over a situation's coefficient points, allocated
/// once per piece of a pass.
pub(super) struct Mix {
    points: Arc<dyn Points>,
    k: usize,
    /// The points' coefficients `[point][param]` and weights.
    coefs: Vec<f64>,
    weights: Vec<f64>,
    /// One point's utilities and probabilities, at the base and after.
    v0: Vec<f64>,
    p0: Vec<f64>,
    v1: Vec<f64>,
    p1: Vec<f64>,
    /// The rows of every point, when both families give them.
    rows: Option<Rows>,
    /// The situation whose points `coefs` (and their rows) hold.
    filled: Option<usize>,
}

/// Every point of a situation at once, one row per parameter or alternative.
struct Rows {
    r: usize,
    /// `[param][point]`.
    coefs: Vec<f64>,
    /// `[alternative][point]`: base utilities, base probabilities, and the
    /// utilities after (replaced by the probabilities after).
    v0: Vec<f64>,
    p0: Vec<f64>,
    v1: Vec<f64>,
    /// Each point's weight after the what-if (0 when nothing is left to choose).
    live: Vec<f64>,
    scratch: Vec<f64>,
}

/// Whether `family` gives the probabilities of many points at once.
fn has_rows(family: &dyn Family) -> bool {
    family.probabilities_of_points(&mut [], 0, &mut Vec::new())
}

impl Mix {
    /// Scratch for `j` alternatives at the base and `m` after, parameters of
    /// length `k`; `family` and `after` are the families at the base and after.
    pub(super) fn new(
        points: Arc<dyn Points>,
        k: usize,
        (j, m): (usize, usize),
        family: &dyn Family,
        after: &dyn Family,
    ) -> Mix {
        let r = points.count();
        let rows = (r > 0 && has_rows(family) && has_rows(after)).then(|| Rows {
            r,
            coefs: vec![0.0; r * k],
            v0: vec![0.0; j * r],
            p0: vec![0.0; j * r],
            v1: vec![0.0; m * r],
            live: vec![0.0; r],
            scratch: Vec::new(),
        });
        Mix {
            points,
            k,
            coefs: vec![0.0; r * k],
            weights: vec![0.0; r],
            v0: vec![0.0; j],
            p0: vec![0.0; j],
            v1: vec![0.0; m],
            p1: vec![0.0; m],
            rows,
            filled: None,
        }
    }

    /// Situation `i`'s points, their weights and, by rows, their base
    /// utilities and probabilities. A `Mix` serves one pass at one `beta`:
    /// the points of the previous situation are kept when they are the same.
    fn base(&mut self, family: &dyn Family, d: &Design, beta: &[f64], i: usize) {
        let kept = self.filled.is_some_and(|p| self.points.same_as(i, p));
        if !kept {
            self.points.fill(beta, i, &mut self.coefs);
            self.points.weights(beta, i, &mut self.weights);
            self.filled = Some(i);
        }
        let Some(rows) = self.rows.as_mut() else {
            return;
        };
        let (r, k) = (rows.r, self.k);
        if !kept {
            for (t, c) in self.coefs.chunks_exact(k).enumerate() {
                for (q, x) in c.iter().enumerate() {
                    rows.coefs[q * r + t] = *x;
                }
            }
        }
        d.utilities_of_points(&rows.coefs, r, i, &mut rows.v0);
        rows.p0.copy_from_slice(&rows.v0);
        family.probabilities_of_points(&mut rows.p0, r, &mut rows.scratch);
    }

    /// Situation `i`'s average probabilities at the base into `p0` and, with a
    /// what-if, after it into `p1`.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn situation(
        &mut self,
        family: &dyn Family,
        after: &dyn Family,
        d: &Design,
        beta: &[f64],
        i: usize,
        what_if: Option<&dyn WhatIf>,
        p0: &mut [f64],
        p1: &mut [f64],
    ) {
        self.base(family, d, beta, i);
        p0.iter_mut().for_each(|x| *x = 0.0);
        p1.iter_mut().for_each(|x| *x = 0.0);
        if self.rows.is_some() {
            self.by_rows(after, d, i, what_if, p0, p1);
        } else {
            self.by_point(family, after, d, i, what_if, p0, p1);
        }
    }

    /// `situation` by rows: each point's utilities after the what-if are
    /// asked of it one point at a time, their probabilities in one call.
    fn by_rows(
        &mut self,
        after: &dyn Family,
        d: &Design,
        i: usize,
        what_if: Option<&dyn WhatIf>,
        p0: &mut [f64],
        p1: &mut [f64],
    ) {
        let Some(rows) = self.rows.as_mut() else {
            return;
        };
        let (r, k, j) = (rows.r, self.k, self.v0.len());
        average(&rows.p0, &self.weights, &mut p0[..j]);
        let Some(w) = what_if else { return };
        let m = self.v1.len();
        if w.utilities_of_points(d, &rows.coefs, (i, r), &rows.v0, &mut rows.v1) {
            // A point's weight counts when anything is left to choose at it.
            rows.live.fill(0.0);
            for row in rows.v1.chunks_exact(r) {
                for ((live, v), w) in rows.live.iter_mut().zip(row).zip(&self.weights) {
                    *live = if v.is_finite() { *w } else { *live };
                }
            }
            after.probabilities_of_points(&mut rows.v1, r, &mut rows.scratch);
            average(&rows.v1, &rows.live, &mut p1[..m]);
            return;
        }
        for (t, c) in self.coefs.chunks_exact(k).enumerate() {
            for (a, v) in self.v0.iter_mut().enumerate() {
                *v = rows.v0[a * r + t];
            }
            w.utilities(d, c, i, &self.v0, &mut self.v1);
            let open = self.v1.iter().any(|x| x.is_finite());
            rows.live[t] = if open { self.weights[t] } else { 0.0 };
            for (a, v) in self.v1.iter().enumerate() {
                rows.v1[a * r + t] = *v;
            }
        }
        after.probabilities_of_points(&mut rows.v1, r, &mut rows.scratch);
        average(&rows.v1, &rows.live, &mut p1[..m]);
    }

    /// `situation` one point at a time.
    #[allow(clippy::too_many_arguments)]
    fn by_point(
        &mut self,
        family: &dyn Family,
        after: &dyn Family,
        d: &Design,
        i: usize,
        what_if: Option<&dyn WhatIf>,
        p0: &mut [f64],
        p1: &mut [f64],
    ) {
        let j = self.v0.len();
        for (c, &share) in self.coefs.chunks(self.k).zip(&self.weights) {
            d.utilities(c, i, &mut self.v0);
            family.probabilities(c, &self.v0, &mut self.p0);
            p0[..j]
                .iter_mut()
                .zip(&self.p0)
                .for_each(|(a, b)| *a += share * b);
            let Some(w) = what_if else { continue };
            w.utilities(d, c, i, &self.v0, &mut self.v1);
            if self.v1.iter().all(|x| !x.is_finite()) {
                continue; // nothing left to choose
            }
            if self.v1.len() == j {
                after.probabilities_after(c, &self.v0, &self.p0, &self.v1, &mut self.p1);
            } else {
                after.probabilities(c, &self.v1, &mut self.p1);
            }
            p1.iter_mut()
                .zip(&self.p1)
                .for_each(|(a, b)| *a += share * b);
        }
    }

    /// Runs `visit` on each of situation `i`'s points at the base, in point order.
    pub(super) fn each_point(
        &mut self,
        family: &dyn Family,
        d: &Design,
        (beta, i): (&[f64], usize),
        visit: &mut dyn FnMut(&Point),
    ) {
        self.base(family, d, beta, i);
        let k = self.k;
        for (t, c) in self.coefs.chunks_exact(k).enumerate() {
            match self.rows.as_ref() {
                Some(rows) => {
                    let r = rows.r;
                    for (a, (v, p)) in self.v0.iter_mut().zip(self.p0.iter_mut()).enumerate() {
                        *v = rows.v0[a * r + t];
                        *p = rows.p0[a * r + t];
                    }
                }
                None => {
                    d.utilities(c, i, &mut self.v0);
                    family.probabilities(c, &self.v0, &mut self.p0);
                }
            }
            visit(&Point {
                i,
                weight: self.weights[t],
                coefficients: c,
                v: &self.v0,
                p: &self.p0,
            });
        }
    }
}

/// Points summed at once in `average` (partial sums, then added in order).
const LANES: usize = 8;

/// `out[a]` = Σ_t w_t rows[a][t]: `LANES` partial sums over the points (each
/// in point order), then added in lane order, whatever the thread.
fn average(rows: &[f64], w: &[f64], out: &mut [f64]) {
    let r = w.len();
    for (o, row) in out.iter_mut().zip(rows.chunks_exact(r.max(1))) {
        let mut acc = [0.0; LANES];
        let (body, tail) = (row.chunks_exact(LANES), row.len() % LANES);
        for (p, w) in body.zip(w.chunks_exact(LANES)) {
            for l in 0..LANES {
                acc[l] += w[l] * p[l];
            }
        }
        let at = r - tail;
        for (l, (p, w)) in row[at..].iter().zip(&w[at..]).enumerate() {
            acc[l] += w * p;
        }
        *o = acc.iter().sum();
    }
}
