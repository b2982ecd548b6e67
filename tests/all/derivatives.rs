//! Analytic gradient and Hessian against central finite differences, both
//! families, with availability and weights (common practice for checking
//! likelihood code).

use std::sync::Arc;

use sharecast::design::Design;
use sharecast::rng::Rng;

use crate::common::*;

fn check(rel_spec: &str, scale: f64, seed: u64) {
    let (spec, ds) = load(rel_spec);
    let d = Design::build(&spec, Arc::new(ds.obs.clone()));
    let family = sharecast::model::for_spec(&spec).unwrap();
    let evaluate = |beta: &[f64], g: bool, h: bool| family.evaluate(&d, beta, g, h);
    let k = d.params;
    let mut rng = Rng::new(seed);
    for _ in 0..3 {
        let beta: Vec<f64> = (0..k).map(|_| scale * rng.normal()).collect();
        let e = evaluate(&beta, true, true);
        let h = e.hess.unwrap();
        for a in 0..k {
            let step = 1e-4 * beta[a].abs().max(0.1);
            let mut up = beta.clone();
            up[a] += step;
            let mut dn = beta.clone();
            dn[a] -= step;
            let eu = evaluate(&up, true, false);
            let ed = evaluate(&dn, true, false);
            let fd = (eu.ll - ed.ll) / (2.0 * step);
            let tol = 1e-5
                * e.grad[a]
                    .abs()
                    .max(1e-2 * e.ll.abs() / d.situations() as f64);
            assert!(
                (fd - e.grad[a]).abs() < tol.max(1e-6),
                "{rel_spec} gradient {a}: analytic {} vs numeric {fd}",
                e.grad[a]
            );
            for b in 0..k {
                let fdh = (eu.grad[b] - ed.grad[b]) / (2.0 * step);
                let an = h[a * k + b];
                // Relative to the entry or to the row and column's curvature, whichever is larger.
                let scale = an
                    .abs()
                    .max((h[a * k + a] * h[b * k + b]).abs().sqrt())
                    .max(1.0);
                let tol = 1e-4 * scale;
                assert!(
                    (fdh - an).abs() < tol,
                    "{rel_spec} hessian ({a},{b}): analytic {an} vs numeric {fdh}"
                );
            }
        }
    }
}

#[test]
fn logit_with_availability_and_weights() {
    // The commute demo has unavailable alternatives and expansion weights.
    check("specs/commute.toml", 0.05, 11);
}

#[test]
fn logit_long_layout_with_stockouts() {
    check("specs/grocery.toml", 0.1, 12);
}

#[test]
fn probit_binary() {
    check("tests/specs/spector_probit.toml", 0.3, 13);
}

#[test]
fn probit_with_weights_and_availability() {
    check("tests/specs/probit_weighted.toml", 0.5, 14);
}
