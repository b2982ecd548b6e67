//! Hardening, continued: fits do not depend on the units the user chose for
//! a variable (in every family, and for a lognormal coefficient), and a
//! lognormal coefficient the data want of the other sign is diagnosed as such.

use std::path::Path;
use std::sync::Arc;

use sharecast::estimate::{self, DiagnosticKind, Step};
use sharecast::model::registry::FAMILIES;

use crate::common::*;
use crate::hardening::no_nan;

/// The spec of the mixed family's example (as the family suite writes it)
/// with `x` given the distribution `dist`.
fn mixed_example(dist: &str) -> sharecast::spec::Spec {
    let alts: String = (0..4)
        .map(|a| {
            format!(
                "[alternatives.a{a}]\n{}",
                if a == 3 { "available = \"open\"\n" } else { "" }
            )
        })
        .collect();
    let text = format!(
        "[data]\nfile = \"never-read.csv\"\nlayout = \"wide\"\nchoice = \"alt\"\n[model]\nfamily = \"mixed\"\nbase = \"a0\"\n{alts}[[attribute]]\nname = \"x\"\ncolumns = {{ a0 = \"x_a0\", a1 = \"x_a1\", a2 = \"x_a2\", a3 = \"x_a3\" }}\nrandom = \"{dist}\"\n[[characteristic]]\nname = \"z\"\ncolumn = \"z\"\n[simulation]\ndraws = 200\n"
    );
    sharecast::model::parse_spec(&text, Path::new("/nowhere/sign.toml")).unwrap()
}

#[test]
fn a_lognormal_coefficient_the_data_want_of_the_other_sign_is_diagnosed_as_such() {
    let e = FAMILIES.iter().find(|e| e.name == "mixed").unwrap();
    // Simulated with x's coefficient normal around -0.8 (the suite's truth).
    let (_, _, _, d) = crate::families::setup(e, 1500, 21);
    let mut flipped = (*d.obs).clone();
    for v in flipped.attributes[0].iter_mut() {
        *v = -*v; // the same choices want a positive coefficient on -x
    }
    for (dist, obs, other) in [
        ("lognormal", (*d.obs).clone(), "negative-lognormal"),
        ("negative-lognormal", flipped, "lognormal"),
    ] {
        let spec = mixed_example(dist);
        let quiet = |_s: Step| {};
        let fit = estimate::fit(&spec, Arc::new(obs), &quiet).unwrap();
        let kinds: Vec<DiagnosticKind> = fit.diagnostics.iter().map(|d| d.kind).collect();
        let sign = fit
            .diagnostics
            .iter()
            .find(|d| d.kind == DiagnosticKind::OppositeSign)
            .unwrap_or_else(|| {
                panic!("{dist}: no opposite-sign diagnostic: {:?}", fit.diagnostics)
            });
        assert!(
            sign.message.contains(other) && sign.message.contains("`x`"),
            "{}",
            sign.message
        );
        assert!(
            !kinds.contains(&DiagnosticKind::Separation),
            "{dist}: {:?}",
            fit.diagnostics
        );
        assert!(
            !fit.diagnostics
                .iter()
                .any(|d| d.kind == DiagnosticKind::NotIdentified
                    && d.parameters.contains(&"x".to_string())),
            "{dist}: {:?}",
            fit.diagnostics
        );
        // The coefficient is 0: the location of its logarithm is far below
        // any value that moves utility (fact of the model: exp(-30) < 1e-13).
        let x = spec.parameter_index("x").unwrap();
        assert!(fit.beta[x] < -18.0, "{dist}: location {}", fit.beta[x]);
        // The other parameters keep their errors; the search stops in bounded passes.
        let z = spec
            .parameters
            .iter()
            .position(|p| p.name.starts_with("z"))
            .unwrap();
        assert!(
            fit.parameters[z].std_error.is_finite(),
            "{dist}: {:?}",
            fit.parameters[z]
        );
        assert!(
            fit.stats.passes < 1500,
            "{dist}: {} passes",
            fit.stats.passes
        );
        let text = sharecast::report::text::report(&spec, &fit, None, None, false);
        no_nan(&text);
        assert!(!text.contains("runs off"), "{text}");
    }
    // The right sign is not diagnosed: a negative-lognormal on the original data.
    let spec = mixed_example("negative-lognormal");
    let quiet = |_s: Step| {};
    let fit = estimate::fit(&spec, Arc::new((*d.obs).clone()), &quiet).unwrap();
    assert!(
        fit.diagnostics
            .iter()
            .all(|d| d.kind != DiagnosticKind::OppositeSign),
        "{:?}",
        fit.diagnostics
    );
}

/// The data of `d` with the first attribute (or, for a single-index family,
/// the first characteristic) multiplied by `f`.
fn rescaled(d: &sharecast::design::Design, single: bool, f: f64) -> sharecast::data::Observations {
    let mut obs = (*d.obs).clone();
    let col = if single {
        &mut obs.characteristics[0]
    } else {
        &mut obs.attributes[0]
    };
    for v in col.iter_mut() {
        *v *= f;
    }
    obs
}

#[test]
fn fits_do_not_depend_on_the_units_of_a_variable_in_any_family() {
    // Multiplying a variable by f divides its coefficient (and a normal
    // random coefficient's spread) and their standard errors by f and leaves
    // the log-likelihood unchanged (fact of the model: the utilities are the same).
    for e in FAMILIES {
        let single = e.rules.single_index();
        // The willingness-space mixed example (a lognormal price scale
        // correlated with a random constant) needs more data to have one
        // clear maximum.
        let n = if e.example_model.contains("willingness") && e.name == "mixed" {
            3000
        } else {
            600
        };
        let (spec, _, _, d) = crate::families::setup(e, n, 3);
        let quiet = |_s: Step| {};
        let base = estimate::fit(&spec, Arc::new((*d.obs).clone()), &quiet).unwrap();
        let var = if single { "z" } else { "x" };
        let moved: Vec<usize> = spec
            .parameters
            .iter()
            .enumerate()
            .filter(|(_, p)| {
                p.name == var
                    || p.name == format!("{var}_spread")
                    || p.name
                        .strip_prefix(var)
                        .is_some_and(|r| r.starts_with("_class"))
            })
            .map(|(k, _)| k)
            .collect();
        // In willingness-to-pay space with x the price, every value (and the
        // spread and Cholesky entries of a normal value) is in units of x:
        // multiplied by f (fact of the model: alpha / f times f x). A
        // lognormal x moves its location by -ln f, its spread unchanged.
        let family = sharecast::model::for_spec(&spec).unwrap();
        let terms = family.random_coefficients();
        let log_x = terms
            .iter()
            .any(|t| spec.parameters[t.location].name == var && t.distribution.is_log());
        let values: Vec<usize> = match family.willingness() {
            None => Vec::new(),
            Some(w) => w
                .values
                .iter()
                .flat_map(|&k| {
                    let mut v = vec![k];
                    if let Some(t) = terms.iter().find(|t| t.location == k) {
                        v.extend(t.loadings.iter().map(|l| l.0));
                    }
                    v
                })
                .collect(),
        };
        assert!(!moved.is_empty(), "{}", e.name);
        for f in [1e9, 1e-9] {
            let what = format!(
                "{} ({} alternatives), x {f:e}",
                e.name, e.example_alternatives
            );
            let fit = estimate::fit(&spec, Arc::new(rescaled(&d, single, f)), &quiet).unwrap();
            assert!(
                base.stats.converged && fit.stats.converged,
                "{what}: {:?}",
                fit.diagnostics
            );
            assert_close(
                &format!("{what}: log-likelihood"),
                fit.stats.log_likelihood,
                base.stats.log_likelihood,
                1e-8,
            );
            assert!(
                fit.diagnostics
                    .iter()
                    .all(|d| d.kind != DiagnosticKind::NotIdentified),
                "{what}: {:?}",
                fit.diagnostics
            );
            for (k, p) in fit.parameters.iter().enumerate() {
                let (m, shift) = match () {
                    _ if values.contains(&k) => (1.0 / f, 0.0),
                    _ if log_x && p.name == var => (1.0, f.ln()),
                    _ if log_x => (1.0, 0.0),
                    _ if moved.contains(&k) => (f, 0.0),
                    _ => (1.0, 0.0),
                };
                let b = &base.parameters[k];
                let tol_e = 1e-5 * b.std_error.max(b.estimate.abs() * 1e-3);
                assert!(
                    (p.estimate * m + shift - b.estimate).abs() <= tol_e.max(1e-12),
                    "{what}: `{}` {} x {m:e} against {}",
                    p.name,
                    p.estimate,
                    b.estimate
                );
                assert_close(
                    &format!("{what}: s.e. of `{}`", p.name),
                    p.std_error * m,
                    b.std_error,
                    1e-5,
                );
            }
        }
    }
}

#[test]
fn a_lognormal_coefficient_does_not_depend_on_the_units_of_its_variable() {
    // Multiplying x by f moves the location of the coefficient's logarithm
    // by -ln f and leaves its spread, their errors and the log-likelihood
    // unchanged (fact of the model: the utilities are the same).
    let e = FAMILIES.iter().find(|e| e.name == "mixed").unwrap();
    let (_, _, _, d) = crate::families::setup(e, 800, 8);
    let spec = mixed_example("negative-lognormal");
    let quiet = |_s: Step| {};
    let base = estimate::fit(&spec, Arc::new((*d.obs).clone()), &quiet).unwrap();
    let x = spec.parameter_index("x").unwrap();
    for f in [1e9, 1e-9] {
        let fit = estimate::fit(&spec, Arc::new(rescaled(&d, false, f)), &quiet).unwrap();
        assert!(
            base.stats.converged && fit.stats.converged,
            "{f:e}: {:?}",
            fit.diagnostics
        );
        assert_close(
            "log-likelihood",
            fit.stats.log_likelihood,
            base.stats.log_likelihood,
            1e-8,
        );
        assert!(
            (fit.beta[x] + f.ln() - base.beta[x]).abs()
                < 1e-5 * base.parameters[x].std_error.max(1e-3),
            "{f:e}: {} against {}",
            fit.beta[x],
            base.beta[x]
        );
        for (p, b) in fit.parameters.iter().zip(&base.parameters) {
            assert_close(
                &format!("{f:e}: s.e. of `{}`", p.name),
                p.std_error,
                b.std_error,
                1e-4,
            );
        }
        assert!(
            fit.diagnostics
                .iter()
                .all(|d| d.kind != DiagnosticKind::NotIdentified
                    && d.kind != DiagnosticKind::OppositeSign),
            "{f:e}: {:?}",
            fit.diagnostics
        );
    }
}
