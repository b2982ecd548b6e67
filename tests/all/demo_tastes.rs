//! Correlated tastes in the shipped demo and the benchmark. The express
//! survey demo: the shipped data are what `sharecast demo-data` writes,
//! `specs/express_correlated.toml` recovers the generating correlation and
//! `compare` rejects independence, and `specs/express_willingness.toml` fits
//! in willingness-to-pay space; the generating values are the demo's own
//! (`src/demo/express.rs`, `sharecast::demo::EXPRESS_TRUTH`, listed in
//! demo-data/README.md). `sharecast bench --model mixed --correlated` fits
//! both models and reports each search stage.

use serde_json::Value;
use sharecast::demo::EXPRESS_TRUTH;
use sharecast::rng::Rng;

use crate::common::*;

fn truth(name: &str) -> f64 {
    EXPRESS_TRUTH.iter().find(|t| t.0 == name).unwrap().1
}

#[test]
fn the_shipped_demo_data_are_what_the_generator_writes() {
    // demo-data/README.md: the sets are written by `sharecast demo-data`; a
    // change of the generator must come with the regenerated files.
    let dir = scratch("demo-data-again");
    let (code, _, err) = run(&["demo-data", &dir.display().to_string()]);
    assert_eq!(code, 0, "{err}");
    for f in [
        "commute.csv",
        "grocery.parquet",
        "ratings.csv",
        "express_survey.csv",
        "velmora_zones.csv",
        "velmora_skims.parquet",
        "velmora_trips.csv",
    ] {
        let shipped = std::fs::read(path(&format!("demo-data/{f}"))).unwrap();
        let written = std::fs::read(dir.join(f)).unwrap();
        assert!(
            shipped == written,
            "demo-data/{f} differs from the generator's"
        );
    }
}

#[test]
fn the_correlated_demo_recovers_the_generating_correlation() {
    let (spec, fit) = fit_file("specs/express_correlated.toml");
    assert!(fit.stats.converged);
    let c = sharecast::analysis::correlation::correlations(&fit).unwrap();
    assert_eq!(c.coefficients, ["time", "cost"], "{}", spec.path.display());
    // src/demo/express.rs (the demo's own generating values): the time
    // coefficient and the log of minus the cost coefficient have
    // correlation `time_cost_correlation`, standard deviations `time_spread`
    // and `cost_spread`. Each within 3.5 standard errors (delta method,
    // errors clustered by respondent).
    let within = |what: &str, got: f64, se: f64, want: f64| {
        assert!(se > 0.0 && se.is_finite(), "{what}: s.e. {se}");
        assert!(
            (got - want).abs() <= 3.5 * se,
            "{what}: {got} ± {se}, generated with {want}"
        );
    };
    let r = c.correlations[0][1];
    within(
        "correlation of time and log(-cost)",
        r.value,
        r.std_error,
        truth("time_cost_correlation"),
    );
    // The correlation is told apart from 0 (the demo's point): more than
    // 3.5 standard errors from it.
    assert!(r.value.abs() > 3.5 * r.std_error, "{r:?}");
    let sd = &c.std_devs;
    within(
        "s.d. of time",
        sd[0].value,
        sd[0].std_error,
        truth("time_spread"),
    );
    within(
        "s.d. of log(-cost)",
        sd[1].value,
        sd[1].std_error,
        truth("cost_spread"),
    );
}

#[test]
fn compare_rejects_independent_tastes_on_the_demo() {
    let (code, out, err) = run(&[
        "compare",
        "specs/express_survey.toml",
        "specs/express_correlated.toml",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let doc: Value = serde_json::from_str(&out).unwrap();
    let nested = doc["comparison"]["nested"].as_array().unwrap();
    assert_eq!(nested.len(), 1, "{nested:?}");
    let n = &nested[0];
    // The independent model (M1) is the correlated one (M2) with its one
    // Cholesky entry below the diagonal at 0.
    assert_eq!(
        (n["restricted"].as_u64(), n["general"].as_u64()),
        (Some(0), Some(1))
    );
    let test = &n["test"];
    assert_eq!(test["df"].as_u64(), Some(1));
    // Rejected at 1%: above 6.635, the chi-square distribution's 99% point
    // with 1 degree of freedom (standard tables, e.g. Abramowitz and Stegun,
    // Handbook of Mathematical Functions, table 26.8).
    let stat = test["statistic"].as_f64().unwrap();
    assert!(stat > 6.635, "LR statistic {stat}");
    assert!(test["p_value"].as_f64().unwrap() < 0.01, "{test}");
}

/// The true median value of time (currency units per hour) of the demo's
/// respondents, 60 x b_time / b_cost, simulated from the generating values
/// of src/demo/express.rs (200,001 respondents' tastes; the median's own
/// simulation error is about 0.03).
fn true_median_value_of_time() -> f64 {
    let mut rng = Rng::new(11);
    let rho = truth("time_cost_correlation");
    let mut v: Vec<f64> = (0..200_001)
        .map(|_| {
            let (z_cost, z_time) = (rng.normal(), rng.normal());
            let z_cost = rho * z_time + (1.0 - rho * rho).sqrt() * z_cost;
            let b_cost = -(truth("cost") + truth("cost_spread") * z_cost).exp();
            let b_time = truth("time") + truth("time_spread") * z_time;
            60.0 * b_time / b_cost
        })
        .collect();
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

#[test]
fn the_willingness_demo_fits_and_values_time_near_the_truth() {
    let (spec, fit) = fit_file("specs/express_willingness.toml");
    assert!(fit.stats.converged);
    assert!(
        fit.family.willingness().is_some(),
        "{}",
        spec.path.display()
    );
    let row = |n: &str| fit.parameters.iter().find(|r| r.name == n).unwrap();
    // In willingness space `time` is the value of a minute in currency
    // units (negative: time is a cost) and its distribution's median the
    // location. The data were simulated in preference space, where the
    // value of time is a ratio of two random coefficients, so the normal
    // here is an approximation; its median is checked against the true
    // median (src/demo/express.rs's values, simulated) within 3.5 standard
    // errors.
    let time = row("time");
    let (got, se) = (-60.0 * time.estimate, 60.0 * time.std_error);
    let want = true_median_value_of_time();
    assert!(
        (got - want).abs() <= 3.5 * se,
        "median value of time {got} ± {se}, true {want}"
    );
}

#[test]
fn the_correlated_bench_fits_both_models_and_names_their_stages() {
    let (code, out, err) = run(&[
        "bench",
        "--model",
        "mixed",
        "--correlated",
        "--decision-makers",
        "200",
        "--tasks",
        "5",
        "--draws",
        "50",
        "--repeats",
        "1",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    let (ind, cor) = (&v["independent"], &v["correlated"]);
    assert_eq!(ind["parameters"].as_u64(), Some(11));
    assert_eq!(cor["parameters"].as_u64(), Some(17), "6 Cholesky entries");
    assert_eq!(ind["converged"], true);
    assert_eq!(cor["converged"], true);
    // Fact of maximum likelihood: the correlated model contains the
    // independent one (every Cholesky entry at 0), so its maximum is at
    // least as high (up to the searches' tolerance).
    let ll = |m: &Value| m["log_likelihood"].as_f64().unwrap();
    assert!(ll(cor) >= ll(ind) - 1e-6, "{} < {}", ll(cor), ll(ind));
    let names = |m: &Value| -> Vec<String> {
        m["stages"]
            .as_array()
            .unwrap()
            .iter()
            .map(|s| s["name"].as_str().unwrap().to_string())
            .collect()
    };
    assert_eq!(names(ind), ["logit", "independent mixed"]);
    assert_eq!(
        names(cor),
        [
            "logit",
            "independent mixed, approached (Cholesky entries held at 0)",
            "correlated mixed"
        ]
    );
    // The logit stage searches by Newton (analytic Hessian); the mixed
    // stages start with quasi-Newton passes.
    let stage = |m: &Value, k: usize, f: &str| m["stages"][k][f].as_u64().unwrap();
    assert!(stage(cor, 0, "newton_iterations") > 0);
    assert_eq!(stage(cor, 0, "quasi_newton_passes"), 0);
    assert!(stage(cor, 1, "quasi_newton_passes") > 0 && stage(cor, 2, "quasi_newton_passes") > 0);
    // The independent model is only approached, as a start: no Newton steps.
    assert_eq!(stage(cor, 1, "newton_iterations"), 0);
    // Only the mixed panel has a correlated variant.
    let (code, _, err) = run(&["bench", "--correlated", "--situations", "100"]);
    assert_ne!(code, 0);
    assert!(
        err.contains("--correlated applies to --model mixed"),
        "{err}"
    );
}
