//! Willingness-to-pay space and correlated tastes: the logit in willingness
//! space against the preference-space logit (a fact of the model: the same
//! model reparameterised), the value ratios over the price, and the spec
//! errors of the new keys.

use crate::common::*;

/// The spec at `rel` with `space = "willingness"` and `price` added to [model].
fn in_willingness(
    rel: &str,
    price: &str,
    name: &str,
) -> (sharecast::spec::Spec, sharecast::data::Dataset) {
    let text = std::fs::read_to_string(path(rel)).unwrap();
    let folder = path(rel).parent().unwrap().display().to_string();
    let text = text.replace("\"../", &format!("\"{folder}/../")).replace(
        "family = \"logit\"",
        &format!("family = \"logit\"\nspace = \"willingness\"\nprice = \"{price}\""),
    );
    let dir = scratch(name);
    let p = write(&dir, "spec.toml", &text);
    let spec = sharecast::model::read_spec(&p).unwrap();
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    (spec, ds)
}

/// Checks the willingness-space fit of `rel` against its preference-space fit.
fn same_model(rel: &str, price: &str, name: &str) {
    let (spec, ds) = load(rel);
    let pref = fit_spec(&spec, &ds);
    let (wspec, wds) = in_willingness(rel, price, name);
    let wtp = fit_spec(&wspec, &wds);
    assert!(pref.stats.converged && wtp.stats.converged, "{name}");
    // Fact of the model (Train & Weeks 2005): alpha (-b_price) and
    // w_k = b_k / alpha describe the same choice probabilities, so the
    // maximum likelihood is the same and the estimates map exactly.
    assert_close(
        &format!("{name} log-likelihood"),
        wtp.stats.log_likelihood,
        pref.stats.log_likelihood,
        1e-9,
    );
    let p = pref.names.iter().position(|n| n == price).unwrap();
    let (bp, k) = (pref.beta[p], pref.beta.len());
    assert_close(&format!("{name} price scale"), wtp.beta[p], -bp, 1e-7);
    for q in 0..k {
        if q == p {
            continue;
        }
        let w = pref.beta[q] / -bp;
        assert_close(&format!("{name} {}", pref.names[q]), wtp.beta[q], w, 1e-7);
        // The delta method's errors of w_q = b_q / -b_p under both covariances.
        let g = [1.0 / -bp, pref.beta[q] / (bp * bp)];
        for (cov, wcov, which) in [
            (&pref.covariance, &wtp.covariance, "classical"),
            (&pref.robust_covariance, &wtp.robust_covariance, "robust"),
        ] {
            let var = g[0] * g[0] * cov[(q, q)]
                + 2.0 * g[0] * g[1] * cov[(q, p)]
                + g[1] * g[1] * cov[(p, p)];
            assert_close(
                &format!("{name} {} {which} s.e.", pref.names[q]),
                wcov[(q, q)].sqrt(),
                var.sqrt(),
                1e-6,
            );
        }
    }
    // The probabilities are the same, so every analysis figure is.
    let opts = sharecast::analysis::Options::default();
    let a = sharecast::analysis::analyse(&spec, &pref, &ds, &opts).unwrap();
    let b = sharecast::analysis::analyse(&wspec, &wtp, &wds, &opts).unwrap();
    for (x, y) in a.elasticities.iter().zip(&b.elasticities) {
        assert_close(&format!("{name} elasticity"), y.value, x.value, 1e-8);
    }
    for (x, y) in a.elasticities.iter().zip(&b.elasticities) {
        assert_close(
            &format!("{name} elasticity s.e."),
            y.std_error,
            x.std_error,
            1e-5,
        );
    }
    assert_eq!(a.diversion.len(), b.diversion.len());
    for (x, y) in a.diversion.iter().zip(&b.diversion) {
        assert_close(&format!("{name} diversion"), y.share, x.share, 1e-8);
    }
}

#[test]
fn the_logit_in_willingness_space_is_the_preference_logit_reparameterised_on_the_commute_demo() {
    same_model("specs/commute.toml", "cost", "wtp-commute");
}

#[test]
fn the_logit_in_willingness_space_is_the_preference_logit_reparameterised_on_travel_mode_data() {
    // statsmodels' modechoice data (Greene's table F18-2): generalised cost is the price.
    same_model("tests/specs/modechoice.toml", "gc", "wtp-modechoice");
}

#[test]
fn a_value_over_the_price_is_the_value_itself() {
    let (spec, ds) = in_willingness("specs/commute.toml", "cost", "wtp-ratio");
    let fit = fit_spec(&spec, &ds);
    let ratio = |n: &str, d: &str, per_less: bool| sharecast::spec::Ratio {
        name: format!("{n}_over_{d}"),
        numerator: fit.names.iter().position(|x| x == n).unwrap(),
        denominator: fit.names.iter().position(|x| x == d).unwrap(),
        scale: 60.0,
        per_less,
        unit: None,
    };
    let rows = sharecast::analysis::ratios::ratios(
        &fit,
        &[ratio("time", "cost", true), ratio("wait", "time", false)],
        None,
        7,
    );
    let t = fit.names.iter().position(|x| x == "time").unwrap();
    let se = fit.robust_covariance[(t, t)].sqrt();
    // A saving of 60 minutes is worth -60 w_time (w_time is negative: time is
    // disliked); its error is 60 times w_time's: no division takes place.
    assert_close("value of time", rows[0].value, -60.0 * fit.beta[t], 1e-12);
    assert_close("its error", rows[0].std_error, 60.0 * se, 1e-9);
    assert!(rows[0].note.as_deref().unwrap().contains("not a division"));
    assert!(rows[0].warning.is_none());
    // Between two values the price scale cancels: the ratio of the values.
    let w = fit.names.iter().position(|x| x == "wait").unwrap();
    assert_close(
        "wait over time",
        rows[1].value,
        -60.0 * fit.beta[w] / fit.beta[t],
        1e-12,
    );
    assert!(rows[1].note.is_none());
}

/// A small mixed spec over the express survey's columns, with `model` lines
/// added to [model] and `cost` following `cost_random`.
fn mixed_spec(model: &str, cost_random: &str) -> String {
    format!(
        "[data]\nfile = \"x.csv\"\nlayout = \"wide\"\nchoice = \"choice\"\ngroup = \"respondent\"\n\
         [model]\nfamily = \"mixed\"\nbase = \"car\"\nrandom_constants = [\"rail\"]\n{model}\n\
         [alternatives.car]\n[alternatives.coach]\n[alternatives.rail]\n\
         [[attribute]]\nname = \"cost\"\ncolumns = {{ car = \"car_cost\", coach = \"coach_fare\", rail = \"rail_fare\" }}\n{cost_random}\n\
         [[attribute]]\nname = \"time\"\ncolumns = {{ car = \"car_time\", coach = \"coach_time\", rail = \"rail_time\" }}\nrandom = \"normal\"\n\
         [[attribute]]\nname = \"headway\"\ncolumns = {{ coach = \"coach_headway\", rail = \"rail_headway\" }}\nrandom = \"uniform\"\n"
    )
}

#[test]
fn the_new_keys_refuse_mistakes_naming_the_key() {
    let logit = std::fs::read_to_string(path("specs/commute.toml")).unwrap();
    let in_logit = |lines: &str| {
        logit.replace(
            "family = \"logit\"",
            &format!("family = \"logit\"\n{lines}"),
        )
    };
    let neg = "random = \"negative-lognormal\"";
    let cases: Vec<(String, &str)> = vec![
        (in_logit("space = \"dollars\""), "[model].space: \"dollars\" is not known"),
        (in_logit("space = \"willingness\""), "[model].price: missing"),
        (
            in_logit("space = \"willingness\"\nprice = \"fare\""),
            "[model].price: `fare` is not an [[attribute]]",
        ),
        (in_logit("price = \"cost\""), "[model].price: names the price of a model in willingness space"),
        (
            in_logit("space = \"willingness\"\nprice = \"cost\"")
                .replace("name = \"cost\"", "name = \"cost\"\ncoefficient = \"per-alternative\""),
            "[model].price: `cost` has a coefficient per alternative",
        ),
        (in_logit("correlated = true"), "[model].correlated: applies to family \"mixed\""),
        (
            mixed_spec("correlated = [\"time\"]", neg),
            "[model].correlated: correlation needs at least two random coefficients",
        ),
        (
            mixed_spec("correlated = [\"time\", \"cost\", \"time\"]", neg),
            "[model].correlated: `time` is listed twice",
        ),
        (
            mixed_spec("correlated = [\"time\", \"asc_coach\"]", neg),
            "[model].correlated: `asc_coach` is not a random coefficient (the random coefficients are: asc_rail, cost, time, headway)",
        ),
        (
            mixed_spec("correlated = [\"time\", \"headway\"]", neg),
            "[model].correlated: `headway` is uniform",
        ),
        (
            mixed_spec("correlated = true", neg),
            "[model].correlated: `headway` is uniform",
        ),
        (
            mixed_spec("space = \"willingness\"\nprice = \"cost\"", "random = \"normal\""),
            "[[attribute]] cost: random = \"normal\": the price scale of a model in willingness space must be positive",
        ),
        (
            mixed_spec("space = \"willingness\"\nprice = \"cost\"", neg),
            "[[attribute]] cost: random = \"negative-lognormal\"",
        ),
    ];
    let dir = scratch("tastes-errors");
    for (k, (text, want)) in cases.iter().enumerate() {
        let p = write(&dir, &format!("bad{k}.toml"), text);
        let err = sharecast::model::read_spec(&p)
            .map(|_| ())
            .unwrap_err()
            .to_string();
        assert!(err.contains(want), "case {k}: {err}");
    }
    // A price scale fixed at 0 would make every utility 0: refused when the
    // model is built, naming the parameter.
    let p = write(
        &dir,
        "fixed.toml",
        &format!(
            "{}\n[parameters]\ncost = {{ fixed = 0 }}\n",
            in_logit("space = \"willingness\"\nprice = \"cost\"")
                .replace("\"../", &format!("\"{}/../", path("specs").display()))
        ),
    );
    let spec = sharecast::model::read_spec(&p).unwrap();
    let err = sharecast::model::for_spec(&spec).unwrap_err().to_string();
    assert!(err.contains("[parameters].cost: the price scale"), "{err}");
    // The keys are accepted where they belong.
    let p = write(
        &dir,
        "good.toml",
        &mixed_spec(
            "correlated = [\"time\", \"cost\"]\nspace = \"willingness\"\nprice = \"cost\"",
            "random = \"lognormal\"",
        ),
    );
    let spec = sharecast::model::read_spec(&p).unwrap();
    let names: Vec<&str> = spec.parameters.iter().map(|p| p.name.as_str()).collect();
    assert!(
        names.ends_with(&[
            "asc_rail_spread",
            "cost_spread",
            "time_spread",
            "headway_spread",
            "chol_cost_time"
        ]),
        "{names:?}"
    );
}

#[test]
fn calibrated_forecasts_and_new_alternatives_are_the_same_in_either_space() {
    // Fact of the model: the same probabilities in both spaces, so a forecast
    // with constants calibrated to counts (the calibration steps the values
    // by the price scale) and one that adds an alternative agree.
    let (wspec, _) = in_willingness("specs/commute.toml", "cost", "wtp-forecast");
    let wpath = wspec.path.display().to_string();
    let forecast = |spec: &str, scenario: &str| -> serde_json::Value {
        let (code, out, err) = run(&[
            "simulate",
            spec,
            "--scenario",
            scenario,
            "--draws",
            "0",
            "--json",
        ]);
        assert_eq!(code, 0, "{err}");
        serde_json::from_str(&out).unwrap()
    };
    // A new alternative's `constant` is a value in price units in willingness
    // space: the tram's -0.6 utility units are -0.6 / alpha there.
    let (spec, ds) = load("specs/commute.toml");
    let alpha = -fit_spec(&spec, &ds).beta[spec.parameter_index("cost").unwrap()];
    let tram = std::fs::read_to_string(path("specs/scenarios/tram_line.toml")).unwrap();
    let dir = wspec.path.parent().unwrap().to_path_buf();
    let wtram = write(
        &dir,
        "tram.toml",
        &tram.replace("constant = -0.6", &format!("constant = {:?}", -0.6 / alpha)),
    );
    let wtram = wtram.display().to_string();
    for (scenario, wscenario) in [
        (
            "specs/scenarios/calibrated_walk_ban.toml",
            "specs/scenarios/calibrated_walk_ban.toml",
        ),
        ("specs/scenarios/tram_line.toml", wtram.as_str()),
    ] {
        let a = forecast("specs/commute.toml", scenario);
        let b = forecast(&wpath, wscenario);
        let (sa, sb) = (
            a["shares"].as_array().unwrap(),
            b["shares"].as_array().unwrap(),
        );
        assert_eq!(sa.len(), sb.len(), "{scenario}");
        for (x, y) in sa.iter().zip(sb) {
            for key in ["base", "scenario"] {
                assert_close(
                    &format!("{scenario} {} {key}", x["alternative"]),
                    y[key].as_f64().unwrap(),
                    x[key].as_f64().unwrap(),
                    1e-7,
                );
            }
        }
    }
}

#[test]
fn off_diagonals_fixed_at_zero_reproduce_the_independent_fit() {
    // Fact of the model: with every Cholesky entry fixed at 0 each listed
    // coefficient is its location plus its spread times its own draw, the
    // independent mixed logit, so the fit is the same one.
    let text = std::fs::read_to_string(path("specs/express_survey.toml")).unwrap();
    let folder = path("specs").display().to_string();
    let text = text
        .replace("\"../", &format!("\"{folder}/../"))
        .replace("draws = 500", "draws = 60");
    let correlated = text.replace(
        "family = \"mixed\"",
        "family = \"mixed\"\ncorrelated = [\"time\", \"cost\"]",
    ) + "\n[parameters]\nchol_cost_time = { fixed = 0 }\n";
    let dir = scratch("tastes-fixed-zero");
    let fits: Vec<_> = [text, correlated]
        .iter()
        .enumerate()
        .map(|(k, t)| {
            let p = write(&dir, &format!("spec{k}.toml"), t);
            let spec = sharecast::model::read_spec(&p).unwrap();
            let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
            fit_spec(&spec, &ds)
        })
        .collect();
    assert_close(
        "log-likelihood",
        fits[1].stats.log_likelihood,
        fits[0].stats.log_likelihood,
        1e-12,
    );
    for (a, b) in fits[0].parameters.iter().zip(&fits[1].parameters) {
        assert_eq!(a.name, b.name);
        assert_close(&a.name, b.estimate, a.estimate, 1e-9);
        assert_close(
            &format!("{} s.e.", a.name),
            b.robust_std_error,
            a.robust_std_error,
            1e-7,
        );
    }
    assert_eq!(fits[1].parameters.last().unwrap().name, "chol_cost_time");
}
