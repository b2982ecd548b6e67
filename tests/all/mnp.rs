//! The multinomial probit against outside references: three-alternative
//! probabilities against scipy's bivariate normal distribution function and a
//! maximum-likelihood fit on those exact probabilities
//! (tests/reference/mnp_reference.py, fixture tests/fixtures/mnp_reference.json
//! on tests/fixtures/mnp3.csv); the fast GHK kernel against the plain
//! forward-mode simulator (itself checked against exact probabilities in
//! `ghk.rs`); the binary case through the multinomial path against the exact
//! binary probit; recovery on simulated data; and its spec errors.

use std::path::Path;
use std::sync::Arc;

use sharecast::design::Design;
use sharecast::model::draws::{Sequence, Simulation};
use sharecast::model::mnp::{kernel, Mnp};
use sharecast::model::{self, ghk, Family};
use sharecast::rng::Rng;
use sharecast::spec::Spec;

use crate::common::*;

fn fixture() -> serde_json::Value {
    let text = std::fs::read_to_string(path("tests/fixtures/mnp_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn floats(v: &serde_json::Value) -> Vec<f64> {
    serde_json::from_value(v.clone()).unwrap()
}

/// The reference model's spec over the fixture data, with its own lines.
fn spec_text(structure: &str, draws: usize) -> String {
    format!(
        r#"[data]
file = "{}"
layout = "wide"
choice = "choice"
[model]
family = "probit"
base = "walk"
[alternatives.walk]
[alternatives.tram]
[alternatives.cab]
[[attribute]]
name = "time"
columns = {{ walk = "time_walk", tram = "time_tram", cab = "time_cab" }}
[[attribute]]
name = "cost"
columns = {{ tram = "cost_tram", cab = "cost_cab" }}
[errors]
structure = "{structure}"
[simulation]
draws = {draws}
"#,
        path("tests/fixtures/mnp3.csv").display()
    )
}

fn parse(text: &str) -> Spec {
    model::parse_spec(text, Path::new("/nowhere/mnp.toml")).unwrap()
}

fn fit_text(text: &str) -> (Spec, sharecast::estimate::Fit) {
    let spec = parse(text);
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    (spec, fit)
}

#[test]
fn three_alternative_probabilities_match_scipy() {
    // Reference: scipy.stats.multivariate_normal.cdf (exact in two dimensions).
    let r = fixture();
    let spec = parse(&spec_text("full", 20_000));
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let d = Design::build(&spec, Arc::new(ds.obs.clone()));
    let fine = model::for_spec(&spec).unwrap();
    let coarse = model::for_spec(&parse(&spec_text("full", 100))).unwrap();
    let (mut worst, mut err_fine, mut err_coarse) = (0.0f64, 0.0, 0.0);
    for point in r["points"].as_array().unwrap() {
        let beta = floats(&point["params"]);
        for (i, row) in point["probabilities"]
            .as_array()
            .unwrap()
            .iter()
            .enumerate()
        {
            let want = floats(row);
            let mut v = vec![0.0; 3];
            d.utilities(&beta, i, &mut v);
            let (mut p, mut q) = (vec![0.0; 3], vec![0.0; 3]);
            fine.probabilities(&beta, &v, &mut p);
            coarse.probabilities(&beta, &v, &mut q);
            for j in 0..3 {
                worst = worst.max((p[j] - want[j]).abs());
                err_fine += (p[j] - want[j]).abs();
                err_coarse += (q[j] - want[j]).abs();
            }
        }
    }
    assert!(worst < 1e-3, "20,000 draws: worst error {worst}");
    // The simulator's error shrinks as draws grow.
    assert!(
        err_fine < 0.5 * err_coarse,
        "mean error {err_fine} vs {err_coarse} with 100 draws"
    );
}

#[test]
fn fit_agrees_with_exact_maximum_likelihood() {
    // Reference: maximum likelihood on exact bivariate normal probabilities
    // (scipy), the same data and parameterisation.
    let r = fixture();
    let names: Vec<String> = serde_json::from_value(r["parameter_names"].clone()).unwrap();
    let want = floats(&r["full"]["estimates"]);
    let se = floats(&r["full"]["standard_errors"]);
    let (spec, fit) = fit_text(&spec_text("full", 2000));
    assert!(fit.stats.converged);
    for (k, name) in names.iter().enumerate() {
        let p = spec.parameter_index(name).unwrap();
        let z = (fit.beta[p] - want[k]).abs() / se[k];
        assert!(
            z < 0.1,
            "{name}: {} vs {} ({z:.3} s.e.)",
            fit.beta[p],
            want[k]
        );
        let rel = (fit.parameters[p].std_error / se[k] - 1.0).abs();
        assert!(
            rel < 0.05,
            "{name}: s.e. {} vs {}",
            fit.parameters[p].std_error,
            se[k]
        );
    }
    let ll = r["full"]["log_likelihood"].as_f64().unwrap();
    assert!(
        (fit.stats.log_likelihood - ll).abs() < 0.5,
        "log-likelihood {} vs {ll}",
        fit.stats.log_likelihood
    );
}

#[test]
fn independent_structure_agrees_with_exact_maximum_likelihood() {
    let r = fixture();
    let names: Vec<String> =
        serde_json::from_value(r["independent"]["parameter_names"].clone()).unwrap();
    let want = floats(&r["independent"]["estimates"]);
    let se = floats(&r["independent"]["standard_errors"]);
    let (spec, fit) = fit_text(&spec_text("independent", 2000));
    for (k, name) in names.iter().enumerate() {
        let p = spec.parameter_index(name).unwrap();
        let z = (fit.beta[p] - want[k]).abs() / se[k];
        assert!(
            z < 0.1,
            "{name}: {} vs {} ({z:.3} s.e.)",
            fit.beta[p],
            want[k]
        );
    }
}

/// Random lower-triangular C with a positive diagonal.
fn random_factor(rng: &mut Rng, m: usize) -> Vec<f64> {
    let mut c = vec![0.0; m * m];
    for a in 0..m {
        for b in 0..a {
            c[a * m + b] = rng.normal() * 0.6;
        }
        c[a * m + a] = 0.5 + rng.uniform();
    }
    c
}

#[test]
fn fast_kernel_equals_the_forward_mode_simulator() {
    // The same simulator written two ways: values and gradients agree.
    let mut rng = Rng::new(11);
    let draws = 300;
    for m in 1..=5 {
        let dims = m.max(2) - 1;
        let sim = Simulation {
            draws,
            sequence: Sequence::Halton,
            seed: 5,
        };
        let u = sim.uniforms(1, dims); // [dim][draw]
        let mut by_draw = vec![0.0; draws * dims];
        for d in 0..dims {
            for r in 0..draws {
                by_draw[r * dims + d] = u[d * draws + r];
            }
        }
        for _ in 0..5 {
            let c = random_factor(&mut rng, m);
            let b: Vec<f64> = (0..m).map(|_| rng.normal()).collect();
            let mut gw = ghk::Work::default();
            let mut g = vec![0.0; ghk::slots(m)];
            let n = if m == 1 { 1 } else { draws };
            let p = ghk::probability(&c, m, &b, &by_draw, n, Some(&mut g), &mut gw);
            let mut kw = kernel::Work::default();
            let lp = kernel::log_probability(&c, m, &b, &u, draws, draws, true, &mut kw);
            assert!((lp - p.ln()).abs() < 1e-12, "m {m}: {lp} vs {}", p.ln());
            for k in 0..m {
                assert!((kw.gb[k] - g[k] / p).abs() < 1e-9, "m {m} db{k}");
                for j in 0..=k {
                    let want = g[m + k * m + j] / p;
                    assert!(
                        (kw.gc[k * m + j] - want).abs() < 1e-9,
                        "m {m} dC{k}{j}: {} vs {want}",
                        kw.gc[k * m + j]
                    );
                }
            }
        }
    }
}

/// Two alternatives: a design of n situations with one attribute and a
/// characteristic, choices from a binary probit.
fn binary_design(n: usize) -> (Spec, Design) {
    let text = "[data]\nfile = \"never.csv\"\nlayout = \"wide\"\nchoice = \"c\"\n[model]\nfamily = \"probit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[[attribute]]\nname = \"x\"\ncolumns = { a = \"xa\", b = \"xb\" }\n[[characteristic]]\nname = \"z\"\ncolumn = \"z\"\n";
    let spec = parse(text);
    let mut rng = Rng::new(4);
    let mut xs = Vec::new();
    let mut zs = Vec::new();
    let mut chosen = Vec::new();
    for _ in 0..n {
        let (xa, xb, z) = (rng.normal(), rng.normal(), rng.normal());
        let v = 0.3 - 0.8 * (xb - xa) + 0.5 * z + rng.normal();
        xs.extend([xa, xb]);
        zs.push(z);
        chosen.push(u32::from(v > 0.0));
    }
    let obs = sharecast::data::Observations {
        offset: None,
        tables: None,
        situations: n,
        alternatives: 2,
        chosen,
        available: vec![true; 2 * n],
        weight: vec![1.0; n],
        weight_total: n as f64,
        group: None,
        groups: n,
        attributes: vec![xs],
        characteristics: vec![zs],
        first_row: (0..n).collect(),
    };
    let d = Design::build(&spec, Arc::new(obs));
    (spec, d)
}

#[test]
fn binary_case_through_the_simulator_equals_the_binary_probit() {
    // With two alternatives one utility difference remains, whose probability
    // the kernel computes exactly (no draws): the existing binary probit.
    let (spec, d) = binary_design(500);
    let binary = model::for_spec(&spec).unwrap();
    assert!(binary.abilities().binary_only);
    let multi = Mnp::independent(spec.base, 2, Simulation::default());
    for beta in [[0.2, -0.5, 0.3], [-1.0, 1.5, 0.0], [0.0, 0.0, 0.0]] {
        let a = binary.evaluate(&d, &beta, true, false);
        let b = multi.evaluate(&d, &beta, true, false);
        assert!(
            (a.ll - b.ll).abs() < 1e-8 * a.ll.abs(),
            "{} vs {}",
            a.ll,
            b.ll
        );
        for k in 0..3 {
            assert!((a.grad[k] - b.grad[k]).abs() < 1e-8 * a.grad[k].abs().max(1.0));
        }
    }
}

#[test]
fn spec_errors_name_the_key() {
    let two = "[data]\nfile = \"x.csv\"\nlayout = \"wide\"\nchoice = \"c\"\n[model]\nfamily = \"probit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[errors]\nstructure = \"full\"\n";
    let e = model::parse_spec(two, Path::new("/s.toml"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("[errors]") && e.contains("binary probit"), "{e}");
    let three = spec_text("full", 100);
    let logit = three.replace("family = \"probit\"", "family = \"logit\"");
    let e = model::parse_spec(&logit, Path::new("/s.toml"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("errors") && e.contains("probit"), "{e}");
    let bad = spec_text("diagonal", 100);
    let e = model::parse_spec(&bad, Path::new("/s.toml"))
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("[errors].structure") && e.contains("diagonal"),
        "{e}"
    );
    let key = three.replace("structure = \"full\"", "structure = \"full\"\nshape = 1");
    let e = model::parse_spec(&key, Path::new("/s.toml"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("[errors]") && e.contains("shape"), "{e}");
    let mut many = "[data]\nfile = \"x.csv\"\nlayout = \"wide\"\nchoice = \"c\"\n[model]\nfamily = \"probit\"\nbase = \"a0\"\n".to_string();
    for a in 0..13 {
        many.push_str(&format!("[alternatives.a{a}]\n"));
    }
    let e = model::parse_spec(&many, Path::new("/s.toml"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("at most 12") && e.contains("13"), "{e}");
}

#[test]
fn full_structure_parameters_are_named_by_alternatives() {
    let spec = parse(&spec_text("full", 100));
    let names: Vec<&str> = spec.parameters.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(
        names,
        [
            "asc_tram",
            "asc_cab",
            "time",
            "cost",
            "chol_cab_tram",
            "chol_cab_cab"
        ]
    );
    // They start at the independent structure: S = (I + 11')/2, L21 = 0.5,
    // L22 = sqrt(0.75) (a fact of the construction).
    assert!((spec.parameters[4].start - 0.5).abs() < 1e-15);
    assert!((spec.parameters[5].start - 0.75f64.sqrt()).abs() < 1e-15);
}

/// `n` situations of four alternatives (the last not always available) with
/// one attribute, choices drawn from normal errors with the given factor of
/// the differences' covariance: utilities and errors drawn directly, the
/// chosen alternative the largest (independent of the simulator).
fn simulated(n: usize, beta: &[f64], l: &[f64], seed: u64) -> (Spec, Design) {
    let text = "[data]\nfile = \"never.csv\"\nlayout = \"wide\"\nchoice = \"c\"\n[model]\nfamily = \"probit\"\nbase = \"a0\"\n[alternatives.a0]\n[alternatives.a1]\n[alternatives.a2]\n[alternatives.a3]\navailable = \"open\"\n[[attribute]]\nname = \"x\"\ncolumns = { a0 = \"x0\", a1 = \"x1\", a2 = \"x2\", a3 = \"x3\" }\n[errors]\nstructure = \"full\"\n[simulation]\ndraws = 300\n";
    let spec = parse(text);
    let mut rng = Rng::new(seed);
    let (mut xs, mut chosen, mut available) = (Vec::new(), Vec::new(), Vec::new());
    for _ in 0..n {
        let x: Vec<f64> = (0..4).map(|_| 2.0 * rng.uniform()).collect();
        let open = rng.uniform() < 0.8;
        let z: Vec<f64> = (0..3).map(|_| rng.normal()).collect();
        let mut u = vec![beta[3] * x[0]];
        for a in 0..3 {
            let e: f64 = (0..3).map(|k| l[a * 3 + k] * z[k]).sum();
            u.push(beta[a] + beta[3] * x[a + 1] + e);
        }
        if !open {
            u[3] = f64::NEG_INFINITY;
        }
        let best = (0..4).max_by(|&a, &b| u[a].total_cmp(&u[b])).unwrap();
        xs.extend(x);
        chosen.push(best as u32);
        available.extend([true, true, true, open]);
    }
    let obs = sharecast::data::Observations {
        offset: None,
        tables: None,
        situations: n,
        alternatives: 4,
        chosen,
        available,
        weight: vec![1.0; n],
        weight_total: n as f64,
        group: None,
        groups: n,
        attributes: vec![xs],
        characteristics: Vec::new(),
        first_row: (0..n).collect(),
    };
    let d = Design::build(&spec, Arc::new(obs));
    (spec, d)
}

#[test]
fn recovers_coefficients_and_covariance() {
    // Consistency of maximum simulated likelihood (Train ch. 10): estimates
    // within 3.5 standard errors of the generating values.
    let l = [1.0, 0.0, 0.0, 0.8, 0.7, 0.0, -0.3, 0.4, 0.9];
    let truth = [0.3, -0.2, 0.1, -0.9];
    let (spec, d) = simulated(4000, &truth, &l, 21);
    let quiet = |_s: sharecast::estimate::Step| {};
    let family = model::for_spec(&spec).unwrap();
    let fit = sharecast::estimate::fit_family(&spec, d.obs.clone(), family, &quiet).unwrap();
    assert!(fit.stats.converged);
    let mut want: Vec<(&str, f64)> = vec![
        ("asc_a1", truth[0]),
        ("asc_a2", truth[1]),
        ("asc_a3", truth[2]),
        ("x", truth[3]),
    ];
    want.extend([
        ("chol_a2_a1", 0.8),
        ("chol_a2_a2", 0.7),
        ("chol_a3_a1", -0.3),
        ("chol_a3_a2", 0.4),
        ("chol_a3_a3", 0.9),
    ]);
    for (name, value) in want {
        let p = spec.parameter_index(name).unwrap();
        let row = &fit.parameters[p];
        // The diagonal's sign is not identified: compare sizes there.
        let est = if name.ends_with("a2_a2") || name.ends_with("a3_a3") {
            row.estimate.abs()
        } else {
            row.estimate
        };
        let z = (est - value) / row.std_error;
        assert!(z.abs() < 3.5, "{name}: {est} vs {value} ({z:.2} s.e.)");
    }
}

#[test]
fn withdrawal_diverts_to_the_correlated_alternative() {
    // A fact of the model: with the errors of tram and cab strongly
    // correlated (the reference fit: correlation 0.85 of their differences
    // against walk), a withdrawn tram's riders go to cab more than under
    // independent errors at the same utilities.
    let r = fixture();
    let beta = floats(&r["full"]["estimates"]);
    let spec = parse(&spec_text("full", 500));
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let d = Design::build(&spec, Arc::new(ds.obs.clone()));
    let full = model::for_spec(&spec).unwrap();
    let indep = Mnp::independent(spec.base, 3, Simulation::default());
    let to_cab = |f: &dyn Family| {
        let (mut lost, mut gained) = (0.0, 0.0);
        let (mut v, mut p, mut q) = (vec![0.0; 3], vec![0.0; 3], vec![0.0; 3]);
        for i in 0..d.situations() {
            d.utilities(&beta, i, &mut v);
            f.probabilities(&beta, &v, &mut p);
            v[1] = f64::NEG_INFINITY;
            f.probabilities(&beta, &v, &mut q);
            lost += p[1];
            gained += q[2] - p[2];
        }
        gained / lost
    };
    let (a, b) = (to_cab(&*full), to_cab(&indep));
    assert!(
        a > b + 0.05,
        "share of tram's demand going to cab: full {a:.3}, independent {b:.3}"
    );
}

#[test]
fn demo_probit_reports_its_error_covariance_and_forecasts() {
    // The shipped demo (invented Tamsey Vale survey): the results document
    // carries the implied covariance and correlation with errors, the family
    // test against independent errors, and scenarios run; a new alternative
    // is refused with the reason under the full structure.
    let (code, out, err) = run(&["fit", "specs/express_probit.toml", "--json"]);
    assert_eq!(code, 0, "{err}");
    let doc: serde_json::Value = serde_json::from_str(&out).unwrap();
    let derived = doc["derived"].as_array().unwrap();
    let corr = derived
        .iter()
        .find(|r| r["name"] == "corr(rail, coach)")
        .unwrap();
    let (v, se) = (
        corr["value"].as_f64().unwrap(),
        corr["std_error"].as_f64().unwrap(),
    );
    assert!(v > -1.0 && v < 1.0 && se > 0.0 && se.is_finite(), "{corr}");
    let var = derived.iter().find(|r| r["name"] == "var(coach)").unwrap();
    assert!(
        (var["value"].as_f64().unwrap() - 1.0).abs() < 1e-12,
        "the scale: {var}"
    );
    assert!(doc["family_test"]["name"]
        .as_str()
        .unwrap()
        .contains("independent errors"));
    let (code, out, err) = run(&[
        "simulate",
        "specs/express_probit.toml",
        "--scenario",
        "specs/scenarios/express_fare_cut.toml",
        "--draws",
        "20",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("coach"), "{out}");
    let (code, _, err) = run(&[
        "simulate",
        "specs/express_probit.toml",
        "--scenario",
        "specs/scenarios/express_second_coach.toml",
    ]);
    assert_ne!(code, 0);
    assert!(
        err.contains("stopping_coach") && err.contains("full"),
        "{err}"
    );
}
