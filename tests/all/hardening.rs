//! Hardening: classes of fault found with awkward inputs. A spec and data
//! that `check` accepts reach the search in `fit` (every refusal that depends
//! on the spec and the data alone is made when the model is opened, with the
//! fit's message); starts or fixed values at which the log-likelihood is not
//! finite are refused naming them, and no figure of a fit is NaN or infinite;
//! a spec whose parameters are all fixed is evaluated and forecast.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use sharecast::estimate::{self, DiagnosticKind, Step};
use sharecast::model::registry::FAMILIES;

use crate::common::*;

/// A demo data file by its absolute path (specs in scratch folders name it so).
fn demo(name: &str) -> String {
    path(&format!("demo-data/{name}")).display().to_string()
}

/// `check` and `fit` on `spec` both refuse, with the same message, containing `want`.
#[track_caller]
fn same_refusal(spec: &Path, want: &str) {
    let s = spec.to_str().unwrap();
    let (cc, _, cerr) = run(&["check", s]);
    let (fc, _, ferr) = run(&["fit", s, "--no-analysis"]);
    assert_ne!(cc, 0, "check accepted {s}:\n{cerr}");
    assert_ne!(fc, 0, "fit accepted {s}:\n{ferr}");
    assert!(
        !cerr.contains("panicked") && !ferr.contains("panicked"),
        "{cerr}\n{ferr}"
    );
    assert!(
        cerr.contains(want),
        "check's message lacks `{want}`:\n{cerr}"
    );
    let last = |e: &str| {
        e.lines()
            .rev()
            .find(|l| !l.trim().is_empty())
            .unwrap_or("")
            .to_string()
    };
    assert_eq!(last(&cerr), last(&ferr), "check and fit refuse differently");
}

const EXPRESS_HEAD: &str = "[data]\nlayout = \"wide\"\nchoice = \"choice\"\ngroup = \"respondent\"\n[model]\nfamily = \"mixed\"\nbase = \"car\"\n[alternatives.car]\navailable = \"car_owner\"\n[alternatives.coach]\n[alternatives.rail]\n";

fn express_spec(dir: &Path, name: &str, file: &str, extra_data: &str, body: &str) -> PathBuf {
    let head = EXPRESS_HEAD.replace(
        "[data]\n",
        &format!("[data]\nfile = \"{file}\"\n{extra_data}"),
    );
    write(dir, name, &format!("{head}{body}"))
}

fn random_attributes(n: usize) -> String {
    (0..n)
        .map(|i| format!("[[attribute]]\nname = \"t{i}\"\ncolumns = {{ car = \"car_time\", coach = \"coach_time\", rail = \"rail_time\" }}\nrandom = \"normal\"\n"))
        .collect()
}

#[test]
fn check_refuses_more_random_dimensions_than_halton_supports_as_fit_does() {
    let dir = scratch("hardening_halton");
    let file = demo("express_survey.csv");
    // 41 random coefficients, one more than the sequence supports.
    let body = format!("{}[simulation]\ndraws = 5\n", random_attributes(41));
    same_refusal(
        &express_spec(&dir, "a.toml", &file, "", &body),
        "Halton sequence",
    );
    // Random constants count as dimensions too.
    let body = format!("{}[simulation]\ndraws = 5\n", random_attributes(39));
    let spec = express_spec(&dir, "b.toml", &file, "", &body);
    let text = std::fs::read_to_string(&spec).unwrap().replace(
        "base = \"car\"\n",
        "base = \"car\"\nrandom_constants = [\"coach\", \"rail\"]\n",
    );
    std::fs::write(&spec, text).unwrap();
    same_refusal(&spec, "this model has 41");
    // At 40 (the limit) check accepts, and another sequence lifts the limit.
    let ok = express_spec(
        &dir,
        "c.toml",
        &file,
        "",
        &format!(
            "{}[simulation]\ndraws = 5\nsequence = \"mlhs\"\n",
            random_attributes(41)
        ),
    );
    let (code, _, err) = run(&["check", ok.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
}

#[test]
fn check_refuses_a_panel_weight_that_changes_within_a_decision_maker_as_fit_does() {
    let dir = scratch("hardening_weight");
    let text = std::fs::read_to_string(path("demo-data/express_survey.csv")).unwrap();
    let mut csv = String::new();
    for (i, line) in text.lines().enumerate() {
        let w = match i {
            0 => "w",
            4 => "2", // the third task of the first respondent
            _ => "1",
        };
        csv.push_str(&format!("{line},{w}\n"));
    }
    write(&dir, "d.csv", &csv);
    let body = "[[attribute]]\nname = \"cost\"\ncolumns = { car = \"car_cost\", coach = \"coach_fare\", rail = \"rail_fare\" }\nrandom = \"normal\"\n[simulation]\ndraws = 5\n";
    let spec = express_spec(&dir, "s.toml", "d.csv", "weight = \"w\"\n", body);
    same_refusal(&spec, "the weight changes within decision maker (row 4");
    // The same weight in every situation of each person is accepted.
    write(
        &dir,
        "d.csv",
        &csv.replace("\n2\n", "\n1\n").replace(",2\n", ",1\n"),
    );
    let (code, _, err) = run(&["check", spec.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
}

#[test]
fn check_refuses_an_ordered_category_never_observed_and_draws_past_memory_as_fit_does() {
    let dir = scratch("hardening_unobserved");
    let text = std::fs::read_to_string(path("demo-data/ratings.csv")).unwrap();
    let kept: Vec<&str> = text
        .lines()
        .enumerate()
        .filter(|(i, l)| *i == 0 || l.split(',').nth(2) != Some("5"))
        .map(|(_, l)| l)
        .collect();
    write(&dir, "r.csv", &(kept.join("\n") + "\n"));
    let cats: String = ["very_poor", "poor", "fair", "good", "excellent"]
        .iter()
        .enumerate()
        .map(|(k, n)| format!("[alternatives.{n}]\ncode = {}\n", k + 1))
        .collect();
    let spec = write(
        &dir,
        "o.toml",
        &format!("[data]\nfile = \"r.csv\"\nlayout = \"wide\"\nchoice = \"rating\"\n[model]\nfamily = \"ordered-probit\"\n{cats}[[characteristic]]\nname = \"wait\"\ncolumn = \"wait_minutes\"\n"),
    );
    same_refusal(&spec, "category `excellent` is never observed");
    // Draws that would not fit in memory: 600 decision makers x 10 dimensions x 100,000 draws.
    let body = format!("{}[simulation]\ndraws = 100000\n", random_attributes(10));
    let spec = express_spec(&dir, "m.toml", &demo("express_survey.csv"), "", &body);
    same_refusal(
        &spec,
        "[simulation].draws: 100000 draws x 10 dimensions x 600 decision makers",
    );
}

/// Fits `spec` on the data of `d`, quietly.
fn fit_on(
    spec: &sharecast::spec::Spec,
    d: &sharecast::design::Design,
) -> sharecast::error::Result<estimate::Fit> {
    let quiet = |_s: Step| {};
    estimate::fit(spec, Arc::new((*d.obs).clone()), &quiet)
}

/// Every figure of a fit that the reports print as a number is finite.
#[track_caller]
fn all_finite(what: &str, fit: &estimate::Fit) {
    let s = &fit.stats;
    for (name, v) in [
        ("log-likelihood", s.log_likelihood),
        ("zero model", s.null_log_likelihood),
        ("constants only", s.constants_log_likelihood),
        ("rho²", s.rho_squared),
        ("rho² vs constants", s.rho_squared_constants),
        ("adjusted rho²", s.adjusted_rho_squared),
        ("AIC", s.aic),
        ("BIC", s.bic),
        ("gradient norm", s.gradient_norm),
    ] {
        assert!(v.is_finite(), "{what}: {name} is {v}");
    }
    for p in &fit.parameters {
        assert!(
            p.estimate.is_finite(),
            "{what}: `{}` = {}",
            p.name,
            p.estimate
        );
    }
    for sh in &fit.shares {
        assert!(
            sh.predicted.is_finite(),
            "{what}: share of {}",
            sh.alternative
        );
    }
}

#[test]
fn absurd_starts_are_refused_naming_them_or_fit_with_finite_figures_in_every_family() {
    for e in FAMILIES {
        let (spec, _, _, d) = crate::families::setup(e, 300, 11);
        for v in [1e12, -1e12, 1e300] {
            // Every start absurd, then only the last parameter's.
            let k = spec.parameters.len();
            for which in [(0..k).collect::<Vec<_>>(), vec![k - 1]] {
                let mut s = spec.clone();
                for &p in &which {
                    s.parameters[p].start = v;
                }
                let what = format!(
                    "{} ({} alternatives), start {v:e} on {which:?}",
                    e.name, e.example_alternatives
                );
                match fit_on(&s, &d) {
                    Ok(fit) => all_finite(&what, &fit),
                    Err(err) => {
                        let m = err.to_string();
                        assert!(m.contains("not finite"), "{what}: {m}");
                        let named = which
                            .iter()
                            .any(|&p| m.contains(&format!("`{}`", s.parameters[p].name)));
                        assert!(named, "{what}: the refusal names no parameter: {m}");
                    }
                }
            }
        }
    }
}

#[test]
fn fixed_values_that_give_a_chosen_alternative_probability_zero_are_refused_naming_them() {
    for e in FAMILIES {
        let (spec, _, _, d) = crate::families::setup(e, 200, 5);
        let mut s = spec.clone();
        let p = s
            .parameters
            .iter()
            .position(|p| !matches!(p.term, sharecast::spec::Term::Family(_)))
            .unwrap();
        s.parameters[p].fixed = Some(1e300);
        s.parameters[p].start = 1e300;
        let what = format!("{} ({} alternatives)", e.name, e.example_alternatives);
        match fit_on(&s, &d) {
            Ok(fit) => all_finite(&what, &fit),
            Err(err) => {
                let m = err.to_string();
                assert!(
                    m.contains("not finite") && m.contains(&format!("`{}`", s.parameters[p].name)),
                    "{what}: {m}"
                );
            }
        }
    }
}

const RATINGS_CATS: &str = "[alternatives.very_poor]\ncode = 1\n[alternatives.poor]\ncode = 2\n[alternatives.fair]\ncode = 3\n[alternatives.good]\ncode = 4\n[alternatives.excellent]\ncode = 5\n";

fn ratings_spec(dir: &Path, name: &str, family: &str, file: &str, extra: &str) -> PathBuf {
    write(
        dir,
        name,
        &format!("[data]\nfile = \"{file}\"\nlayout = \"wide\"\nchoice = \"rating\"\n[model]\nfamily = \"{family}\"\n{RATINGS_CATS}[[characteristic]]\nname = \"wait_minutes\"\ncolumn = \"wait_minutes\"\n[[characteristic]]\nname = \"first_time\"\ncolumn = \"first_time\"\n{extra}"),
    )
}

/// No `NaN` or `inf` in a text report, and no non-finite number in a JSON one.
#[track_caller]
pub(crate) fn no_nan(text: &str) {
    for bad in ["NaN", "inf ", " inf", "-inf"] {
        assert!(!text.contains(bad), "`{bad}` in:\n{text}");
    }
}

#[test]
fn absurd_ordered_cut_point_starts_are_refused_with_the_parameters_named() {
    // Regression: cut-points started near 1e12 printed NaN for the
    // log-likelihood, the gradient, the constants-only model, rho², AIC, BIC.
    let dir = scratch("hardening_cuts");
    let file = demo("ratings.csv");
    for family in ["ordered-logit", "ordered-probit"] {
        let extra = "[parameters]\ncut_very_poor = { start = 1e12 }\ncut_poor = { start = 2e12 }\ncut_fair = { start = 3e12 }\ncut_good = { start = 4e12 }\n";
        let spec = ratings_spec(&dir, "o.toml", family, &file, extra);
        let (code, out, err) = run(&["fit", spec.to_str().unwrap(), "--no-analysis"]);
        assert_ne!(code, 0, "{out}");
        assert!(
            err.contains("not finite") && err.contains("`cut_very_poor` = 1e12"),
            "{err}"
        );
        no_nan(&out);
        // A far but usable start: the fit reports finite figures.
        let extra = "[parameters]\nwait_minutes = { start = 0.3 }\ncut_good = { start = 40 }\n";
        let spec = ratings_spec(&dir, "p.toml", family, &file, extra);
        for args in [
            vec!["fit", spec.to_str().unwrap(), "--no-analysis"],
            vec!["fit", spec.to_str().unwrap(), "--no-analysis", "--json"],
        ] {
            let (_, out, err) = run(&args);
            assert!(!err.contains("panicked"), "{err}");
            no_nan(&out);
            if args.len() == 4 {
                let doc: serde_json::Value =
                    serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {out}"));
                let ll = &doc["fit"]["log_likelihood"];
                assert!(ll.as_f64().is_some_and(f64::is_finite), "{ll}");
            }
        }
    }
}

/// A logit spec on the commute demo with three alternatives, every parameter fixed.
fn all_fixed_logit(dir: &Path) -> PathBuf {
    let text = std::fs::read_to_string(path("demo-data/commute.csv")).unwrap();
    let mut lines = text.lines();
    let head = lines.next().unwrap();
    let mode = head.split(',').position(|c| c == "mode").unwrap();
    let mut csv = format!("{head}\n");
    for l in lines {
        if ["car", "bus", "rail"].contains(&l.split(',').nth(mode).unwrap_or("")) {
            csv.push_str(&format!("{l}\n"));
        }
    }
    write(dir, "c.csv", &csv);
    write(
        dir,
        "s.toml",
        "[[change]]\nattribute = \"cost\"\nalternative = \"bus\"\nmultiply = 1.2\n",
    );
    write(
        dir,
        "fixed.toml",
        "[data]\nfile = \"c.csv\"\nlayout = \"wide\"\nchoice = \"mode\"\n[model]\nfamily = \"logit\"\nbase = \"car\"\n[alternatives.car]\navailable = \"has_car\"\n[alternatives.bus]\n[alternatives.rail]\n[[attribute]]\nname = \"cost\"\ncolumns = { car = \"car_cost\", bus = \"bus_fare\", rail = \"rail_fare\" }\n[parameters]\ncost = { fixed = -0.1 }\nasc_bus = { fixed = 0.1 }\nasc_rail = { fixed = 0.2 }\n",
    )
}

#[test]
fn a_spec_with_every_parameter_fixed_is_evaluated_and_forecast() {
    // Regression: `chunk size must be non-zero` panicked in the analysis.
    let dir = scratch("hardening_all_fixed");
    let spec = all_fixed_logit(&dir);
    let s = spec.to_str().unwrap();
    let (code, out, err) = run(&["fit", s]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("every parameter is fixed"), "{out}");
    assert!(out.contains("no standard errors"), "{out}");
    no_nan(&out);
    let (code, out, err) = run(&["fit", s, "--json"]);
    assert_eq!(code, 0, "{err}");
    let doc: serde_json::Value = serde_json::from_str(&out).unwrap();
    let ll = doc["fit"]["log_likelihood"].as_f64().unwrap();
    assert!(ll.is_finite() && ll < 0.0, "{ll}");
    assert!(
        doc["diagnostics"]
            .as_array()
            .unwrap()
            .iter()
            .any(|d| d["kind"] == "all_fixed"),
        "{out}"
    );
    let (code, out, err) = run(&[
        "simulate",
        s,
        "--scenario",
        dir.join("s.toml").to_str().unwrap(),
        "--draws",
        "20",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("bus"), "{out}");
    no_nan(&out);
    // The library path the workbench uses: open, then fit.
    let (spec, ds) = sharecast::workspace::open(&spec, &Default::default()).unwrap();
    let quiet = |_s: Step| {};
    let (fit, _) =
        sharecast::workspace::fit_or_restore(&spec, Arc::new(ds.obs.clone()), None, &quiet)
            .unwrap();
    assert!(fit.free.is_empty());
    assert!(fit
        .diagnostics
        .iter()
        .any(|d| d.kind == DiagnosticKind::AllFixed));
    all_finite("all fixed", &fit);
    // The log-likelihood at the fixed values is the logit's at them: the sum
    // of the log-probabilities of the chosen alternatives (fact of the model).
    let b = sharecast::model::Baseline::new(&*fit.family, &fit.design, &fit.beta);
    let obs = &fit.design.obs;
    let j = obs.alternatives;
    let ll: f64 = (0..obs.situations)
        .map(|i| obs.weight[i] * b.probabilities[i * j + obs.chosen[i] as usize].ln())
        .sum();
    assert_close(
        "log-likelihood at the fixed values",
        fit.stats.log_likelihood,
        ll,
        1e-10,
    );
}

#[test]
fn a_search_that_fails_from_given_starts_is_run_again_from_the_default_start() {
    // From `cost` = 1e3 the quasi-Newton phase steps out of the finite
    // numbers and the search does not converge; the default start does.
    let dir = scratch("hardening_restart");
    let fixed = std::fs::read_to_string(all_fixed_logit(&dir)).unwrap();
    let free = fixed.split("[parameters]").next().unwrap().to_string();
    let far = format!("{free}[parameters]\ncost = {{ start = 1e3 }}\n");
    let free = write(&dir, "free.toml", &free);
    let far = write(&dir, "far.toml", &far);
    let json = |p: &Path| {
        let (code, out, err) = run(&["fit", p.to_str().unwrap(), "--no-analysis", "--json"]);
        assert_eq!(code, 0, "{err}");
        serde_json::from_str::<serde_json::Value>(&out).unwrap()
    };
    let (a, b) = (json(&free), json(&far));
    let restarted: Vec<&serde_json::Value> = b["diagnostics"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|d| d["kind"] == "restarted")
        .collect();
    assert_eq!(restarted.len(), 1, "{b}");
    assert!(
        restarted[0]["message"]
            .as_str()
            .unwrap()
            .contains("`cost` = 1e3"),
        "{b}"
    );
    assert!(b["fit"]["converged"].as_bool().unwrap(), "{b}");
    let ll = |d: &serde_json::Value| d["fit"]["log_likelihood"].as_f64().unwrap();
    assert_close("log-likelihood after the restart", ll(&b), ll(&a), 1e-10);
    assert!(
        a["diagnostics"]
            .as_array()
            .unwrap()
            .iter()
            .all(|d| d["kind"] != "restarted"),
        "{a}"
    );
    let (_, text, _) = run(&["fit", far.to_str().unwrap(), "--no-analysis"]);
    assert!(text.contains("run again from the default start"), "{text}");
    no_nan(&text);
}
