//! Nested logit against an independent numpy/scipy implementation
//! (tests/reference/nested_reference.py, fixture tests/fixtures/nested_reference.json)
//! on Greene's travel-mode data as shipped by statsmodels, and facts of the model.

use std::path::Path;

use serde_json::Value;
use sharecast::analysis::sensitivity::{sensitivities, TermMap};
use sharecast::spec::Spec;

use crate::common::*;

fn fixture() -> Value {
    let text = std::fs::read_to_string(path("tests/fixtures/nested_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// The travel-mode conditional logit spec turned nested, with the fixture's nests.
fn nested_spec(structure: &Value, extra: &str) -> Spec {
    let text = std::fs::read_to_string(path("tests/specs/modechoice.toml")).unwrap();
    let mut text = text.replace("family = \"logit\"", "family = \"nested\"");
    for n in structure["nests"].as_array().unwrap() {
        let alts: Vec<String> = n["alternatives"]
            .as_array()
            .unwrap()
            .iter()
            .map(|a| format!("\"{}\"", a.as_str().unwrap()))
            .collect();
        text.push_str(&format!(
            "[[nest]]\nname = \"{}\"\nalternatives = [{}]\n",
            n["name"].as_str().unwrap(),
            alts.join(", ")
        ));
    }
    text.push_str(extra);
    sharecast::model::parse_spec(&text, &path("tests/specs/modechoice_nested.toml")).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
fn estimates_match_the_independent_reference() {
    let r = fixture();
    for name in ["ground", "public", "two_nests"] {
        let s = &r["structures"][name];
        let spec = nested_spec(s, "");
        let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
        let fit = fit_spec(&spec, &ds);
        assert!(fit.stats.converged, "{name}: not converged");
        let names: Vec<&str> = s["param_names"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_str().unwrap())
            .collect();
        assert_eq!(fit.names, names, "{name}: parameter order");
        let (params, bse) = (floats(&s["params"]), floats(&s["bse"]));
        for (k, row) in fit.parameters.iter().enumerate() {
            // Tolerances of the issue: estimates 1e-4, standard errors 5e-3 relative.
            assert_close(
                &format!("{name} {}", row.name),
                row.estimate,
                params[k],
                1e-4,
            );
            assert_close(
                &format!("{name} {} s.e.", row.name),
                row.std_error,
                bse[k],
                5e-3,
            );
        }
        assert_close(
            &format!("{name} log-likelihood"),
            fit.stats.log_likelihood,
            s["llf"].as_f64().unwrap(),
            1e-4,
        );
    }
}

#[test]
fn likelihood_gradient_and_probabilities_at_a_fixed_point() {
    // The reference's values at a fixed parameter vector: no optimiser involved.
    let r = fixture();
    for name in ["ground", "public", "two_nests"] {
        let s = &r["structures"][name];
        let at = &s["at_point"];
        let spec = nested_spec(s, "");
        let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
        let d = sharecast::design::Design::build(&spec, std::sync::Arc::new(ds.obs.clone()));
        let family = sharecast::model::for_spec(&spec).unwrap();
        let beta = floats(&at["params"]);
        let e = family.evaluate(&d, &beta, true, false);
        assert_close(
            &format!("{name} ll"),
            e.ll,
            at["llf"].as_f64().unwrap(),
            1e-10,
        );
        for (k, g) in floats(&at["gradient"]).iter().enumerate() {
            assert_close(&format!("{name} gradient {k}"), e.grad[k], *g, 1e-9);
        }
        let p = sharecast::model::enumerate::probabilities(&*family, &d, &beta);
        for (i, row) in at["probabilities_first_3"]["values"]
            .as_array()
            .unwrap()
            .iter()
            .enumerate()
        {
            for (j, want) in floats(row).iter().enumerate() {
                assert_close(&format!("{name} P[{i}][{j}]"), p[i * 4 + j], *want, 1e-11);
            }
        }
    }
}

#[test]
fn aggregate_elasticities_match_the_reference() {
    // Elasticity of each mode's aggregate demand to the generalised cost of
    // train, by sample enumeration, against the reference's closed form.
    let r = fixture();
    let s = &r["structures"]["ground"];
    let spec = nested_spec(s, "");
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    let map = TermMap::new(&spec, &fit.design);
    let sens = sensitivities(&*fit.family, &fit.design, &map, &fit.beta);
    let (a, k, j) = (0, 1, 4); // attribute gc, changed alternative train, 4 modes
    let want = floats(&s["aggregate_elasticity_gc_train"]["values"]);
    for (jj, w) in want.iter().enumerate() {
        let got = sens.attr_elast[(a * j + k) * j + jj];
        // The estimates agree to about 1e-6; the elasticities follow them.
        assert_close(&format!("elasticity of {jj}"), got, *w, 1e-4);
    }
    let shares = floats(&s["predicted_shares"]);
    for (row, want) in fit.shares.iter().zip(&shares) {
        assert_close(&row.alternative, row.predicted, *want, 1e-5);
    }
}

#[test]
fn every_scale_fixed_at_one_is_the_logit_exactly() {
    // A fact of the model: with every l = 1 the nested logit is the logit.
    let r = fixture();
    let s = &r["structures"]["two_nests"];
    let spec = nested_spec(
        s,
        "[parameters]\nlambda_public = { fixed = 1.0 }\nlambda_private = { fixed = 1.0 }\n",
    );
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let nested = fit_spec(&spec, &ds);
    let (_, logit) = fit_file("tests/specs/modechoice.toml");
    assert_close(
        "log-likelihood",
        nested.stats.log_likelihood,
        logit.stats.log_likelihood,
        1e-12,
    );
    for (a, b) in nested.parameters.iter().zip(&logit.parameters) {
        assert_eq!(a.name, b.name);
        assert_close(&a.name, a.estimate, b.estimate, 1e-8);
        assert_close(&a.name, a.std_error, b.std_error, 1e-6);
    }
    // Greene's published log-likelihood of the conditional logit (fixture's logit_check).
    assert_close(
        "fixture logit check",
        nested.stats.log_likelihood,
        r["structures"]["logit_check"]["llf"].as_f64().unwrap(),
        1e-9,
    );
}

#[test]
fn nest_errors_name_the_key() {
    let base = std::fs::read_to_string(path("tests/specs/modechoice.toml")).unwrap();
    let nested = base.replace("family = \"logit\"", "family = \"nested\"");
    let cases: Vec<(&str, String, Vec<&str>)> = vec![
        ("unknown alternative", format!("{nested}[[nest]]\nname = \"g\"\nalternatives = [\"bus\", \"tram\"]\n"), vec!["[[nest]] g", "`tram`", "not an alternative"]),
        ("in two nests", format!("{nested}[[nest]]\nname = \"g\"\nalternatives = [\"bus\", \"train\"]\n[[nest]]\nname = \"h\"\nalternatives = [\"bus\", \"car\"]\n"), vec!["[[nest]] h", "`bus`", "already in nest `g`"]),
        ("nest of one", format!("{nested}[[nest]]\nname = \"g\"\nalternatives = [\"bus\"]\n"), vec!["[[nest]] g", "two or more", "logit"]),
        ("clash", format!("{nested}[[nest]]\nname = \"gc\"\nalternatives = [\"bus\", \"train\"]\n"), vec!["[[nest]] gc", "clash"]),
        ("no nest", nested.clone(), vec!["at least one [[nest]]"]),
        ("scale not positive", format!("{nested}[[nest]]\nname = \"g\"\nalternatives = [\"bus\", \"train\"]\n[parameters]\nlambda_g = {{ fixed = 0.0 }}\n"), vec!["[parameters].lambda_g", "positive"]),
        ("nest with logit", format!("{base}[[nest]]\nname = \"g\"\nalternatives = [\"bus\", \"train\"]\n"), vec!["`nest` belongs to family \"nested\"", "\"logit\""]),
        ("unknown key in nest", format!("{nested}[[nest]]\nname = \"g\"\nalternatives = [\"bus\", \"train\"]\nscale = 2\n"), vec!["[[nest]] number 1", "`scale`"]),
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

/// The "ground" nested model (train, bus, car nested; air alone) fitted, with its data.
fn ground() -> (Spec, sharecast::data::Dataset, sharecast::estimate::Fit) {
    let r = fixture();
    let spec = nested_spec(&r["structures"]["ground"], "");
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    (spec, ds, fit)
}

/// The point forecast of scenario text (no bands), or its error.
fn try_forecast(
    spec: &Spec,
    ds: &sharecast::data::Dataset,
    fit: &sharecast::estimate::Fit,
    text: &str,
) -> sharecast::Result<sharecast::scenario::Forecast> {
    let sc = sharecast::scenario::Scenario::from_str(text, Path::new("s.toml"), spec)?;
    let opts = sharecast::scenario::Options {
        draws: 0,
        seed: 1,
        by: None,
        market: None,
        quick: false,
    };
    sharecast::scenario::forecast(spec, fit, ds, &sc, &opts)
}

fn forecast(
    spec: &Spec,
    ds: &sharecast::data::Dataset,
    fit: &sharecast::estimate::Fit,
    text: &str,
) -> sharecast::scenario::Forecast {
    try_forecast(spec, ds, fit, text).unwrap()
}

#[test]
fn elasticities_match_finite_differences_of_simulated_shares() {
    // Aggregate elasticity of each share to the gc of train: the analytic
    // (dP/dV) figure against central differences of re-simulated shares.
    let (spec, _, fit) = ground();
    let d = &fit.design;
    let map = TermMap::new(&spec, d);
    let sens = sensitivities(&*fit.family, d, &map, &fit.beta);
    let (a, k, j) = (0, 1, 4);
    let b = fit.beta[map.attribute[a][k].unwrap()];
    let h = 1e-5;
    let at = |t: f64| {
        sharecast::analysis::simulate::shares_with(&*fit.family, d, &fit.beta, None, |i, _, v| {
            if v[k].is_finite() {
                v[k] += b * d.obs.attributes[a][i * j + k] * t;
            }
        })
    };
    let (up, dn, base) = (at(h), at(-h), at(0.0));
    for jj in 0..j {
        let fd = (up[jj] - dn[jj]) / (2.0 * h) / base[jj];
        let got = sens.attr_elast[(a * j + k) * j + jj];
        assert!(
            (fd - got).abs() < 1e-6,
            "share {jj}: analytic {got} vs numeric {fd}"
        );
    }
}

#[test]
fn withdrawing_an_alternative_sends_its_demand_first_to_its_nest() {
    // Under the logit a withdrawn alternative's demand spreads in proportion to
    // the other shares (IIA); with the scale of `ground` well below 1 bus and
    // car (train's nest-mates) must gain more than that, air less.
    let (spec, ds, fit) = ground();
    let f = forecast(
        &spec,
        &ds,
        &fit,
        "name = \"no train\"\nremove = [\"train\"]\n",
    );
    let base: Vec<f64> = f.shares.iter().map(|r| r.base).collect();
    let after: Vec<f64> = f.shares.iter().map(|r| r.scenario).collect();
    let lost = base[1];
    let rest: f64 = base[0] + base[2] + base[3];
    for (idx, nest_mate) in [(0, false), (2, true), (3, true)] {
        let proportional = lost * base[idx] / rest;
        let gain = after[idx] - base[idx];
        assert_eq!(
            gain > proportional,
            nest_mate,
            "alternative {idx}: gain {gain} vs proportional {proportional}"
        );
    }
    assert!((after.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    assert_eq!(after[1], 0.0);
}

#[test]
fn a_new_alternative_joins_its_nest_or_the_named_one() {
    let (spec, ds, fit) = ground();
    // A second bus service like `bus`: it joins the ground nest and draws mostly on it.
    let f = forecast(
        &spec,
        &ds,
        &fit,
        "name = \"coach\"\n[[new_alternative]]\nname = \"coach\"\nlike = \"bus\"\n",
    );
    let share = |f: &sharecast::scenario::Forecast, name: &str| {
        f.shares
            .iter()
            .find(|r| r.alternative == name)
            .unwrap()
            .clone()
    };
    let coach = share(&f, "coach").scenario;
    assert!(coach > 0.0);
    let total: f64 = f.shares.iter().map(|r| r.scenario).sum();
    assert!((total - 1.0).abs() < 1e-12);
    let air = share(&f, "air");
    let train = share(&f, "train");
    let rel = |r: &sharecast::scenario::ShareRow| (r.base - r.scenario) / r.base;
    assert!(
        rel(&train) > rel(&air),
        "nest-mate train loses relatively more than air"
    );
    // The same coach placed alone (like air) takes relatively more from air.
    let g = forecast(
        &spec,
        &ds,
        &fit,
        "name = \"coach\"\n[[new_alternative]]\nname = \"coach\"\nlike = \"air\"\n",
    );
    assert!(rel(&share(&g, "air")) > rel(&share(&g, "train")));
    // An unknown nest is named.
    let err = try_forecast(
        &spec,
        &ds,
        &fit,
        "name = \"x\"\n[[new_alternative]]\nname = \"coach\"\nlike = \"bus\"\nnest = \"sky\"\n",
    )
    .err()
    .unwrap()
    .to_string();
    assert!(err.contains("`sky`") && err.contains("ground"), "{err}");
}

#[test]
fn nest_on_a_new_alternative_of_a_logit_is_refused() {
    let (spec, fit) = fit_file("tests/specs/modechoice.toml");
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let err = try_forecast(
        &spec,
        &ds,
        &fit,
        "name = \"x\"\n[[new_alternative]]\nname = \"coach\"\nlike = \"bus\"\nnest = \"ground\"\n",
    )
    .err()
    .unwrap()
    .to_string();
    assert!(err.contains("`nest`") && err.contains("logit"), "{err}");
}

#[test]
fn a_scale_above_one_is_named_and_the_logit_is_tested() {
    // The reference's two-nest model has lambda_private = 2.37 (fixture):
    // the warning names it and the share of situations still consistent.
    let r = fixture();
    let spec = nested_spec(&r["structures"]["two_nests"], "");
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    let w: Vec<_> = fit
        .diagnostics
        .iter()
        .filter(|d| d.code.as_deref() == Some("scale_above_one"))
        .collect();
    assert_eq!(w.len(), 1, "{:?}", fit.diagnostics);
    assert_eq!(w[0].parameters, vec!["lambda_private".to_string()]);
    assert!(w[0].message.contains("% of situations"), "{}", w[0].message);
    // Both scales tested against 1 (Wald), and each row's t against 1.
    let t = sharecast::analysis::hypothesis::family_reduction(&spec, &fit)
        .unwrap()
        .unwrap();
    assert_eq!(t.df, 2);
    let row = fit
        .parameters
        .iter()
        .find(|p| p.name == "lambda_private")
        .unwrap();
    assert_eq!(row.null, 1.0);
    assert_close(
        "t against 1",
        row.t_stat,
        (row.estimate - 1.0) / row.std_error,
        1e-12,
    );
    // The JSON document carries the warning's code.
    let (code, out, err) = run(&["fit", "tests/specs/modechoice_nested.toml", "--json"]);
    assert_eq!(code, 0, "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    assert!(v["diagnostics"]
        .as_array()
        .unwrap()
        .iter()
        .any(|d| d["code"] == "scale_above_one"));
    assert!(v["family_test"]["statistic"].as_f64().unwrap() > 0.0);
}

#[test]
fn a_scale_near_zero_and_a_nest_rarely_available_are_named() {
    // A scale held at 0.02 is "near zero"; a nest whose second alternative is
    // available in 3 of 300 situations rests on little information.
    let dir = scratch("nested_warnings");
    let mut csv = String::from("choice,xa,xb,xc,c_ok\n");
    let mut rng = sharecast::rng::Rng::new(4);
    for i in 0..300 {
        let c_ok = (i % 100 == 0) as u8;
        let pick = if c_ok == 1 {
            "c"
        } else if rng.uniform() < 0.5 {
            "a"
        } else {
            "b"
        };
        csv.push_str(&format!(
            "{pick},{:.3},{:.3},{:.3},{c_ok}\n",
            rng.uniform(),
            rng.uniform(),
            rng.uniform()
        ));
    }
    std::fs::write(dir.join("d.csv"), csv).unwrap();
    let spec_text = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"choice\"\n[model]\nfamily = \"nested\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[alternatives.c]\navailable = \"c_ok\"\n[[attribute]]\nname = \"x\"\ncolumns = { a = \"xa\", b = \"xb\", c = \"xc\" }\n[[nest]]\nname = \"bc\"\nalternatives = [\"b\", \"c\"]\n[parameters]\nlambda_bc = { fixed = 0.02 }\n";
    let spec = sharecast::model::parse_spec(spec_text, &dir.join("s.toml")).unwrap();
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    let codes: Vec<&str> = fit
        .diagnostics
        .iter()
        .filter_map(|d| d.code.as_deref())
        .collect();
    assert!(codes.contains(&"scale_near_zero"), "{:?}", fit.diagnostics);
    assert!(
        codes.contains(&"nest_rarely_available"),
        "{:?}",
        fit.diagnostics
    );
    let rare = fit
        .diagnostics
        .iter()
        .find(|d| d.code.as_deref() == Some("nest_rarely_available"))
        .unwrap();
    assert!(rare.message.contains("1.0%"), "{}", rare.message);
}

#[test]
fn the_analytic_hessian_matches_differences_with_unavailable_alternatives() {
    // The commute demo: cars, bikes and walking unavailable in some trips,
    // characteristics on four alternatives, two nests and a lone car. Central
    // differences of the analytic gradient (model::hessian::differenced,
    // common practice) at a point off the optimum, where the gradient is not
    // zero, for every pair of parameters, scales included.
    let (spec, ds) = load("specs/commute_nested.toml");
    let family = sharecast::model::for_spec(&spec).unwrap();
    assert!(family.abilities().analytic_hessian);
    let fit = fit_spec(&spec, &ds);
    let beta: Vec<f64> = fit
        .beta
        .iter()
        .enumerate()
        .map(|(i, b)| b * (1.0 + 0.03 * ((i % 5) as f64 - 2.0)))
        .collect();
    let d = &fit.design;
    let free: Vec<usize> = (0..beta.len()).collect();
    let analytic = family.evaluate(d, &beta, true, true).hess.unwrap();
    let differenced = sharecast::model::hessian::differenced(&*family, d, &beta, &free);
    let k = beta.len();
    for a in 0..k {
        for b in 0..k {
            let (x, y) = (analytic[a * k + b], differenced[a * k + b]);
            let scale = (analytic[a * k + a] * analytic[b * k + b])
                .abs()
                .sqrt()
                .max(1.0);
            assert!(
                (x - y).abs() < 1e-6 * scale,
                "({}, {}): analytic {x} vs differenced {y}",
                fit.names[a],
                fit.names[b]
            );
        }
    }
}

#[test]
fn the_covariance_is_the_analytic_hessian_at_the_estimates() {
    // The search evaluates the costly analytic Hessian once, before Newton's
    // last tiny step, and the covariance reuses it: its standard errors equal
    // those of the Hessian at the final estimates to 1e-6 relative (the
    // tolerance docs/methods.md states; common practice for such reuse).
    let r = fixture();
    for name in ["ground", "public", "two_nests"] {
        let spec = nested_spec(&r["structures"][name], "");
        let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
        let fit = fit_spec(&spec, &ds);
        let k = fit.beta.len();
        let hess = fit
            .family
            .evaluate(&fit.design, &fit.beta, true, true)
            .hess
            .unwrap();
        let m = fit.free.len();
        let neg = nalgebra::DMatrix::from_fn(m, m, |a, b| -hess[fit.free[a] * k + fit.free[b]]);
        let inv = neg.try_inverse().unwrap();
        for (a, &p) in fit.free.iter().enumerate() {
            let se = inv[(a, a)].sqrt();
            assert_close(
                &format!("{name} {} s.e.", fit.parameters[p].name),
                fit.parameters[p].std_error,
                se,
                1e-6,
            );
        }
    }
}
