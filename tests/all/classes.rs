//! The latent class logit against an independent numpy/scipy implementation
//! (tests/reference/classes_reference.py, fixture
//! tests/fixtures/classes_reference.json, invented garden-centre data): the
//! log-likelihood and its gradient at a fixed point, the estimates after
//! numbering the classes by share, their classical and clustered errors,
//! the class shares with delta-method errors and the posterior class
//! probabilities; and the two facts of the model the reference also checks.

use std::sync::Arc;

use serde_json::Value;
use sharecast::data::{self, Extra};
use sharecast::design::Design;
use sharecast::estimate::{self, Fit, Step};
use sharecast::model;
use sharecast::spec::Spec;

use crate::common::*;

pub fn fixture() -> Value {
    let text = std::fs::read_to_string(path("tests/fixtures/classes_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

pub fn case<'a>(r: &'a Value, name: &str) -> &'a Value {
    r["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == name)
        .unwrap()
}

pub fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

/// The case's data as a wide CSV in a scratch folder, and a spec for it
/// with `classes` classes and `model` extra `[model]` lines.
pub fn case_spec(c: &Value, classes: usize, model: &str) -> (Spec, data::Dataset) {
    let name = c["name"].as_str().unwrap();
    let dir = scratch(&format!("classes-{name}-{classes}-{}", model.len()));
    let alts: Vec<&str> = c["alternatives"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a.as_str().unwrap())
        .collect();
    let cols = c["columns"].as_object().unwrap();
    let names: Vec<&String> = cols.keys().collect();
    let chosen = c["chosen"].as_array().unwrap();
    let person = c["person"].as_array();
    let mut csv = format!(
        "{}choice,{}\n",
        if person.is_some() { "person," } else { "" },
        names
            .iter()
            .map(|s| s.as_str())
            .collect::<Vec<_>>()
            .join(",")
    );
    for (i, ch) in chosen.iter().enumerate() {
        if let Some(p) = person {
            csv.push_str(&format!("{},", p[i]));
        }
        let alt = match ch {
            Value::String(s) => s.clone(),
            v => alts[v.as_u64().unwrap() as usize].to_string(),
        };
        csv.push_str(&alt);
        for n in &names {
            csv.push_str(&format!(",{}", cols[n.as_str()][i]));
        }
        csv.push('\n');
    }
    write(&dir, "data.csv", &csv);
    let membership: Vec<String> = c["membership"]
        .as_array()
        .unwrap()
        .iter()
        .map(|m| format!("\"{}\"", m.as_str().unwrap()))
        .collect();
    let mut spec = format!(
        "[data]\nfile = \"data.csv\"\nlayout = \"wide\"\nchoice = \"choice\"\n{}[model]\nfamily = \"latent-class\"\nbase = \"{}\"\nclasses = {classes}\n{}{model}",
        if person.is_some() { "group = \"person\"\n" } else { "" },
        c["base"].as_str().unwrap(),
        if classes > 1 && !membership.is_empty() {
            format!("membership = [{}]\n", membership.join(", "))
        } else {
            String::new()
        }
    );
    for a in &alts {
        spec.push_str(&format!("[alternatives.{a}]\n"));
    }
    // The terms in the order of the reference's parameters.
    let params: Vec<&str> = c["parameters"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_str().unwrap())
        .collect();
    let mut terms: Vec<(&String, &Value)> = c["terms"].as_object().unwrap().iter().collect();
    terms.sort_by_key(|(t, _)| params.iter().position(|p| *p == format!("{t}_class1")));
    for (term, by_alt) in terms {
        let cols: Vec<String> = by_alt
            .as_object()
            .unwrap()
            .iter()
            .map(|(a, col)| format!("{a} = \"{}\"", col.as_str().unwrap()))
            .collect();
        spec.push_str(&format!(
            "[[attribute]]\nname = \"{term}\"\ncolumns = {{ {} }}\n",
            cols.join(", ")
        ));
    }
    let file = write(&dir, "spec.toml", &spec);
    let spec = model::read_spec(&file).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    (spec, ds)
}

fn fit_case(c: &Value) -> (Spec, Fit) {
    let classes = c["classes"].as_u64().unwrap() as usize;
    let (spec, ds) = case_spec(c, classes, "starts = 10\n");
    let quiet = |_s: Step| {};
    let fit = estimate::fit(&spec, Arc::new(ds.obs), &quiet).unwrap();
    (spec, fit)
}

const CASES: [&str; 3] = ["panel_two", "cross_section_two", "panel_three"];

#[test]
fn likelihood_and_gradient_match_the_reference_at_a_point() {
    let r = fixture();
    for name in CASES {
        let c = case(&r, name);
        let classes = c["classes"].as_u64().unwrap() as usize;
        let (spec, ds) = case_spec(c, classes, "");
        let names: Vec<&str> = spec.parameters.iter().map(|p| p.name.as_str()).collect();
        let want: Vec<&str> = c["parameters"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_str().unwrap())
            .collect();
        // The parameter order fixed by the issue: class-major utility
        // parameters, then the membership parameters of classes 2..K.
        assert_eq!(names, want, "{name}: parameter order");
        let family = model::for_spec(&spec).unwrap();
        let d = Design::build(&spec, Arc::new(ds.obs));
        let point = floats(&c["point"]);
        let e = family.evaluate(&d, &point, true, false);
        // tests/reference/classes_reference.py, independent numpy/scipy
        // implementation: log-likelihood and analytic gradient to 1e-9.
        assert_close(
            &format!("{name} log-likelihood"),
            e.ll,
            c["ll_at_point"].as_f64().unwrap(),
            1e-9,
        );
        for (k, g) in floats(&c["grad_at_point"]).iter().enumerate() {
            assert!(
                (e.grad[k] - g).abs() <= 1e-8 * g.abs().max(1.0),
                "{name}: gradient {}: {} vs reference {g}",
                want[k],
                e.grad[k]
            );
        }
    }
}

#[test]
fn estimates_errors_shares_and_posteriors_match_the_reference() {
    let r = fixture();
    for name in CASES {
        let c = case(&r, name);
        let (spec, fit) = fit_case(c);
        assert!(fit.stats.converged, "{name}: not converged");
        // tests/reference/classes_reference.py (EM from 50 random starts,
        // then BFGS and Newton to max |gradient| < 1e-8): log-likelihood
        // 1e-6, estimates 1e-4 with the classes numbered by share.
        assert!(
            (fit.stats.log_likelihood - c["ll_at_estimates"].as_f64().unwrap()).abs() < 1e-6,
            "{name}: log-likelihood {} vs reference {}",
            fit.stats.log_likelihood,
            c["ll_at_estimates"]
        );
        let (est, se, rse) = (
            floats(&c["estimates"]),
            floats(&c["std_errors"]),
            floats(&c["robust_std_errors"]),
        );
        for (k, row) in fit.parameters.iter().enumerate() {
            assert!(
                (row.estimate - est[k]).abs() <= 1e-4 * est[k].abs().max(1.0),
                "{name} {}: {} vs reference {}",
                row.name,
                row.estimate,
                est[k]
            );
            // Classical errors from the Hessian, clustered ones by decision
            // maker: the reference's, to 1e-4 (ours difference the gradient).
            assert_close(
                &format!("{name} {} s.e.", row.name),
                row.std_error,
                se[k],
                1e-4,
            );
            assert_close(
                &format!("{name} {} robust s.e.", row.name),
                row.robust_std_error,
                rse[k],
                1e-4,
            );
        }
        // The class shares (average prior membership) with delta-method
        // errors, under the covariance the reference names.
        let derived = sharecast::analysis::derived(&spec, &fit);
        let shares: Vec<_> = derived
            .iter()
            .filter(|d| d.group == model::classes::SHARES)
            .collect();
        for (k, (s, e)) in floats(&c["class_shares"])
            .iter()
            .zip(floats(&c["class_share_std_errors"]))
            .enumerate()
        {
            assert!((shares[k].value - s).abs() < 1e-5, "{name}: share {k}");
            assert_close(
                &format!("{name} share {k} s.e."),
                shares[k].std_error,
                e,
                1e-3,
            );
        }
        // Posterior class probabilities of the first decision makers.
        let post = fit
            .family
            .posterior_classes(&fit.design, &fit.beta)
            .unwrap();
        for (n, row) in c["posterior"].as_array().unwrap().iter().enumerate() {
            for (k, p) in floats(row).iter().enumerate() {
                let got = post.probabilities[n * post.classes + k];
                assert!(
                    (got - p).abs() < 1e-5,
                    "{name}: posterior {n},{k}: {got} vs {p}"
                );
            }
        }
        // How the starts fared is reported.
        let starts = fit.stats.starts.as_ref().unwrap();
        assert_eq!(starts.tried, 10);
        assert!(starts.reached_best >= 1 && starts.reached_best <= 10);
    }
}

#[test]
fn one_class_is_the_logit_and_equal_tastes_give_the_logits_likelihood() {
    let r = fixture();
    let facts = &r["fact_checks"];
    let c = case(&r, "panel_two");
    // classes = 1 is the logit (fact of the model; the reference's logit
    // likelihood and estimates, to 1e-9 and 1e-6).
    let (spec, ds) = case_spec(c, 1, "");
    let one = &facts["one_class_is_logit"];
    let family = model::for_spec(&spec).unwrap();
    let d = Design::build(&spec, Arc::new(ds.obs.clone()));
    let e = family.evaluate(&d, &floats(&one["point"]), false, false);
    assert_close("one class", e.ll, one["logit_ll"].as_f64().unwrap(), 1e-9);
    let quiet = |_s: Step| {};
    let fit = estimate::fit(&spec, Arc::new(ds.obs), &quiet).unwrap();
    assert_close(
        "one class at its estimates",
        fit.stats.log_likelihood,
        one["logit_ll_at_estimates"].as_f64().unwrap(),
        1e-9,
    );
    for (row, want) in fit.parameters.iter().zip(floats(&one["logit_estimates"])) {
        assert!((row.estimate - want).abs() < 1e-6, "{}", row.name);
    }
    // Every class with the same tastes: the logit's likelihood whatever the
    // membership parameters (fact of the model; the reference's points).
    let (spec, ds) = case_spec(c, 2, "");
    let family = model::for_spec(&spec).unwrap();
    let d = Design::build(&spec, Arc::new(ds.obs));
    let eq = &facts["equal_tastes_is_logit"];
    for p in eq["points"].as_array().unwrap() {
        let e = family.evaluate(&d, &floats(&p["point"]), false, false);
        assert_close("equal tastes", e.ll, eq["logit_ll"].as_f64().unwrap(), 1e-9);
    }
}
