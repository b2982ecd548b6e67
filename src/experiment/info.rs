//! The logit's Fisher information of one respondent answering a design's
//! tasks, and the criteria read from it: the D-error det(I⁻¹)^(1/K), the
//! A-error trace(I⁻¹)/K, their means over draws from the priors (the
//! Bayesian forms), and the standard errors expected at the prior means.
//! Probabilities are the logit family's (`model::logit::softmax`).

use nalgebra::DMatrix;

use super::file::Plan;
use super::tasks::Tasks;

/// Coefficient vectors at which the criteria are averaged: the prior means
/// alone when every prior is fixed, else `draws` normal draws from the priors
/// (a shifted Halton sequence from the seed: reproducible, the same all search long).
#[derive(Clone, Debug)]
pub struct Draws {
    pub k: usize,
    /// `count × k`, row by row.
    pub betas: Vec<f64>,
}

impl Draws {
    pub fn count(&self) -> usize {
        self.betas.len() / self.k.max(1)
    }

    pub fn row(&self, r: usize) -> &[f64] {
        &self.betas[r * self.k..(r + 1) * self.k]
    }

    /// The prior means only.
    pub fn means(plan: &Plan) -> Draws {
        let priors = plan.priors();
        Draws {
            k: priors.len(),
            betas: priors.iter().map(|p| p.mean).collect(),
        }
    }

    /// The draws the design's criterion averages over.
    pub fn of(plan: &Plan) -> Draws {
        if !plan.bayesian() {
            return Draws::means(plan);
        }
        let priors = plan.priors();
        let spread: Vec<usize> = (0..priors.len()).filter(|&k| priors[k].sd > 0.0).collect();
        let sim = crate::model::draws::Simulation {
            draws: plan.draws,
            sequence: crate::model::draws::Sequence::Halton,
            seed: plan.seed,
        };
        let u = sim.uniforms(1, spread.len());
        let r = plan.draws;
        let mut betas = Vec::with_capacity(r * priors.len());
        for i in 0..r {
            for (k, p) in priors.iter().enumerate() {
                let b = match spread.iter().position(|&s| s == k) {
                    Some(d) => p.mean + p.sd * crate::model::normal::quantile(u[d * r + i]),
                    None => p.mean,
                };
                betas.push(b);
            }
        }
        Draws {
            k: priors.len(),
            betas,
        }
    }
}

/// Where each parameter's value comes from in one task: the coded rows X
/// (alternatives × parameters) are rebuilt from the levels through this.
#[derive(Clone, Debug)]
pub struct Coding {
    pub j: usize,
    pub k: usize,
    /// Per (alternative, attribute): the design column, if it enters.
    columns: Vec<Option<usize>>,
    attributes: usize,
    /// Per design column: its levels.
    levels: Vec<Vec<f64>>,
    /// Per constant: its alternative.
    constants: Vec<usize>,
}

impl Coding {
    pub fn new(plan: &Plan) -> Coding {
        let j = plan.alternatives.len();
        let a = plan.attributes.len();
        let mut columns = vec![None; j * a];
        for (c, col) in plan.columns.iter().enumerate() {
            columns[col.alternative * a + col.attribute] = Some(c);
        }
        Coding {
            j,
            k: a + plan.constants.len(),
            columns,
            attributes: a,
            levels: plan.columns.iter().map(|x| x.levels.clone()).collect(),
            constants: plan.constants.iter().map(|c| c.alternative).collect(),
        }
    }

    /// Fills `x` (j × k, row by row) with task `t`'s coded rows.
    pub fn rows(&self, tasks: &Tasks, t: usize, x: &mut [f64]) {
        let row = tasks.task(t);
        for alt in 0..self.j {
            let out = &mut x[alt * self.k..(alt + 1) * self.k];
            let cols = &self.columns[alt * self.attributes..(alt + 1) * self.attributes];
            for (o, col) in out.iter_mut().zip(cols) {
                *o = match col {
                    Some(c) => self.levels[*c][row[*c] as usize],
                    None => 0.0,
                };
            }
            for (c, &on) in self.constants.iter().enumerate() {
                out[self.attributes + c] = if on == alt { 1.0 } else { 0.0 };
            }
        }
    }
}

/// The length of a packed upper triangle of a k × k matrix.
pub fn packed(k: usize) -> usize {
    k * (k + 1) / 2
}

/// Scratch of one task's information: utilities, probabilities, mean row.
pub struct Scratch {
    v: Vec<f64>,
    p: Vec<f64>,
    mean: Vec<f64>,
    dev: Vec<f64>,
    chol: Vec<f64>,
    /// The reciprocals of the Cholesky factor's diagonal.
    inverse: Vec<f64>,
}

impl Scratch {
    pub fn new(j: usize, k: usize) -> Scratch {
        Scratch {
            v: vec![0.0; j],
            p: vec![0.0; j],
            mean: vec![0.0; k],
            dev: vec![0.0; k],
            chol: vec![0.0; k * k],
            inverse: vec![0.0; k],
        }
    }
}

/// Adds one task's information X'(diag(P) − PP')X at `beta` to the packed
/// `out`, written as Σ_j P_j (x_j − x̄)(x_j − x̄)' with x̄ = Σ_j P_j x_j.
pub fn add_task(x: &[f64], j: usize, k: usize, beta: &[f64], s: &mut Scratch, out: &mut [f64]) {
    for alt in 0..j {
        let row = &x[alt * k..(alt + 1) * k];
        s.v[alt] = row.iter().zip(beta).map(|(a, b)| a * b).sum();
    }
    crate::model::logit::softmax(&s.v, &mut s.p);
    s.mean.iter_mut().for_each(|m| *m = 0.0);
    for alt in 0..j {
        let row = &x[alt * k..(alt + 1) * k];
        for (m, xv) in s.mean.iter_mut().zip(row) {
            *m += s.p[alt] * xv;
        }
    }
    for alt in 0..j {
        let row = &x[alt * k..(alt + 1) * k];
        for ((d, xv), m) in s.dev.iter_mut().zip(row).zip(&s.mean) {
            *d = xv - m;
        }
        let w = s.p[alt];
        let mut at = 0;
        for a in 0..k {
            let wa = w * s.dev[a];
            let span = &mut out[at..at + k - a];
            for (o, d) in span.iter_mut().zip(&s.dev[a..]) {
                *o += wa * d;
            }
            at += k - a;
        }
    }
}

/// ln det of a packed symmetric matrix by Cholesky; `None` when it is not
/// positive definite (the parameters are not all identified). The pivots are
/// multiplied together and only their product's logarithm taken (rescaled
/// before it could overflow).
pub fn log_det(m: &[f64], k: usize, s: &mut Scratch) -> Option<f64> {
    let floor = 1e-12 * (1.0 + m_diag_max(m, k));
    let l = &mut s.chol;
    let mut at = 0;
    for a in 0..k {
        for b in a..k {
            l[b * k + a] = m[at];
            at += 1;
        }
    }
    let (mut product, mut logs) = (1.0f64, 0.0f64);
    for i in 0..k {
        for jj in 0..=i {
            let mut v = l[i * k + jj];
            for p in 0..jj {
                v -= l[i * k + p] * l[jj * k + p];
            }
            if i == jj {
                if v <= floor {
                    return None;
                }
                let root = v.sqrt();
                l[i * k + i] = root;
                s.inverse[i] = 1.0 / root;
                product *= v;
                if !(1e-150..1e150).contains(&product) {
                    logs += product.ln();
                    product = 1.0;
                }
            } else {
                l[i * k + jj] = v * s.inverse[jj];
            }
        }
    }
    Some(logs + product.ln())
}

fn m_diag_max(m: &[f64], k: usize) -> f64 {
    let mut at = 0;
    let mut best = 0.0f64;
    for a in 0..k {
        best = best.max(m[at].abs());
        at += k - a;
    }
    best
}

/// The D-error of a packed information matrix: det(I)^(−1/K), infinite when singular.
pub fn d_error_of(m: &[f64], k: usize, s: &mut Scratch) -> f64 {
    match log_det(m, k, s) {
        Some(ld) => (-ld / k as f64).exp(),
        None => f64::INFINITY,
    }
}

/// One respondent's information over every task of the design at `beta`.
pub fn information(plan: &Plan, tasks: &Tasks, beta: &[f64]) -> DMatrix<f64> {
    let coding = Coding::new(plan);
    let (j, k) = (coding.j, coding.k);
    let mut x = vec![0.0; j * k];
    let mut s = Scratch::new(j, k);
    let mut m = vec![0.0; packed(k)];
    for t in 0..tasks.count() {
        coding.rows(tasks, t, &mut x);
        add_task(&x, j, k, beta, &mut s, &mut m);
    }
    unpack(&m, k)
}

fn unpack(m: &[f64], k: usize) -> DMatrix<f64> {
    let mut out = DMatrix::zeros(k, k);
    let mut at = 0;
    for a in 0..k {
        for b in a..k {
            out[(a, b)] = m[at];
            out[(b, a)] = m[at];
            at += 1;
        }
    }
    out
}

/// The design's criteria averaged over the draws (one draw: the fixed priors).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Criteria {
    pub d_error: f64,
    pub a_error: f64,
}

/// D- and A-error of a design, averaged over `draws`.
pub fn criteria(plan: &Plan, tasks: &Tasks, draws: &Draws) -> Criteria {
    let n = draws.count();
    let per: Vec<(f64, f64)> =
        crate::design::on_ranges(crate::design::heavy_pieces(n, 64), |range| {
            let mut d = 0.0;
            let mut a = 0.0;
            for r in range {
                let info = information(plan, tasks, draws.row(r));
                let (dr, ar) = errors(&info);
                d += dr;
                a += ar;
            }
            (d, a)
        });
    let (d, a) = per.iter().fold((0.0, 0.0), |s, x| (s.0 + x.0, s.1 + x.1));
    Criteria {
        d_error: d / n as f64,
        a_error: a / n as f64,
    }
}

/// D- and A-error of one information matrix (infinite when it is singular).
pub fn errors(info: &DMatrix<f64>) -> (f64, f64) {
    let k = info.nrows() as f64;
    match info.clone().cholesky() {
        Some(c) => {
            let ld: f64 = c.l().diagonal().iter().map(|v| 2.0 * v.ln()).sum();
            let inv = c.inverse();
            ((-ld / k).exp(), inv.trace() / k)
        }
        None => (f64::INFINITY, f64::INFINITY),
    }
}

/// Standard errors of one respondent answering every task, at the prior
/// means: the square roots of diag(I⁻¹). `None` when I is singular.
pub fn standard_errors(plan: &Plan, tasks: &Tasks) -> Option<Vec<f64>> {
    let means = Draws::means(plan);
    let info = information(plan, tasks, means.row(0));
    let inv = info.cholesky()?.inverse();
    Some((0..inv.nrows()).map(|i| inv[(i, i)].sqrt()).collect())
}
