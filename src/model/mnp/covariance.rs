//! The error covariance of the multinomial probit and what the GHK simulator
//! needs of it. Only differences of utilities matter, so the model holds the
//! covariance `S` of the errors' differences against the base alternative,
//! e_j = eps_j - eps_base for the J - 1 other alternatives in spec order, as
//! S = L L' with L lower triangular. `full`: the entries of L are parameters
//! except L[0][0] = 1 (the scale: the first difference has variance 1, the
//! binary probit's normalisation); `independent`: S = (I + 11') / 2, which is
//! independent errors of variance 1/2 each. A situation where alternative c
//! is chosen among the available set A needs the differences against c,
//! w = D e (one row per other available alternative), with covariance
//! D S D' = (D L)(D L)', and its Cholesky factor C; with `derivatives`, dC by
//! each parameter of L (the forward-mode Cholesky derivative,
//! dC = C Phi(C^-1 dS C^-T), Phi taking the lower triangle with half the
//! diagonal; e.g. Murray 2016, "Differentiation of the Cholesky decomposition").

/// Where the free entries of L sit among the model's parameters.
#[derive(Clone, Debug, PartialEq)]
pub enum Structure {
    /// S = (I + 11') / 2: no parameters.
    Independent,
    /// L's entries (row-major, lower triangle, without L[0][0]) at
    /// `beta[first..first + n(n+1)/2 - 1]`.
    Full { first: usize },
}

/// The Cholesky factor of (I + 11') / 2 of size n (row-major): the starting
/// point of the `full` structure.
pub fn independent_factor(n: usize) -> Vec<f64> {
    let mut s = vec![0.5; n * n];
    for k in 0..n {
        s[k * n + k] = 1.0;
    }
    cholesky(&s, n).unwrap_or_else(|| identity(n))
}

fn identity(n: usize) -> Vec<f64> {
    let mut l = vec![0.0; n * n];
    for k in 0..n {
        l[k * n + k] = 1.0;
    }
    l
}

/// The (row, column) pairs of L that are parameters, in their order.
pub fn free_entries(n: usize) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    for r in 0..n {
        for s in 0..=r {
            if (r, s) != (0, 0) {
                out.push((r, s));
            }
        }
    }
    out
}

impl Structure {
    /// L (n x n row-major) at `beta`.
    pub fn factor(&self, n: usize, beta: &[f64]) -> Vec<f64> {
        match self {
            Structure::Independent => independent_factor(n),
            Structure::Full { first } => {
                let mut l = vec![0.0; n * n];
                l[0] = 1.0;
                for (q, (r, s)) in free_entries(n).into_iter().enumerate() {
                    l[r * n + s] = beta[first + q];
                }
                l
            }
        }
    }

    /// Number of covariance parameters.
    pub fn count(&self, n: usize) -> usize {
        match self {
            Structure::Independent => 0,
            Structure::Full { .. } => n * (n + 1) / 2 - 1,
        }
    }
}

/// The Cholesky factor of a symmetric n x n matrix (row-major), or `None`
/// when it is not positive definite (a pivot below 1e-12 of the diagonal's size).
pub fn cholesky(a: &[f64], n: usize) -> Option<Vec<f64>> {
    let mut c = vec![0.0; n * n];
    let scale = (0..n).map(|k| a[k * n + k].abs()).fold(0.0, f64::max);
    for i in 0..n {
        for j in 0..=i {
            let mut s = a[i * n + j];
            for k in 0..j {
                s -= c[i * n + k] * c[j * n + k];
            }
            if i == j {
                if s.is_nan() || s <= 1e-12 * scale || !s.is_finite() {
                    return None;
                }
                c[i * n + i] = s.sqrt();
            } else {
                c[i * n + j] = s / c[j * n + j];
            }
        }
    }
    Some(c)
}

/// The differences a situation needs: chosen `chosen`, the others available
/// `others` (alternative indices), over the non-base positions `pos`
/// (`pos[j]` = place of alternative j among the differences, `None` for the base).
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
pub struct Pattern {
    pub chosen: usize,
    pub others: Vec<usize>,
}

/// C and, when asked, dC by each covariance parameter for one pattern.
#[derive(Clone, Debug, Default)]
pub struct Factor {
    pub m: usize,
    /// m x m row-major.
    pub c: Vec<f64>,
    /// Per covariance parameter, m x m row-major.
    pub dc: Vec<Vec<f64>>,
}

/// D (m x n): row t is +1 at the place of others[t], -1 at the chosen's place.
fn difference_matrix(p: &Pattern, pos: &[Option<usize>], n: usize) -> Vec<f64> {
    let m = p.others.len();
    let mut d = vec![0.0; m * n];
    for (t, &o) in p.others.iter().enumerate() {
        if let Some(q) = pos[o] {
            d[t * n + q] += 1.0;
        }
        if let Some(q) = pos[p.chosen] {
            d[t * n + q] -= 1.0;
        }
    }
    d
}

/// The factor of pattern `p` given L (n x n); `entries`: the parameters' places
/// in L when derivatives are wanted. `None`: D S D' is not positive definite.
pub fn factor(
    p: &Pattern,
    pos: &[Option<usize>],
    l: &[f64],
    n: usize,
    entries: Option<&[(usize, usize)]>,
) -> Option<Factor> {
    let m = p.others.len();
    let d = difference_matrix(p, pos, n);
    // M = D L (m x n), S_p = M M'.
    let mut mm = vec![0.0; m * n];
    for t in 0..m {
        for s in 0..n {
            mm[t * n + s] = (s..n).map(|r| d[t * n + r] * l[r * n + s]).sum();
        }
    }
    let mut sp = vec![0.0; m * m];
    for a in 0..m {
        for b in 0..m {
            sp[a * m + b] = (0..n).map(|s| mm[a * n + s] * mm[b * n + s]).sum();
        }
    }
    let c = cholesky(&sp, m)?;
    let mut dc = Vec::new();
    if let Some(entries) = entries {
        let mut ds = vec![0.0; m * m];
        let mut y = vec![0.0; m * m];
        for &(r, s) in entries {
            // dM = D[:, r] e_s'  =>  dS = D[:, r] M[:, s]' + M[:, s] D[:, r]'.
            for a in 0..m {
                for b in 0..m {
                    ds[a * m + b] = d[a * n + r] * mm[b * n + s] + mm[a * n + s] * d[b * n + r];
                }
            }
            dc.push(cholesky_derivative(&c, &ds, m, &mut y));
        }
    }
    Some(Factor { m, c, dc })
}

/// Solves C z = b by forward substitution (C lower triangular, m x m
/// row-major), the i-th entry of z and b at `at(i)` of their arrays.
fn forward_solve(c: &[f64], m: usize, b: &[f64], z: &mut [f64], at: impl Fn(usize) -> usize) {
    for i in 0..m {
        let mut s = b[at(i)];
        for k in 0..i {
            s -= c[i * m + k] * z[at(k)];
        }
        z[at(i)] = s / c[i * m + i];
    }
}

/// dC for a change dS of C C' (both m x m row-major): C Phi(C^-1 dS C^-T).
fn cholesky_derivative(c: &[f64], ds: &[f64], m: usize, y: &mut [f64]) -> Vec<f64> {
    // y = C^-1 dS (column by column).
    for col in 0..m {
        forward_solve(c, m, ds, y, |i| i * m + col);
    }
    // x = y C^-T, i.e. x' = C^-1 y': row by row of y.
    let mut x = vec![0.0; m * m];
    for row in 0..m {
        forward_solve(c, m, y, &mut x, |i| row * m + i);
    }
    // Phi: lower triangle, half the diagonal; then C Phi.
    let mut out = vec![0.0; m * m];
    for i in 0..m {
        for j in 0..=i {
            let mut s = 0.0;
            for k in j..=i {
                let phi = if k == j {
                    0.5 * x[k * m + j]
                } else {
                    x[k * m + j]
                };
                s += c[i * m + k] * phi;
            }
            out[i * m + j] = s;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The Cholesky derivative against central differences of the factor
    /// (common practice for checking derivative code).
    #[test]
    fn factor_derivative_matches_differences() {
        let n = 3;
        let pos = vec![None, Some(0), Some(1), Some(2)];
        let entries = free_entries(n);
        let mut l = vec![1.0, 0.0, 0.0, 0.4, 0.9, 0.0, -0.3, 0.2, 0.7];
        for chosen in 0..4 {
            let others: Vec<usize> = (0..4).filter(|&j| j != chosen).collect();
            let p = Pattern { chosen, others };
            let f = factor(&p, &pos, &l, n, Some(&entries)).expect("positive definite");
            for (q, &(r, s)) in entries.iter().enumerate() {
                let h = 1e-6;
                l[r * n + s] += h;
                let up = factor(&p, &pos, &l, n, None).expect("pd").c;
                l[r * n + s] -= 2.0 * h;
                let down = factor(&p, &pos, &l, n, None).expect("pd").c;
                l[r * n + s] += h;
                for e in 0..f.m * f.m {
                    let fd = (up[e] - down[e]) / (2.0 * h);
                    assert!(
                        (fd - f.dc[q][e]).abs() < 1e-7,
                        "chosen {chosen} entry {r},{s}: {fd} vs {}",
                        f.dc[q][e]
                    );
                }
            }
        }
    }

    #[test]
    fn independent_structure_has_unit_differences() {
        // S = (I + 11')/2: the difference of two non-base errors has variance
        // 1/2 + 1/2 = 1 as well (a fact of the construction).
        let n = 3;
        let l = independent_factor(n);
        let pos = vec![None, Some(0), Some(1), Some(2)];
        let p = Pattern {
            chosen: 2,
            others: vec![0, 1, 3],
        };
        let f = factor(&p, &pos, &l, n, None).expect("pd");
        for a in 0..3 {
            let var: f64 = (0..3).map(|k| f.c[a * 3 + k].powi(2)).sum();
            assert!((var - 1.0).abs() < 1e-12);
        }
    }
}
