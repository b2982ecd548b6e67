//! Covariance of the estimates (classical and cluster-robust sandwich) and
//! the diagnostics that name parameters: not identified (a flat direction of
//! the Hessian) and separation (coefficients running off).

use nalgebra::{DMatrix, SymmetricEigen};
use serde::Serialize;

use crate::design::Design;
use crate::model::Family;

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DiagnosticKind {
    NotIdentified,
    Separation,
    NotConverged,
    NeverChosen,
    NeverAvailable,
    RatioDenominator,
    /// A warning of the model family (its `code` says which).
    Family,
    /// Every parameter is fixed: the model is evaluated, not estimated.
    AllFixed,
    /// The search from the `[parameters]` starts failed and was run again from the default start.
    Restarted,
    /// A (negative-)lognormal coefficient whose location runs to minus
    /// infinity: the data want the coefficient of the other sign.
    OppositeSign,
    /// A search from several starts (a latent class model's): few reached
    /// the best log-likelihood, or some ran off.
    Starts,
}

/// A finding about the fit that names the parameters and spec terms involved.
#[derive(Clone, Debug, Serialize, serde::Deserialize)]
pub struct Diagnostic {
    pub kind: DiagnosticKind,
    /// For `family` warnings: which one (`scale_above_one`, `scale_near_zero`, ...).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub code: Option<String>,
    pub parameters: Vec<String>,
    pub message: String,
}

/// Checks identification on the free block `a` of the negative Hessian.
/// Returns the flat directions as groups of free-parameter positions.
/// `scales` (per free position) are the parameters' scales in the data's
/// units: the diagonal is compared in those units (dk / scale²), so that the
/// test does not depend on the units the user chose.
pub fn flat_directions(a: &DMatrix<f64>, scales: &[f64]) -> Vec<Vec<usize>> {
    let m = a.nrows();
    let mut out = Vec::new();
    let diag: Vec<f64> = (0..m).map(|k| a[(k, k)]).collect();
    let unitless: Vec<f64> = (0..m)
        .map(|k| diag[k] / scales.get(k).map_or(1.0, |s| s * s))
        .collect();
    let max_diag = unitless.iter().cloned().fold(0.0, f64::max);
    let mut dead = Vec::new();
    for (k, &dk) in unitless.iter().enumerate() {
        if dk.is_nan() || dk <= 1e-12 * max_diag.max(1e-300) {
            dead.push(k);
            out.push(vec![k]);
        }
    }
    let live: Vec<usize> = (0..m).filter(|k| !dead.contains(k)).collect();
    if live.is_empty() {
        return out;
    }
    let s = DMatrix::from_fn(live.len(), live.len(), |x, y| {
        a[(live[x], live[y])] / (diag[live[x]] * diag[live[y]]).sqrt()
    });
    let eig = SymmetricEigen::new(s);
    let lmax = eig.eigenvalues.iter().cloned().fold(0.0, f64::max);
    for (e, &l) in eig.eigenvalues.iter().enumerate() {
        if l < 1e-10 * lmax {
            let v = eig.eigenvectors.column(e);
            let mut members: Vec<usize> = (0..live.len())
                .filter(|&x| v[x].abs() > 0.2)
                .map(|x| live[x])
                .collect();
            members.sort_unstable();
            if !members.is_empty() {
                out.push(members);
            }
        }
    }
    out
}

/// Inverse of the free negative Hessian, or `None` when it is not positive definite.
pub fn invert(a: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    let inv = a.clone().cholesky()?.inverse();
    inv.iter().all(|v| v.is_finite()).then_some(inv)
}

/// The sandwich A^-1 B A^-1 on the free block, B from per-situation scores summed within groups.
pub fn robust(
    d: &Design,
    family: &dyn Family,
    beta: &[f64],
    free: &[usize],
    a_inv: &DMatrix<f64>,
) -> DMatrix<f64> {
    let mut b = Gram::new(free);
    match &d.obs.group {
        Some(groups) => {
            let k = d.params;
            let mut sums = vec![0.0; d.obs.groups * k];
            family.for_each_score(d, beta, &mut |i, s| {
                let g = groups[i] as usize;
                for (t, v) in s.iter().enumerate() {
                    sums[g * k + t] += v;
                }
            });
            for g in sums.chunks(k) {
                b.add(g);
            }
        }
        None => family.for_each_score(d, beta, &mut |_, s| b.add(s)),
    }
    let b = b.finish();
    a_inv * b * a_inv
}

/// The sum of outer products of score vectors (their free entries), gathered
/// in blocks and added with one matrix product per block.
struct Gram<'a> {
    free: &'a [usize],
    rows: Vec<f64>,
    filled: usize,
    sum: Vec<f64>,
}

/// Score vectors gathered before their outer products are added.
const GRAM_BLOCK: usize = 256;

impl<'a> Gram<'a> {
    fn new(free: &'a [usize]) -> Gram<'a> {
        let m = free.len();
        Gram {
            free,
            rows: vec![0.0; GRAM_BLOCK * m],
            filled: 0,
            sum: vec![0.0; m * m],
        }
    }

    fn add(&mut self, s: &[f64]) {
        let m = self.free.len();
        let row = &mut self.rows[self.filled * m..][..m];
        for (r, &p) in row.iter_mut().zip(self.free) {
            *r = s[p];
        }
        self.filled += 1;
        if self.filled == GRAM_BLOCK {
            self.flush();
        }
    }

    fn flush(&mut self) {
        let (m, n) = (self.free.len(), self.filled);
        if n == 0 || m == 0 {
            return;
        }
        // SAFETY: rows holds n × m values (row-major), read as its transpose
        // m × n and as itself; sum is m × m; all in bounds.
        unsafe {
            matrixmultiply::dgemm(
                m,
                n,
                m,
                1.0,
                self.rows.as_ptr(),
                1,
                m as isize,
                self.rows.as_ptr(),
                m as isize,
                1,
                1.0,
                self.sum.as_mut_ptr(),
                m as isize,
                1,
            );
        }
        self.filled = 0;
    }

    fn finish(mut self) -> DMatrix<f64> {
        self.flush();
        let m = self.free.len();
        DMatrix::from_row_slice(m, m, &self.sum)
    }
}

/// Parameters whose coefficient times the spread of their variable is so large that
/// the choice is all but deterministic: the sign of (quasi-)separation.
/// `scales`: each parameter's variable's standard deviation (`model::hessian::scales`).
/// `skip`: parameters diagnosed otherwise (a lognormal location running off).
pub fn runaway(beta: &[f64], free: &[usize], scales: &[f64], skip: &[usize]) -> Vec<(usize, f64)> {
    free.iter()
        .filter(|p| !skip.contains(p))
        .map(|&p| (p, beta[p].abs() * scales[p]))
        .filter(|&(_, spread)| spread > 15.0)
        .collect()
}
