//! Mixed logit analyses: elasticities against finite differences of the
//! simulated shares (common practice), the implied distribution of each
//! random coefficient against simulation from its definition, value ratios of
//! random terms against their closed form, and the command-line outputs
//! (conditional coefficients, the simulation check).

use std::sync::Arc;

use sharecast::analysis::{random, ratios, sensitivity, simulate};
use sharecast::design::Design;
use sharecast::estimate::{self, Fit, Step};
use sharecast::model::distribution::Distribution;
use sharecast::rng::Rng;
use sharecast::spec::Spec;

use crate::common::*;
use crate::mixed::{case, case_spec, family_on, fixture, floats};

/// The reference panel case fitted on its own draws, with `extra` spec lines.
fn panel_fit(extra: &str) -> (Spec, Fit) {
    let r = fixture();
    let c = case(&r, "panel");
    let start = floats(&c["start"]);
    let (spec, ds) = case_spec(c, Some(&start));
    let spec = if extra.is_empty() {
        spec
    } else {
        let text = std::fs::read_to_string(&spec.path).unwrap() + extra;
        std::fs::write(&spec.path, text).unwrap();
        sharecast::model::read_spec(&spec.path).unwrap()
    };
    let quiet = |_s: Step| {};
    let fit = estimate::fit_family(&spec, Arc::new(ds.obs), family_on(&spec, c), &quiet).unwrap();
    (spec, fit)
}

#[test]
fn elasticities_match_finite_differences_of_the_simulated_shares() {
    let r = fixture();
    let c = case(&r, "panel");
    let (spec, ds) = case_spec(c, None);
    let family = family_on(&spec, c);
    let d = Design::build(&spec, Arc::new(ds.obs));
    let beta = floats(&c["estimates"]);
    let map = sensitivity::TermMap::new(&spec, &d);
    let s = sensitivity::sensitivities(&*family, &d, &map, &beta);
    let j = d.alternatives();
    let eps = 1e-5;
    let mut checked = 0;
    for (a, per_alt) in map.attribute.iter().enumerate() {
        for (k, param) in per_alt.iter().enumerate() {
            let Some(param) = *param else { continue };
            let at = |t: f64| {
                simulate::shares_with(&*family, &d, &beta, None, |i, b, v| {
                    if v[k].is_finite() {
                        v[k] += b[param] * d.obs.attributes[a][i * j + k] * t;
                    }
                })
            };
            let (up, dn) = (at(eps), at(-eps));
            for jj in 0..j {
                let fd = (up[jj].ln() - dn[jj].ln()) / (2.0 * eps);
                let got = s.attr_elast[(a * j + k) * j + jj];
                assert!(
                    (got - fd).abs() < 1e-6 * fd.abs().max(0.01),
                    "attribute {a} of {k} on {jj}: {got} vs {fd}"
                );
                checked += 1;
            }
        }
    }
    assert!(checked >= 15, "{checked}");
}

#[test]
fn implied_distributions_match_simulation_from_their_definitions() {
    // Each distribution's closed-form mean, s.d., median, share above zero and
    // quantiles against 400,000 draws of its definition (common practice).
    let mut rng = Rng::new(3);
    let n = 400_000;
    for (dist, m, s) in [
        (Distribution::Normal, -0.4, 0.9),
        (Distribution::Lognormal, -1.0, 0.6),
        (Distribution::NegativeLognormal, 0.2, 0.5),
        (Distribution::Uniform, 0.3, 0.8),
        (Distribution::Triangular, -0.2, 1.1),
    ] {
        let mut x: Vec<f64> = (0..n)
            .map(|_| dist.at(m, s, rng.uniform().clamp(1e-15, 1.0 - 1e-15)))
            .collect();
        let mean = x.iter().sum::<f64>() / n as f64;
        let sd = (x.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / n as f64).sqrt();
        let positive = x.iter().filter(|v| **v > 0.0).count() as f64 / n as f64;
        x.sort_by(f64::total_cmp);
        let (cm, csd) = dist.moments(m, s);
        let tol = 0.01 * csd;
        assert!((mean - cm).abs() < tol, "{dist:?} mean {mean} vs {cm}");
        assert!((sd - csd).abs() < tol, "{dist:?} sd {sd} vs {csd}");
        assert!(
            (positive - dist.share_positive(m, s)).abs() < 0.003,
            "{dist:?} share"
        );
        for q in [0.05, 0.25, 0.5, 0.75, 0.95] {
            let got = x[(q * n as f64) as usize];
            let want = dist.quantile(m, s, q);
            // Sample quantiles of skewed tails scatter more than the mean.
            assert!(
                (got - want).abs() < 2.5 * tol,
                "{dist:?} q{q}: {got} vs {want}"
            );
        }
    }
}

#[test]
fn random_coefficient_rows_report_the_fit_with_errors() {
    let (_, fit) = panel_fit("");
    // 60 draws per person: the fit says they are few.
    let few = fit
        .diagnostics
        .iter()
        .find(|d| d.code.as_deref() == Some("few_draws"))
        .expect("a few_draws warning");
    assert!(
        few.message.contains("only 60 simulation draws"),
        "{}",
        few.message
    );
    let rows = random::rows(&fit);
    let names: Vec<&str> = rows.iter().map(|r| r.coefficient.as_str()).collect();
    assert_eq!(names, ["asc_rail", "cost", "time"]);
    let cost = &rows[1];
    assert_eq!(cost.distribution, "negative-lognormal");
    let (m, s) = (cost.location, cost.spread);
    // Median of -exp(m + s z) is -exp(m) (definition); every cost coefficient is negative.
    assert!((cost.median.value + m.exp()).abs() < 1e-12);
    assert_eq!(cost.share_negative.value, 1.0);
    assert!((cost.mean.value + (m + s * s / 2.0).exp()).abs() < 1e-12);
    for r in &rows {
        assert!(
            r.mean.std_error > 0.0 && r.mean.std_error.is_finite(),
            "{}",
            r.coefficient
        );
        assert!(r.std_dev.std_error > 0.0, "{}", r.coefficient);
    }
}

#[test]
fn a_ratio_over_a_lognormal_price_has_its_closed_form_median() {
    // comfort (fixed) over cost (negative-lognormal): the willingness to pay
    // for a unit more comfort is b_comfort / exp(m + s z), whose median is
    // b_comfort / exp(m) and whose q-th quantile is b_comfort exp(-m + s z_q)
    // (the ratio falls as z rises).
    let (spec, fit) = panel_fit(
        "[[ratio]]\nname = \"comfort_value\"\nnumerator = \"comfort\"\ndenominator = \"cost\"\n",
    );
    let draws = sharecast::analysis::delta::draws(&fit, 200, 7);
    let rows = ratios::ratios(&fit, &spec.ratios, draws.as_deref(), 7);
    let r = &rows[0];
    let bc = fit.beta[spec.parameter_index("comfort").unwrap()];
    let k = spec.parameter_index("cost").unwrap();
    let (m, s) = (
        fit.beta[k],
        fit.beta[spec.parameter_index("cost_spread").unwrap()],
    );
    let dist = r.distribution.as_ref().expect("a distribution");
    let want = bc / m.exp();
    // 100,000 simulated decision makers: the median within 1%.
    assert!(
        (r.value - want).abs() < 0.01 * want.abs(),
        "{} vs {want}",
        r.value
    );
    for q in &dist.quantiles {
        let z = sharecast::model::normal::quantile(q.level);
        let exact = bc * (-m + s.abs() * z).exp();
        assert!(
            (q.value - exact).abs() < 0.015 * exact.abs(),
            "{q:?} vs {exact}"
        );
    }
    assert!(r.warning.is_none(), "a lognormal price reaches no zero");
    assert!(r.kr_low < r.value && r.value < r.kr_high);
    // Over a normal coefficient instead: the warning names the denominator.
    let (spec, fit) = panel_fit(
        "[[ratio]]\nname = \"per_minute\"\nnumerator = \"comfort\"\ndenominator = \"time\"\n",
    );
    let rows = ratios::ratios(&fit, &spec.ratios, None, 7);
    let w = rows[0].warning.as_deref().unwrap_or("");
    assert!(
        w.contains("`time` is normal") && w.contains("lognormal"),
        "{w}"
    );
}

#[test]
fn conditional_coefficients_are_written_once_per_decision_maker() {
    let dir = scratch("mixed-conditional");
    let out = dir.join("tastes.csv");
    let out_s = out.display().to_string();
    let (code, _, err) = run(&[
        "fit",
        "specs/express_survey.toml",
        "--no-analysis",
        "--conditional",
        &out_s,
    ]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&out).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("respondent,asc_rail,cost,time"));
    let rows: Vec<Vec<f64>> = lines
        .map(|l| l.split(',').map(|x| x.parse().unwrap()).collect())
        .collect();
    assert_eq!(rows.len(), 600);
    // Every conditional cost coefficient is negative (negative-lognormal).
    assert!(rows.iter().all(|r| r[2] < 0.0));
    // Not overwritten without --force.
    let (code, _, err) = run(&[
        "fit",
        "specs/express_survey.toml",
        "--no-analysis",
        "--conditional",
        &out_s,
    ]);
    assert_ne!(code, 0);
    assert!(err.contains("--force"), "{err}");
    // A family without random coefficients says so.
    let (code, _, err) = run(&[
        "fit",
        "specs/commute.toml",
        "--no-analysis",
        "--force",
        "--conditional",
        &out_s,
    ]);
    assert_ne!(code, 0);
    assert!(err.contains("no random coefficients"), "{err}");
}

#[test]
fn the_simulation_check_refits_on_another_seed() {
    let (code, out, err) = run(&[
        "fit",
        "specs/express_survey.toml",
        "--no-analysis",
        "--draws-check",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let doc: serde_json::Value = serde_json::from_str(&out).unwrap();
    let c = &doc["draws_check"];
    assert_eq!(c["seed"], 7);
    assert_eq!(c["other_seed"], 8);
    assert_eq!(c["rows"].as_array().unwrap().len(), 8);
    let largest = c["largest"].as_f64().unwrap();
    // Another seed moves the estimates, but by little next to their errors
    // with 500 draws per respondent.
    assert!(largest > 0.0 && largest < 0.5, "{largest}");
    assert_ne!(c["log_likelihood"], c["other_log_likelihood"]);
}

#[test]
fn a_quick_forecast_uses_fewer_draws_and_stays_close_to_the_full_one() {
    // The workbench's quick what-if on large data: the point forecast on the
    // first 50 draws of each decision maker (`Family::for_bands`).
    let (spec, ds) = load("specs/express_survey.toml");
    let f = fit_spec(&spec, &ds);
    let sc = sharecast::scenario::Scenario::from_file(
        &path("specs/scenarios/express_fare_cut.toml"),
        &spec,
    )
    .unwrap();
    let opts = |quick| sharecast::scenario::Options {
        draws: 0,
        seed: 7,
        by: None,
        market: None,
        quick,
    };
    let full = sharecast::scenario::forecast(&spec, &f, &ds, &sc, &opts(false)).unwrap();
    let quick = sharecast::scenario::forecast(&spec, &f, &ds, &sc, &opts(true)).unwrap();
    let mut differs = false;
    for (a, b) in full.shares.iter().zip(&quick.shares) {
        assert!(
            (a.scenario - b.scenario).abs() < 0.01,
            "{} {} {}",
            a.alternative,
            a.scenario,
            b.scenario
        );
        differs |= a.scenario != b.scenario;
    }
    assert!(differs, "the quick forecast should use other (fewer) draws");
}

#[test]
fn every_sequence_fits_the_survey_to_nearly_the_same_estimates() {
    // Halton, MLHS and pseudo-random draws (200 per respondent) estimate the
    // same model: the estimates agree within a fraction of their standard
    // errors (simulation noise is small next to sampling noise).
    let fits: Vec<Fit> = ["halton", "mlhs", "pseudo"]
        .iter()
        .map(|seq| {
            let dir = scratch(&format!("mixed-sequence-{seq}"));
            std::fs::copy(
                path("demo-data/express_survey.csv"),
                dir.join("express_survey.csv"),
            )
            .unwrap();
            let text = std::fs::read_to_string(path("specs/express_survey.toml"))
                .unwrap()
                .replace("../demo-data/express_survey.csv", "express_survey.csv")
                .replace("draws = 500", "draws = 200")
                .replace("sequence = \"halton\"", &format!("sequence = \"{seq}\""));
            let p = write(&dir, "spec.toml", &text);
            let spec = sharecast::model::read_spec(&p).unwrap();
            let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
            fit_spec(&spec, &ds)
        })
        .collect();
    for f in &fits[1..] {
        for (a, b) in fits[0].parameters.iter().zip(&f.parameters) {
            let (x, y) = (a.estimate.abs(), b.estimate.abs());
            assert!(
                (x - y).abs() < 0.5 * a.robust_std_error,
                "{}: {x} vs {y} (s.e. {})",
                a.name,
                a.robust_std_error
            );
        }
    }
}
