//! Post-estimation figures against finite differences, a reference library and
//! the identities of the logit model.

use std::sync::Arc;

use sharecast::analysis::{self, simulate, Options, TermMap};
use sharecast::design::Design;

use crate::common::*;

/// d ln Q_j / d ln x by central differences of re-simulated aggregate shares.
fn numeric_attr_elasticity(
    fit: &sharecast::estimate::Fit,
    a: usize,
    k: usize,
    jj: usize,
    b: f64,
) -> f64 {
    let d = &fit.design;
    let j = d.alternatives();
    let eps = 1e-5;
    let shift = |s: f64| {
        simulate::shares_with(&*fit.family, d, &fit.beta, None, move |i, _, v| {
            if v[k].is_finite() {
                v[k] += b * d.obs.attributes[a][i * j + k] * s;
            }
        })[jj]
    };
    (shift(eps).ln() - shift(-eps).ln()) / (2.0 * eps)
}

fn check_against_finite_differences(rel: &str) {
    let (spec, fit) = fit_file(rel);
    let (el, _, _) = analysis::sensitivity_rows(&spec, &fit, 0.1);
    let map = TermMap::new(&spec, &fit.design);
    let names = spec.alternative_names();
    let mut checked = 0;
    for e in el.iter().filter(|e| e.changed.is_some()) {
        let a = spec
            .attributes
            .iter()
            .position(|x| x.name == e.variable)
            .unwrap();
        let k = names
            .iter()
            .position(|n| Some(n) == e.changed.as_ref())
            .unwrap();
        let jj = names.iter().position(|n| n == &e.affected).unwrap();
        let b = fit.beta[map.attribute[a][k].unwrap()];
        let fd = numeric_attr_elasticity(&fit, a, k, jj, b);
        assert!(
            (fd - e.value).abs() <= 1e-5 * e.value.abs().max(1e-3),
            "{rel} {} {k}->{jj}: analytic {} numeric {fd}",
            e.variable,
            e.value
        );
        checked += 1;
    }
    for e in el.iter().filter(|e| e.changed.is_none()) {
        let c = spec
            .characteristics
            .iter()
            .position(|x| x.name == e.variable)
            .unwrap();
        let jj = names.iter().position(|n| n == &e.affected).unwrap();
        let d = &fit.design;
        let eps = 1e-5;
        let shift = |s: f64| {
            simulate::shares_with(&*fit.family, d, &fit.beta, None, |i, _, v| {
                for (vl, param) in v.iter_mut().zip(&map.characteristic[c]) {
                    if let (Some(p), true) = (param, vl.is_finite()) {
                        *vl += fit.beta[*p] * d.obs.characteristics[c][i] * s;
                    }
                }
            })[jj]
        };
        let fd = (shift(eps).ln() - shift(-eps).ln()) / (2.0 * eps);
        assert!(
            (fd - e.value).abs() <= 1e-5 * e.value.abs().max(1e-3),
            "{rel} {}: analytic {} numeric {fd}",
            e.variable,
            e.value
        );
        checked += 1;
    }
    assert!(checked > 0);
}

#[test]
fn aggregate_elasticities_match_finite_differences_logit() {
    // Fact of the method: the aggregate elasticity is d ln Q_j / d ln x (Ben-Akiva and Lerman, ch. 5).
    check_against_finite_differences("specs/commute.toml");
}

#[test]
fn aggregate_elasticities_match_finite_differences_probit() {
    check_against_finite_differences("tests/specs/probit_weighted.toml");
    check_against_finite_differences("tests/specs/spector_probit.toml");
}

#[test]
fn logit_identities_hold_for_one_situation() {
    // Facts of the logit model (Train, Discrete Choice Methods with Simulation, ch. 3):
    // cross elasticities of a shared attribute are equal across affected alternatives,
    // and removal diverts demand in proportion to the remaining probabilities.
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let mut keep = vec![false; ds.obs.situations];
    keep[0] = true; // trip 1: car unavailable, walk unavailable
    keep[1] = false;
    for target in [0usize, 4, 10] {
        let mut keep = keep.clone();
        keep.iter_mut().for_each(|k| *k = false);
        keep[target] = true;
        let one = Arc::new(ds.obs.subset(&keep));
        let d = Design::build(&spec, one);
        let map = TermMap::new(&spec, &d);
        let sens = analysis::sensitivity::sensitivities(&*fit.family, &d, &map, &fit.beta);
        let j = d.alternatives();
        let p = sharecast::model::enumerate::probabilities(&*fit.family, &d, &fit.beta);
        let time = spec
            .attributes
            .iter()
            .position(|a| a.name == "time")
            .unwrap();
        for k in 0..j {
            if p[k] == 0.0 {
                continue;
            }
            let cross: Vec<f64> = (0..j)
                .filter(|&jj| jj != k && p[jj] > 0.0)
                .map(|jj| sens.attr_elast[(time * j + k) * j + jj])
                .collect();
            for c in &cross {
                assert!(
                    (c - cross[0]).abs() < 1e-12 * cross[0].abs().max(1e-12),
                    "cross elasticities differ: {cross:?}"
                );
            }
            // removal diversion of k: P_j / (1 - P_k)
            let names = spec.alternative_names();
            let all: Vec<usize> = (0..names.len()).collect();
            let div =
                analysis::diversion::removal(&*fit.family, &d, &fit.beta, None, (&names, &all));
            for row in div.iter().filter(|r| r.removed == names[k]) {
                let to = names.iter().position(|n| n == &row.to).unwrap();
                let want = p[to] / (1.0 - p[k]);
                assert!(
                    (row.share - want).abs() < 1e-12,
                    "diversion {k}->{to}: {} vs {want}",
                    row.share
                );
            }
        }
    }
}

#[test]
fn predicted_shares_equal_observed_with_all_constants() {
    // Fact of the method: with a full set of constants, the logit's first-order
    // conditions make predicted and observed (weighted) shares coincide.
    let (_, fit) = fit_file("specs/commute.toml");
    for r in &fit.shares {
        assert!(
            (r.observed - r.predicted).abs() < 1e-8,
            "{}: {} vs {}",
            r.alternative,
            r.observed,
            r.predicted
        );
    }
    let (_, fit) = fit_file("specs/grocery.toml");
    for r in &fit.shares {
        assert!(
            (r.observed - r.predicted).abs() < 1e-8,
            "{}: {} vs {}",
            r.alternative,
            r.observed,
            r.predicted
        );
    }
}

#[test]
fn marginal_effects_match_statsmodels_anes96() {
    // statsmodels MNLogit(...).get_margeff(at="overall", method="dydx") on anes96
    // (tests/reference/make_reference.py).
    let r = reference();
    let (spec, ds) = load("tests/specs/anes96.toml");
    let fit = fit_spec(&spec, &ds);
    let (_, me, _) = analysis::sensitivity_rows(&spec, &fit, 0.1);
    let rows = r["anes96_mnlogit"]["margeff"]["rows"].as_array().unwrap();
    assert_eq!(rows.len(), 35);
    for row in rows {
        let alt = format!("pid{}", row["outcome"].as_i64().unwrap());
        let var = row["variable"].as_str().unwrap();
        let ours = me
            .iter()
            .find(|m| m.variable == var && m.alternative == alt && m.changed.is_none())
            .unwrap();
        assert_close(
            &format!("{var} {alt}"),
            ours.value,
            row["value"].as_f64().unwrap(),
            1e-6,
        );
        assert_close(
            &format!("{var} {alt} s.e."),
            ours.std_error,
            row["std_error"].as_f64().unwrap(),
            1e-4,
        );
    }
}

#[test]
fn marginal_effects_match_statsmodels_spector() {
    // statsmodels Logit / Probit get_margeff(at="overall", method="dydx") on spector.
    let r = reference();
    for (rel, key) in [
        ("tests/specs/spector_logit.toml", "spector_logit"),
        ("tests/specs/spector_probit.toml", "spector_probit"),
    ] {
        let (spec, ds) = load(rel);
        let fit = fit_spec(&spec, &ds);
        let (_, me, _) = analysis::sensitivity_rows(&spec, &fit, 0.1);
        let m = &r[key]["margeff"];
        for (i, var) in m["variables"].as_array().unwrap().iter().enumerate() {
            let var = var.as_str().unwrap();
            let ours = me
                .iter()
                .find(|x| x.variable == var && x.alternative == "gain")
                .unwrap();
            assert_close(
                &format!("{key} {var}"),
                ours.value,
                m["values"][i].as_f64().unwrap(),
                1e-6,
            );
            assert_close(
                &format!("{key} {var} s.e."),
                ours.std_error,
                m["std_errors"][i].as_f64().unwrap(),
                1e-4,
            );
        }
    }
}

#[test]
fn value_of_time_recovers_the_generating_value() {
    // The commute demo was simulated with time -0.040 and cost -0.30 per unit:
    // a value of time of 60 * 0.04 / 0.3 = 8.0 per hour (demo-data/README.md).
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let a = analysis::analyse(
        &spec,
        &fit,
        &ds,
        &Options {
            draws: 2000,
            ..Options::default()
        },
    )
    .unwrap();
    let vot = a.ratios.iter().find(|r| r.name == "value_of_time").unwrap();
    assert!(vot.ci_low < 8.0 && 8.0 < vot.ci_high, "{vot:?}");
    assert!(vot.kr_low < 8.0 && 8.0 < vot.kr_high, "{vot:?}");
    // delta and Krinsky-Robb intervals agree roughly when the denominator is well determined
    assert!((vot.kr_low - vot.ci_low).abs() < 0.5 * vot.std_error);
    assert!(vot.warning.is_none());
}

#[test]
fn holdout_and_wald_and_iia_run_on_the_demo() {
    let (mut spec, _) = load("specs/commute.toml");
    // Unweighted, so that the full-set estimator is efficient as the IIA test assumes.
    spec.data.weight = None;
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    let opts = Options {
        draws: 200,
        iia_drop: Some("walk".into()),
        restrictions: vec!["wait = 2 * time".into()],
        ..Options::default()
    };
    let a = analysis::analyse(&spec, &fit, &ds, &opts).unwrap();
    // The demo is simulated from a logit, so IIA holds: the test should not reject at 1%.
    let iia = a.iia.unwrap();
    assert!(iia.df > 0 && iia.p_value > 0.01, "{iia:?}");
    // wait = -0.07 vs 2 * time = -0.08 in truth: a single restriction, one df.
    let w = a.wald.unwrap();
    assert_eq!(w.df, 1);
    assert!(w.statistic >= 0.0 && w.p_value.is_finite());
    let h = a.validation.holdout.as_ref().unwrap();
    assert!(h.situations > 1000 && h.situations + h.estimation_situations == 6000);
    assert!(
        h.log_likelihood > h.null_log_likelihood,
        "the model predicts held-out trips better than equal shares"
    );
    // Hit rate and mean chosen probability are probabilities, and a model beats equal shares.
    assert!(a.validation.hit_rate > 0.3 && a.validation.hit_rate < 1.0);
}
