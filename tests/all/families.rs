//! The shared family suite: every family in the registry is checked on small
//! simulated data, so a new family gets all of it by registering. Checks:
//! the analytic gradient against central finite differences of the
//! log-likelihood, the Hessian (analytic, or differenced from the gradient)
//! against finite differences of the gradient, dP/dV against finite
//! differences of the probabilities (common practice for checking likelihood
//! code); probabilities in [0, 1] summing to one over the available
//! alternatives, and per-situation scores summing to the gradient (facts of
//! the model); recovery of the generating parameters within 3.5 standard
//! errors (consistency and asymptotic normality of maximum likelihood, e.g.
//! Train, Discrete Choice Methods with Simulation, 2nd ed., ch. 8).

use std::path::Path;
use std::sync::Arc;

use sharecast::data::Observations;
use sharecast::design::Design;
use sharecast::estimate::{self, Step};
use sharecast::model::registry::{Entry, FAMILIES};
use sharecast::model::{self, Family};
use sharecast::rng::Rng;
use sharecast::spec::{Spec, Term};

/// The example spec of a family: `j` alternatives (the first the base, the
/// last not always available), a shared attribute `x` and a characteristic
/// `z`, plus the family's own lines.
fn example_spec(e: &Entry) -> Spec {
    let j = e.example_alternatives;
    let names: Vec<String> = (0..j).map(|a| format!("a{a}")).collect();
    // A single-index family (ordered categories) has no base and no attributes.
    let single = e.rules.single_index();
    let mut text = format!(
        "[data]\nfile = \"never-read.csv\"\nlayout = \"wide\"\nchoice = \"alt\"\n[model]\nfamily = \"{}\"\n{}",
        e.name,
        if single { "" } else { "base = \"a0\"\n" }
    );
    text.push_str(e.example_model);
    for (a, n) in names.iter().enumerate() {
        text.push_str(&format!("[alternatives.{n}]\n"));
        if a == j - 1 && j > 2 && !single {
            text.push_str("available = \"open\"\n");
        }
    }
    let cols: Vec<String> = names.iter().map(|n| format!("{n} = \"x_{n}\"")).collect();
    if !single {
        text.push_str(&format!(
            "[[attribute]]\nname = \"x\"\ncolumns = {{ {} }}\n{}",
            cols.join(", "),
            e.example_attribute
        ));
    }
    text.push_str("[[characteristic]]\nname = \"z\"\ncolumn = \"z\"\n");
    text.push_str(e.example_spec);
    sharecast::model::parse_spec(&text, Path::new("/nowhere/family-suite.toml"))
        .unwrap_or_else(|err| panic!("{}: example spec: {err}", e.name))
}

/// Generating values: constants alternate in sign, x -0.8, z's coefficients
/// small, a family's own parameters at their starting values unless the
/// registry entry gives a true value for them.
fn truth(e: &Entry, spec: &Spec) -> Vec<f64> {
    spec.parameters
        .iter()
        .enumerate()
        .map(|(k, p)| match &p.term {
            _ if e.example_truth.iter().any(|t| t.0 == p.name) => e
                .example_truth
                .iter()
                .find(|t| t.0 == p.name)
                .map(|t| t.1)
                .unwrap_or(p.start),
            Term::Constant => 0.3 * if k % 2 == 0 { 1.0 } else { -1.0 },
            Term::Attribute(_) => -0.8,
            Term::Characteristic(_) => 0.02 * (1.0 + k as f64 % 3.0),
            Term::Family(_) => e
                .example_truth
                .iter()
                .find(|t| t.0 == p.name)
                .map(|t| t.1)
                .unwrap_or(p.start),
        })
        .collect()
}

/// `n` situations drawn from the family's own probabilities at `beta`.
fn simulate(family: &dyn Family, spec: &Spec, beta: &[f64], n: usize, seed: u64) -> Design {
    let j = spec.alternatives.len();
    let mut rng = Rng::new(seed);
    let mut available = vec![true; n * j];
    if j > 2 && spec.alternatives[j - 1].available.is_some() {
        for i in 0..n {
            available[i * j + j - 1] = rng.uniform() > 0.25;
        }
    }
    let x: Vec<f64> = (0..n * j).map(|_| 1.0 + 2.0 * rng.uniform()).collect();
    let z: Vec<f64> = (0..n).map(|_| 20.0 + 10.0 * rng.normal()).collect();
    let weight: Vec<f64> = (0..n).map(|_| 0.5 + rng.uniform()).collect();
    let mut obs = Observations {
        offset: None,
        tables: None,
        situations: n,
        alternatives: j,
        chosen: vec![0; n],
        available,
        weight_total: weight.iter().sum(),
        weight,
        group: None,
        groups: 0,
        attributes: vec![x],
        characteristics: vec![z],
        first_row: (1..=n).collect(),
    };
    let d = Design::build(spec, Arc::new(obs.clone()));
    // Through the sample enumeration, so that a family whose probabilities
    // average over coefficient draws is simulated from that average.
    let all = model::enumerate::probabilities(family, &d, beta);
    for i in 0..n {
        let p = &all[i * j..(i + 1) * j];
        let u = rng.uniform();
        let mut acc = 0.0;
        let mut pick = j - 1;
        for (a, pa) in p.iter().enumerate() {
            acc += pa;
            if u < acc && d.available(i, a) {
                pick = a;
                break;
            }
        }
        if !d.available(i, pick) {
            pick = (0..j).rev().find(|&a| d.available(i, a)).unwrap_or(0);
        }
        obs.chosen[i] = pick as u32;
    }
    Design::build(spec, Arc::new(obs))
}

pub(crate) fn setup(e: &Entry, n: usize, seed: u64) -> (Spec, Arc<dyn Family>, Vec<f64>, Design) {
    let spec = example_spec(e);
    let family = model::for_spec(&spec).unwrap();
    let beta = truth(e, &spec);
    let d = simulate(&*family, &spec, &beta, n, seed);
    (spec, family, beta, d)
}

#[test]
fn every_family_has_an_example_that_validates() {
    assert!(FAMILIES.len() >= 2);
    for e in FAMILIES {
        let spec = example_spec(e);
        assert_eq!(model::for_spec(&spec).unwrap().name(), e.name);
    }
}

#[test]
fn gradients_and_hessians_match_finite_differences() {
    for e in FAMILIES {
        let (_, family, truth, d) = setup(e, 400, 11);
        let mut rng = Rng::new(5);
        // A point near, not at, the truth (the gradient is then far from zero).
        let beta: Vec<f64> = truth
            .iter()
            .map(|b| b + 0.05 * rng.normal() * b.abs().max(0.2))
            .collect();
        let free: Vec<usize> = (0..beta.len()).collect();
        let ev = model::hessian::with_hessian(&*family, &d, &beta, &free);
        let h = ev.hess.clone().unwrap();
        let k = beta.len();
        for a in 0..k {
            let step = 1e-5 * beta[a].abs().max(0.1);
            let (mut up, mut dn) = (beta.clone(), beta.clone());
            up[a] += step;
            dn[a] -= step;
            let eu = family.evaluate(&d, &up, true, false);
            let ed = family.evaluate(&d, &dn, true, false);
            let fd = (eu.ll - ed.ll) / (2.0 * step);
            let tol = 1e-6 * ev.grad[a].abs().max(1.0);
            assert!(
                (fd - ev.grad[a]).abs() < tol,
                "{}: gradient {a}: analytic {} vs numeric {fd}",
                e.name,
                ev.grad[a]
            );
            for b in 0..k {
                let fdh = (eu.grad[b] - ed.grad[b]) / (2.0 * step);
                let scale = h[a * k + b]
                    .abs()
                    .max((h[a * k + a] * h[b * k + b]).abs().sqrt())
                    .max(1.0);
                assert!(
                    (fdh - h[a * k + b]).abs() < 1e-4 * scale,
                    "{}: Hessian ({a},{b}): {} vs numeric {fdh}",
                    e.name,
                    h[a * k + b]
                );
            }
        }
    }
}

#[test]
fn probabilities_sum_to_one_and_scores_sum_to_the_gradient() {
    for e in FAMILIES {
        let (_, family, beta, d) = setup(e, 300, 12);
        let j = d.alternatives();
        let p = model::enumerate::probabilities(&*family, &d, &beta);
        for i in 0..d.situations() {
            let row = &p[i * j..(i + 1) * j];
            let sum: f64 = row.iter().sum();
            assert!(
                (sum - 1.0).abs() < 1e-12,
                "{}: situation {i} sums to {sum}",
                e.name
            );
            for (a, pa) in row.iter().enumerate() {
                assert!((0.0..=1.0).contains(pa), "{}: P {pa}", e.name);
                if !d.available(i, a) {
                    assert_eq!(*pa, 0.0, "{}: unavailable alternative has P {pa}", e.name);
                }
            }
        }
        let g = family.evaluate(&d, &beta, true, false).grad;
        let mut total = vec![0.0; beta.len()];
        family.for_each_score(&d, &beta, &mut |_, s| {
            total.iter_mut().zip(s).for_each(|(t, x)| *t += x)
        });
        for (a, (t, g)) in total.iter().zip(&g).enumerate() {
            assert!(
                (t - g).abs() <= 1e-9 * g.abs().max(1.0),
                "{}: score sum {a}: {t} vs gradient {g}",
                e.name
            );
        }
    }
}

#[test]
fn probability_derivatives_match_finite_differences() {
    for e in FAMILIES {
        let (_, family, beta, d) = setup(e, 50, 13);
        let j = d.alternatives();
        let (mut v, mut p, mut dp) = (vec![0.0; j], vec![0.0; j], vec![0.0; j * j]);
        let (mut pu, mut pd) = (vec![0.0; j], vec![0.0; j]);
        for i in 0..d.situations() {
            d.utilities(&beta, i, &mut v);
            family.probabilities(&beta, &v, &mut p);
            family.dprob(&beta, &v, &p, &mut dp);
            for k in 0..j {
                if !v[k].is_finite() {
                    continue;
                }
                let h = 1e-6;
                let (mut vu, mut vd) = (v.clone(), v.clone());
                vu[k] += h;
                vd[k] -= h;
                family.probabilities(&beta, &vu, &mut pu);
                family.probabilities(&beta, &vd, &mut pd);
                for a in 0..j {
                    let fd = (pu[a] - pd[a]) / (2.0 * h);
                    assert!(
                        (fd - dp[a * j + k]).abs() < 1e-7,
                        "{}: dP{a}/dV{k} at situation {i}: {} vs numeric {fd}",
                        e.name,
                        dp[a * j + k]
                    );
                }
            }
        }
    }
}

#[test]
fn every_family_recovers_its_generating_parameters() {
    for e in FAMILIES {
        let (spec, _, truth, d) = setup(e, 6000, 14);
        let quiet = |_s: Step| {};
        let fit = estimate::fit(&spec, d.obs.clone(), &quiet).unwrap();
        assert!(
            fit.stats.converged,
            "{}: did not converge: {:?} {:?}",
            e.name,
            fit.stats,
            fit.parameters
                .iter()
                .map(|p| (&p.name, p.estimate, p.std_error))
                .collect::<Vec<_>>()
        );
        for (k, row) in fit.parameters.iter().enumerate() {
            let z = (row.estimate - truth[k]) / row.std_error;
            assert!(
                z.abs() < 3.5,
                "{}: {} = {} (s.e. {}), truth {}",
                e.name,
                row.name,
                row.estimate,
                row.std_error,
                truth[k]
            );
        }
    }
}

#[test]
fn the_differenced_hessian_matches_the_analytic_one_of_logit() {
    // Central differences of the analytic gradient (model::hessian) against the
    // logit's analytic Hessian: 1e-6 relative to the largest entry.
    let e = FAMILIES.iter().find(|e| e.name == "logit").unwrap();
    let (_, family, beta, d) = setup(e, 2000, 15);
    let free: Vec<usize> = (0..beta.len()).collect();
    let analytic = family.evaluate(&d, &beta, true, true).hess.unwrap();
    let differenced = model::hessian::differenced(&*family, &d, &beta, &free);
    let scale = analytic.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    for (a, b) in analytic.iter().zip(&differenced) {
        assert!(
            (a - b).abs() <= 1e-6 * scale,
            "analytic {a} vs differenced {b} (largest entry {scale})"
        );
    }
}

#[test]
fn what_if_shortcuts_equal_the_full_computation() {
    // A family may compute what-if probabilities from the base ones
    // (`probabilities_after`); they must equal the probabilities computed afresh.
    for e in FAMILIES {
        let (_, family, beta, d) = setup(e, 200, 16);
        let j = d.alternatives();
        let mut rng = Rng::new(8);
        let (mut v0, mut p0, mut p1, mut want) =
            (vec![0.0; j], vec![0.0; j], vec![0.0; j], vec![0.0; j]);
        for i in 0..d.situations() {
            d.utilities(&beta, i, &mut v0);
            family.probabilities(&beta, &v0, &mut p0);
            let mut v1 = v0.clone();
            // Change one alternative, sometimes two, sometimes withdraw one.
            let a = rng.below(j);
            if v1[a].is_finite() {
                v1[a] += rng.normal();
            }
            if i % 3 == 0 {
                let b = rng.below(j);
                if v1[b].is_finite() {
                    v1[b] -= 0.5 * rng.uniform();
                }
            }
            if i % 5 == 0 && j > 2 {
                v1[j - 1] = f64::NEG_INFINITY;
            }
            if v1.iter().all(|x| !x.is_finite()) {
                continue;
            }
            family.probabilities_after(&beta, &v0, &p0, &v1, &mut p1);
            family.probabilities(&beta, &v1, &mut want);
            for (x, y) in p1.iter().zip(&want) {
                assert!(
                    (x - y).abs() < 1e-12,
                    "{}: situation {i}: {p1:?} vs {want:?}",
                    e.name
                );
            }
        }
    }
}
