//! The GHK simulator against exact rectangle probabilities of the normal
//! distribution (tests/reference/ghk_reference.py: one-dimensional quadrature
//! in two dimensions, scipy's multivariate normal distribution function in
//! three; fixture tests/fixtures/ghk_reference.json), its one-dimensional case
//! against Phi, and its gradient against finite differences at fixed draws.

use nalgebra::DMatrix;
use sharecast::model::draws::{Sequence, Simulation};
use sharecast::model::ghk::{probability, slots, Work};
use sharecast::model::normal;

use crate::common::*;

fn cholesky(s: &[Vec<f64>]) -> Vec<f64> {
    let m = s.len();
    let a = DMatrix::from_fn(m, m, |i, j| s[i][j]);
    let l = a.cholesky().unwrap().l();
    (0..m * m).map(|k| l[(k / m, k % m)]).collect()
}

/// `draws` rows of m - 1 Halton uniforms, `[draw][k]`.
fn uniforms(m: usize, draws: usize) -> Vec<f64> {
    let sim = Simulation {
        draws,
        sequence: Sequence::Halton,
        seed: 3,
    };
    let dims = m - 1;
    let u = sim.uniforms(1, dims);
    let mut out = vec![0.0; draws * dims];
    for d in 0..dims {
        for r in 0..draws {
            out[r * dims + d] = u[d * draws + r];
        }
    }
    out
}

#[test]
fn ghk_matches_exact_rectangle_probabilities() {
    let text = std::fs::read_to_string(path("tests/fixtures/ghk_reference.json")).unwrap();
    let r: serde_json::Value = serde_json::from_str(&text).unwrap();
    let mut w = Work::default();
    for c in r["cases"].as_array().unwrap() {
        let s: Vec<Vec<f64>> = serde_json::from_value(c["covariance"].clone()).unwrap();
        let b: Vec<f64> = serde_json::from_value(c["upper"].clone()).unwrap();
        let want = c["probability"].as_f64().unwrap();
        let m = b.len();
        let l = cholesky(&s);
        // The simulator's error shrinks as draws grow (Halton draws here).
        let coarse = (probability(&l, m, &b, &uniforms(m, 50), 50, None, &mut w) - want).abs();
        let fine =
            (probability(&l, m, &b, &uniforms(m, 20_000), 20_000, None, &mut w) - want).abs();
        assert!(fine < 2e-4, "{b:?}: 20,000 draws off by {fine}");
        assert!(
            fine <= coarse + 1e-12,
            "{b:?}: {fine} with 20,000 draws, {coarse} with 50"
        );
    }
}

#[test]
fn one_dimension_is_phi_exactly() {
    let mut w = Work::default();
    for (b, l) in [(0.3, 1.0), (-1.7, 0.6), (4.0, 2.5)] {
        let p = probability(&[l], 1, &[b], &[], 1, None, &mut w);
        assert!((p - normal::cdf(b / l)).abs() < 1e-15);
    }
}

#[test]
fn ghk_gradient_matches_finite_differences_at_fixed_draws() {
    let m = 3;
    let s = vec![
        vec![1.0, 0.5, 0.2],
        vec![0.5, 1.5, 0.4],
        vec![0.2, 0.4, 1.2],
    ];
    let l = cholesky(&s);
    let b = vec![0.5, -0.1, 0.8];
    let draws = 200;
    let u = uniforms(m, draws);
    let mut w = Work::default();
    let mut g = vec![0.0; slots(m)];
    probability(&l, m, &b, &u, draws, Some(&mut g), &mut w);
    let h = 1e-6;
    for t in 0..slots(m) {
        if t >= m && (t - m) % m > (t - m) / m {
            assert_eq!(g[t], 0.0, "upper triangle slot {t}");
            continue;
        }
        let (mut bu, mut bd, mut lu, mut ld) = (b.clone(), b.clone(), l.clone(), l.clone());
        if t < m {
            bu[t] += h;
            bd[t] -= h;
        } else {
            lu[t - m] += h;
            ld[t - m] -= h;
        }
        let up = probability(&lu, m, &bu, &u, draws, None, &mut w);
        let dn = probability(&ld, m, &bd, &u, draws, None, &mut w);
        let fd = (up - dn) / (2.0 * h);
        assert!((g[t] - fd).abs() < 1e-7, "slot {t}: {} vs {fd}", g[t]);
    }
}
