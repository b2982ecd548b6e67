//! Estimates against published values and a general-purpose reference library.

use crate::common::*;

fn estimate(fit: &sharecast::estimate::Fit, name: &str) -> (f64, f64) {
    let k = fit
        .names
        .iter()
        .position(|n| n == name)
        .unwrap_or_else(|| panic!("no parameter {name}"));
    (fit.parameters[k].estimate, fit.parameters[k].std_error)
}

#[test]
fn greene_travel_mode_conditional_logit() {
    // Greene, Econometric Analysis (7th ed.), conditional logit on the travel-mode data of
    // table F18-2 (as shipped by statsmodels' `modechoice`): published estimates (s.e.).
    let (_, fit) = fit_file("tests/specs/modechoice.toml");
    assert!(fit.stats.converged);
    let published = [
        ("asc_air", 5.2074, 0.7791),
        ("asc_train", 3.8690, 0.4431),
        ("asc_bus", 3.1632, 0.4503),
        ("gc", -0.015502, 0.004408),
        ("ttme", -0.096125, 0.010440),
        ("hinc_air", 0.013287, 0.010262),
    ];
    for (name, b, se) in published {
        let (gb, gse) = estimate(&fit, name);
        // Published figures carry 5 significant digits: 1e-4 relative on the estimate.
        assert_close(name, gb, b, 1e-4);
        assert_close(&format!("{name} s.e."), gse, se, 2e-3);
    }
    assert_close("log-likelihood", fit.stats.log_likelihood, -199.1284, 1e-6);
    // Null model with four alternatives always available: -210 ln 4 (arithmetic).
    assert_close(
        "null log-likelihood",
        fit.stats.null_log_likelihood,
        -210.0 * 4f64.ln(),
        1e-12,
    );
}

#[test]
fn statsmodels_conditional_logit_to_full_precision() {
    // statsmodels ConditionalLogit on the same data (tests/reference/make_reference.py);
    // standard errors from its exact-Hessian variant `bse_analytic_hessian`.
    let r = reference();
    let m = &r["modechoice_condlogit"];
    let (_, fit) = fit_file("tests/specs/modechoice.toml");
    let ours = ["asc_air", "asc_train", "asc_bus", "gc", "ttme", "hinc_air"];
    for (k, name) in ours.iter().enumerate() {
        let (b, se) = estimate(&fit, name);
        assert_close(name, b, m["params"][k].as_f64().unwrap(), 1e-7);
        assert_close(
            name,
            se,
            m["bse_analytic_hessian"][k].as_f64().unwrap(),
            1e-6,
        );
    }
    assert_close(
        "llf",
        fit.stats.log_likelihood,
        m["llf"].as_f64().unwrap(),
        1e-10,
    );
}

fn binary_check(spec: &str, key: &str) {
    // statsmodels Logit / Probit on its `spector` dataset (Spector and Mazzeo 1980).
    let r = reference();
    let m = &r[key];
    let (_, fit) = fit_file(spec);
    assert!(fit.stats.converged);
    let map = [
        ("const", "asc_gain"),
        ("GPA", "GPA_gain"),
        ("TUCE", "TUCE_gain"),
        ("PSI", "PSI_gain"),
    ];
    for (k, (theirs, ours)) in map.iter().enumerate() {
        assert_eq!(m["param_names"][k].as_str().unwrap(), *theirs);
        let (b, se) = estimate(&fit, ours);
        assert_close(ours, b, m["params"][k].as_f64().unwrap(), 1e-7);
        assert_close(ours, se, m["bse"][k].as_f64().unwrap(), 1e-6);
    }
    assert_close(
        "llf",
        fit.stats.log_likelihood,
        m["llf"].as_f64().unwrap(),
        1e-10,
    );
    assert_close(
        "llnull",
        fit.stats.constants_log_likelihood,
        m["llnull"].as_f64().unwrap(),
        1e-8,
    );
}

#[test]
fn statsmodels_logit_spector() {
    binary_check("tests/specs/spector_logit.toml", "spector_logit");
}

#[test]
fn statsmodels_probit_spector() {
    binary_check("tests/specs/spector_probit.toml", "spector_probit");
}

#[test]
fn statsmodels_mnlogit_anes96() {
    // statsmodels MNLogit on its `anes96` dataset, PID 0..6 with 0 as base.
    let r = reference();
    let m = &r["anes96_mnlogit"];
    let (_, fit) = fit_file("tests/specs/anes96.toml");
    assert!(fit.stats.converged);
    for row in m["params"].as_array().unwrap() {
        let outcome = row["outcome"].as_i64().unwrap();
        let var = row["variable"].as_str().unwrap();
        let ours = if var == "const" {
            format!("asc_pid{outcome}")
        } else {
            format!("{var}_pid{outcome}")
        };
        let (b, se) = estimate(&fit, &ours);
        assert_close(&ours, b, row["estimate"].as_f64().unwrap(), 1e-6);
        assert_close(&ours, se, row["std_error"].as_f64().unwrap(), 1e-5);
    }
    assert_close(
        "llf",
        fit.stats.log_likelihood,
        m["llf"].as_f64().unwrap(),
        1e-10,
    );
    assert_close(
        "llnull",
        fit.stats.constants_log_likelihood,
        m["llnull"].as_f64().unwrap(),
        1e-8,
    );
}
