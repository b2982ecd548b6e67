//! Checks of the blocked logit pass against plain per-situation sums, and of the fast maths.

use super::*;
use crate::data::Observations;
use crate::design::{on_pieces, pieces, Feature};
use crate::rng::Rng;
use std::sync::Arc;

/// A random logit design: `j` alternatives (the first the base), two
/// attributes (one shared, one per alternative on some), one characteristic,
/// constants, availability and weights; `n` not a multiple of the block.
fn design(n: usize, j: usize, seed: u64) -> Design {
    let mut rng = Rng::new(seed);
    let mut available = vec![true; n * j];
    let mut chosen = Vec::new();
    for i in 0..n {
        for a in 1..j {
            available[i * j + a] = rng.uniform() > 0.2;
        }
        let open: Vec<usize> = (0..j).filter(|&a| available[i * j + a]).collect();
        chosen.push(open[rng.below(open.len())] as u32);
    }
    let attr = |rng: &mut Rng| -> Vec<f64> {
        (0..n * j)
            .map(|t| {
                if available[t] {
                    3.0 * rng.normal()
                } else {
                    0.0
                }
            })
            .collect()
    };
    let attributes = vec![attr(&mut rng), attr(&mut rng)];
    let characteristics = vec![(0..n).map(|_| 20.0 + 10.0 * rng.normal()).collect()];
    let weight: Vec<f64> = (0..n).map(|_| 0.5 + rng.uniform()).collect();
    let mut features = vec![Vec::new(); j];
    let mut k = 0;
    for (a, f) in features.iter_mut().enumerate().skip(1) {
        f.push(Feature {
            param: k,
            value: Value::One,
        });
        k += 1;
        let _ = a;
    }
    let shared = k;
    k += 1;
    for f in features.iter_mut() {
        f.push(Feature {
            param: shared,
            value: Value::Attribute(0),
        });
    }
    for f in features.iter_mut().skip(1).step_by(2) {
        f.push(Feature {
            param: k,
            value: Value::Attribute(1),
        });
        k += 1;
    }
    for f in features.iter_mut().skip(1) {
        f.push(Feature {
            param: k,
            value: Value::Characteristic(0),
        });
        k += 1;
    }
    let obs = Observations {
        offset: None,
        tables: None,
        situations: n,
        alternatives: j,
        chosen,
        available,
        weight_total: weight.iter().sum(),
        weight,
        group: None,
        groups: 0,
        attributes,
        characteristics,
        first_row: (1..=n).collect(),
    };
    Design {
        obs: Arc::new(obs),
        params: k,
        features,
    }
}

/// The textbook sums, situation by situation, with the standard library's exp.
fn reference(d: &Design, beta: &[f64]) -> (f64, Vec<f64>, Vec<f64>) {
    let (n, j, k) = (d.situations(), d.alternatives(), d.params);
    let (mut ll, mut g, mut h) = (0.0, vec![0.0; k], vec![0.0; k * k]);
    let mut v = vec![0.0; j];
    let mut p = vec![0.0; j];
    for i in 0..n {
        let w = d.obs.weight[i];
        let c = d.obs.chosen[i] as usize;
        d.utilities(beta, i, &mut v);
        let lse = softmax(&v, &mut p);
        ll += w * (v[c] - lse);
        let mut x = vec![vec![0.0; k]; j];
        for (a, fs) in d.features.iter().enumerate() {
            for f in fs {
                x[a][f.param] += d.value(i, a, f.value);
            }
        }
        let xbar: Vec<f64> = (0..k)
            .map(|q| (0..j).map(|a| p[a] * x[a][q]).sum())
            .collect();
        for q in 0..k {
            g[q] += w * (x[c][q] - xbar[q]);
            for r in 0..k {
                let m: f64 = (0..j).map(|a| p[a] * x[a][q] * x[a][r]).sum();
                h[q * k + r] -= w * (m - xbar[q] * xbar[r]);
            }
        }
    }
    (ll, g, h)
}

#[test]
fn pieces_cover_the_situations_in_order() {
    for n in [0, 1, 19_999, 20_000, 65_537, 1_000_000, 5_000_003] {
        let p = pieces(n);
        assert!(p.len() <= 64);
        let mut at = 0;
        for r in &p {
            assert_eq!(r.start, at);
            assert!(r.end > r.start);
            at = r.end;
        }
        assert_eq!(at, n);
        let sums = on_pieces(n, |r| r.len());
        assert_eq!(sums.iter().sum::<usize>(), n);
        assert_eq!(sums, p.iter().map(|r| r.len()).collect::<Vec<_>>());
    }
}

#[test]
fn every_code_path_agrees_with_the_textbook_sums() {
    for (n, j) in [(1, 2), (300, 5), (517, 3), (260, 9)] {
        let d = design(n, j, 40 + n as u64);
        let mut rng = Rng::new(7);
        let beta: Vec<f64> = (0..d.params).map(|_| 0.2 * rng.normal()).collect();
        let (ll, g, h) = reference(&d, &beta);
        let e = evaluate(&d, &beta, true, true);
        let hess = e.hess.unwrap_or_default();
        let close = |a: f64, b: f64, scale: f64| (a - b).abs() <= 1e-10 * scale.max(1.0);
        assert!(
            close(e.ll, ll, ll.abs()),
            "n {n} j {j}: ll {} vs {ll}",
            e.ll
        );
        let gs = g.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        let hs = h.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        for q in 0..d.params {
            assert!(close(e.grad[q], g[q], gs), "n {n} j {j}: gradient {q}");
            for r in 0..d.params {
                let (a, b) = (hess[q * d.params + r], h[q * d.params + r]);
                assert!(close(a, b, hs), "n {n} j {j}: hessian ({q},{r}) {a} vs {b}");
            }
        }
        // The portable and vector versions: the same sums to rounding, and the
        // two vector widths the same to the last bit.
        let plan = Plan::new(&d, &beta);
        let plain = logit_chunk_body::<false>(&plan, 0..n, true, true);
        assert!(close(plain.ll.value(), ll, ll.abs()));
        #[cfg(target_arch = "x86_64")]
        {
            if fast_path() {
                // SAFETY: the processor supports AVX2 and FMA, checked just above.
                let v2 = unsafe { logit_chunk_avx2(&plan, 0..n, true, true) };
                assert!(close(v2.ll.value(), ll, ll.abs()));
                if wide_path() {
                    // SAFETY: the processor supports AVX-512F too, checked just above.
                    let v5 = unsafe { logit_chunk_avx512(&plan, 0..n, true, true) };
                    assert_eq!(v2.ll.value().to_bits(), v5.ll.value().to_bits());
                    assert_eq!(v2.g, v5.g);
                    assert_eq!(v2.s, v5.s);
                    assert_eq!(v2.outer, v5.outer);
                }
            }
        }
        // Scores sum to the gradient.
        let mut total = vec![0.0; d.params];
        for_each_score(&d, &beta, &mut |_, s| {
            total.iter_mut().zip(s).for_each(|(t, x)| *t += x)
        });
        for q in 0..d.params {
            assert!(close(total[q], g[q], gs), "n {n} j {j}: score sum {q}");
        }
    }
}

#[test]
fn exp_matches_std_to_an_ulp_or_two() {
    for fused in [false, true] {
        let e = |x: f64| {
            if fused {
                exp_nonpositive::<true>(x)
            } else {
                exp_nonpositive::<false>(x)
            }
        };
        let mut worst: f64 = 0.0;
        let mut x = 0.0;
        while x > -720.0 {
            let a = e(x);
            let b = x.exp();
            if x >= -708.0 {
                worst = worst.max(((a - b) / b).abs());
            } else {
                assert_eq!(a, 0.0);
            }
            x -= 0.000_731;
        }
        assert!(worst < 5e-16, "worst relative error {worst:e}");
        assert_eq!(e(0.0), 1.0);
        assert_eq!(e(-1e300), 0.0);
        assert_eq!(e(f64::NEG_INFINITY), 0.0);
    }
}

#[test]
fn ln_matches_std_to_an_ulp_or_two() {
    for fused in [false, true] {
        let l = |x: f64| {
            if fused {
                ln_positive::<true>(x)
            } else {
                ln_positive::<false>(x)
            }
        };
        let mut worst: f64 = 0.0;
        let mut x = 1e-3;
        while x < 1e4 {
            let a = l(x);
            let b = x.ln();
            worst = worst.max((a - b).abs() / b.abs().max(f64::MIN_POSITIVE));
            x *= 1.000_137;
        }
        assert!(worst < 5e-16, "worst relative error {worst:e}");
        assert_eq!(l(1.0), 0.0);
        assert_eq!(l(2.0), std::f64::consts::LN_2);
    }
}

#[test]
fn compensated_sum_of_a_million_equal_terms_is_exact() {
    let mut c = Compensated::default();
    for _ in 0..1_000_000 {
        c.add(-1.489_291_313_6);
    }
    assert!((c.value() - -1_489_291.313_6).abs() <= 1e-9);
}
