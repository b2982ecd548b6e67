//! Ordered logit and probit against statsmodels' `OrderedModel` (a
//! general-purpose reference library; tests/reference/ordered_reference.py,
//! fixture tests/fixtures/ordered_reference.json) on statsmodels' anes96 data,
//! and facts of the model.

use std::path::Path;

use serde_json::Value;
use sharecast::analysis::sensitivity::{sensitivities, TermMap};
use sharecast::spec::Spec;

use crate::common::*;

fn fixture() -> Value {
    let text = std::fs::read_to_string(path("tests/fixtures/ordered_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn spec(family: &str) -> Spec {
    let text = std::fs::read_to_string(path("tests/specs/anes96_ordered.toml")).unwrap();
    let text = text.replace(
        "family = \"ordered-logit\"",
        &format!("family = \"{family}\""),
    );
    sharecast::model::parse_spec(&text, &path("tests/specs/anes96_ordered.toml")).unwrap()
}

#[test]
fn estimates_match_statsmodels_ordered_model() {
    let r = fixture();
    for (family, key) in [
        ("ordered-logit", "anes96_ordered_logit"),
        ("ordered-probit", "anes96_ordered_probit"),
    ] {
        let m = &r[key];
        let spec = spec(family);
        let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
        let fit = fit_spec(&spec, &ds);
        assert!(fit.stats.converged, "{family}");
        let (params, bse) = (floats(&m["params"]), floats(&m["bse"]));
        for (k, name) in ["age", "educ", "income"].iter().enumerate() {
            let row = fit.parameters.iter().find(|p| p.name == *name).unwrap();
            assert_close(&format!("{family} {name}"), row.estimate, params[k], 1e-5);
            assert_close(
                &format!("{family} {name} s.e."),
                row.std_error,
                bse[k],
                1e-3,
            );
        }
        // statsmodels' later cut-points are log increments; the fixture's
        // `thresholds` converts them, with delta-method errors.
        let th = &m["thresholds"];
        let (values, errors) = (floats(&th["values"]), floats(&th["std_errors"]));
        for (k, (v, e)) in values.iter().zip(&errors).enumerate() {
            let row = &fit.parameters[3 + k];
            assert_eq!(row.name, format!("cut_r{}", k + 1));
            assert_close(&format!("{family} {}", row.name), row.estimate, *v, 1e-5);
            assert_close(
                &format!("{family} {} s.e.", row.name),
                row.std_error,
                *e,
                1e-3,
            );
        }
        assert_close(
            &format!("{family} ll"),
            fit.stats.log_likelihood,
            m["llf"].as_f64().unwrap(),
            1e-6,
        );
        assert_close(
            &format!("{family} thresholds-only ll"),
            fit.stats.constants_log_likelihood,
            r["ll_thresholds_only"].as_f64().unwrap(),
            1e-6,
        );
        let predicted = floats(&m["average_predicted_probabilities"]["values"]);
        for (row, want) in fit.shares.iter().zip(&predicted) {
            assert_close(
                &format!("{family} P({})", row.alternative),
                row.predicted,
                *want,
                1e-5,
            );
        }
        // Average marginal effects of each characteristic on each category.
        let map = TermMap::new(&spec, &fit.design);
        let sens = sensitivities(&*fit.family, &fit.design, &map, &fit.beta);
        let j = 7;
        for (c, row) in m["average_marginal_effects"]["values"]
            .as_array()
            .unwrap()
            .iter()
            .enumerate()
        {
            for (k, want) in floats(row).iter().enumerate() {
                assert_close(
                    &format!("{family} AME {c} on {k}"),
                    sens.char_me[c * j + k],
                    *want,
                    1e-4,
                );
            }
        }
    }
}

#[test]
fn with_three_categories_probabilities_and_effects_add_up() {
    // Facts of the model: category probabilities sum to one, and a
    // characteristic's marginal effects over the categories sum to zero.
    let dir = scratch("ordered_three");
    let mut csv = String::from("rating,z\n");
    let mut rng = sharecast::rng::Rng::new(9);
    for _ in 0..400 {
        let z = rng.normal();
        let y = 0.8 * z + rng.normal();
        csv.push_str(&format!(
            "{},{z:.4}\n",
            if y < -0.5 {
                1
            } else if y < 0.6 {
                2
            } else {
                3
            }
        ));
    }
    std::fs::write(dir.join("d.csv"), csv).unwrap();
    for family in ["ordered-logit", "ordered-probit"] {
        let text = format!("[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"rating\"\n[model]\nfamily = \"{family}\"\n[alternatives.low]\ncode = 1\n[alternatives.mid]\ncode = 2\n[alternatives.high]\ncode = 3\n[[characteristic]]\nname = \"z\"\ncolumn = \"z\"\n");
        let spec = sharecast::model::parse_spec(&text, &dir.join("s.toml")).unwrap();
        let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
        let fit = fit_spec(&spec, &ds);
        let total: f64 = fit.shares.iter().map(|s| s.predicted).sum();
        assert!((total - 1.0).abs() < 1e-12);
        let map = TermMap::new(&spec, &fit.design);
        let sens = sensitivities(&*fit.family, &fit.design, &map, &fit.beta);
        let me: f64 = sens.char_me.iter().sum();
        assert!(me.abs() < 1e-12, "{family}: marginal effects sum to {me}");
        assert!(
            sens.char_me[2] > 0.0 && sens.char_me[0] < 0.0,
            "{family}: a positive index raises the top category"
        );
    }
}

#[test]
fn ordered_spec_errors_name_the_key() {
    let ok = std::fs::read_to_string(path("tests/specs/anes96_ordered.toml")).unwrap();
    let cases: Vec<(&str, String, Vec<&str>)> = vec![
        (
            "base",
            ok.replace(
                "family = \"ordered-logit\"",
                "family = \"ordered-logit\"\nbase = \"r1\"",
            ),
            vec!["[model].base", "no base"],
        ),
        (
            "constants",
            ok.replace(
                "family = \"ordered-logit\"",
                "family = \"ordered-logit\"\nconstants = true",
            ),
            vec!["[model].constants", "cut-points"],
        ),
        (
            "alternatives on a characteristic",
            ok.replace(
                "name = \"age\"\ncolumn = \"age\"",
                "name = \"age\"\ncolumn = \"age\"\nalternatives = [\"r2\"]",
            ),
            vec!["[[characteristic]] age", "one coefficient"],
        ),
        (
            "attribute",
            format!(
                "{ok}[[attribute]]\nname = \"x\"\ncolumns = {{ r1 = \"age\", r2 = \"age\" }}\n"
            ),
            vec!["[[attribute]] x", "no attributes"],
        ),
        (
            "two categories",
            ok.split("[alternatives.r3]").next().unwrap().to_string()
                + "[[characteristic]]\nname = \"age\"\ncolumn = \"age\"\n",
            vec!["three or more", "binary"],
        ),
        (
            "cut-points not increasing",
            format!("{ok}[parameters]\ncut_r3 = {{ start = -9.0 }}\n"),
            vec!["[parameters].cut_r3", "must increase"],
        ),
        (
            "long layout",
            ok.replace(
                "layout = \"wide\"\nchoice = \"selfLR\"",
                "layout = \"long\"\nsituation = \"s\"\nalternative = \"a\"\nchosen = \"c\"",
            ),
            vec!["[data].layout", "wide"],
        ),
    ];
    for (what, text, words) in cases {
        let err = sharecast::model::parse_spec(&text, Path::new("tests/specs/x.toml"))
            .err()
            .unwrap_or_else(|| panic!("{what}: accepted"))
            .to_string();
        for w in words {
            assert!(err.contains(w), "{what}: `{w}` not in: {err}");
        }
    }
}

#[test]
fn expected_category_effects_and_scenarios() {
    let r = fixture();
    let spec = spec("ordered-logit");
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    // d E[category]/dz = sum_k k AME_k, from statsmodels' marginal effects (fixture).
    let rows = sharecast::analysis::expected_category(&spec, &fit);
    for (c, row) in r["anes96_ordered_logit"]["average_marginal_effects"]["values"]
        .as_array()
        .unwrap()
        .iter()
        .enumerate()
    {
        let want: f64 = floats(row)
            .iter()
            .enumerate()
            .map(|(k, m)| (k + 1) as f64 * m)
            .sum();
        assert_close(&rows[c].variable, rows[c].value, want, 1e-4);
        assert!(rows[c].std_error > 0.0);
    }
    let opts = sharecast::scenario::Options {
        draws: 0,
        seed: 1,
        by: None,
        market: None,
        quick: false,
    };
    // Two more years of education everywhere: shares move toward the lower
    // categories (educ's coefficient is negative) and still add up to one.
    let sc = sharecast::scenario::Scenario::from_str(
        "name = \"educ\"\n[[change]]\nattribute = \"educ\"\nadd = 2\n",
        Path::new("s.toml"),
        &spec,
    )
    .unwrap();
    let f = sharecast::scenario::forecast(&spec, &fit, &ds, &sc, &opts).unwrap();
    let total: f64 = f.shares.iter().map(|s| s.scenario).sum();
    assert!((total - 1.0).abs() < 1e-12);
    assert!(f.shares[0].scenario > f.shares[0].base && f.shares[6].scenario < f.shares[6].base);
    // Categories are neither withdrawn nor added.
    let sc = sharecast::scenario::Scenario::from_str(
        "name = \"x\"\nremove = [\"r7\"]\n",
        Path::new("s.toml"),
        &spec,
    )
    .unwrap();
    let err = sharecast::scenario::forecast(&spec, &fit, &ds, &sc, &opts)
        .err()
        .unwrap()
        .to_string();
    assert!(err.contains("neither withdrawn nor added"), "{err}");
}

#[test]
fn a_category_never_observed_is_named() {
    let dir = scratch("ordered_unobserved");
    let mut csv = String::from("rating,z\n");
    for i in 0..60 {
        csv.push_str(&format!(
            "{},{}\n",
            if i % 2 == 0 { 1 } else { 3 },
            i as f64 / 10.0
        ));
    }
    std::fs::write(dir.join("d.csv"), csv).unwrap();
    let text = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"rating\"\n[model]\nfamily = \"ordered-probit\"\n[alternatives.low]\ncode = 1\n[alternatives.mid]\ncode = 2\n[alternatives.high]\ncode = 3\n[[characteristic]]\nname = \"z\"\ncolumn = \"z\"\n";
    let sp = write(&dir, "s.toml", text);
    let (code, _, err) = run(&["fit", sp.to_str().unwrap()]);
    assert_eq!(code, 1, "{err}");
    assert!(
        err.contains("[alternatives.mid]") && err.contains("never observed"),
        "{err}"
    );
}

#[test]
fn a_characteristic_can_be_swept() {
    // The ratings curve over waiting time: longer waits shift the ratings down;
    // at a multiplier of 1 the shares are the fitted ones (fact of the method).
    let (code, out, err) = run(&[
        "sweep",
        "specs/delivery_ratings.toml",
        "--attribute",
        "wait_minutes",
        "--from",
        "0.5",
        "--to",
        "1.5",
        "--steps",
        "3",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    assert!(v["alternative"].is_null());
    let share = |p: usize, k: usize| v["points"][p]["shares"][k].as_f64().unwrap();
    assert!(
        share(0, 4) > share(1, 4) && share(1, 4) > share(2, 4),
        "excellent falls with waiting"
    );
    assert!(share(0, 0) < share(2, 0), "very poor rises with waiting");
    let (_, fit) = fit_file("specs/delivery_ratings.toml");
    assert_close("at x1", share(1, 2), fit.shares[2].predicted, 1e-9);
    let (code, _, err) = run(&[
        "sweep",
        "specs/delivery_ratings.toml",
        "--attribute",
        "wait_minutes",
        "--alternative",
        "poor",
    ]);
    assert_eq!(code, 1);
    assert!(
        err.contains("characteristic") && err.contains("leave out --alternative"),
        "{err}"
    );
}

#[test]
fn the_single_index_check_uses_the_unordered_logit_of_statsmodels() {
    // The unordered logit behind the check: its log-likelihood against
    // statsmodels MNLogit on the same data (fixture `unordered_mnlogit`).
    let r = fixture();
    let spec = spec("ordered-logit");
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    let t = sharecast::analysis::single_index::check(&spec, &fit)
        .unwrap()
        .unwrap();
    let want = r["unordered_mnlogit"]["llf"].as_f64().unwrap();
    assert_close("unordered logit ll", t.unordered_log_likelihood, want, 1e-8);
    assert_close(
        "LR",
        t.statistic,
        2.0 * (want - fit.stats.log_likelihood),
        1e-6,
    );
    // 24 unordered parameters against 9 ordered ones (fixture's count).
    assert_eq!(
        t.df as u64,
        r["unordered_mnlogit"]["df_model_parameters"]
            .as_u64()
            .unwrap()
            - 9
    );
    assert!(t.note.contains("guide"));
}
