//! Crafted data that a choice model cannot learn from, and the diagnostics
//! that must name the parameters and spec terms at fault.

use std::fmt::Write;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use sharecast::data::{self, Extra};
use sharecast::estimate::{self, Diagnostic, DiagnosticKind, Fit, Step};
use sharecast::rng::Rng;

use crate::common::*;

fn fit_at(spec_path: &Path) -> Fit {
    let spec = sharecast::model::read_spec(spec_path).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let quiet = |_s: Step| {};
    estimate::fit(&spec, Arc::new(ds.obs), &quiet).unwrap()
}

fn of_kind(fit: &Fit, kind: DiagnosticKind) -> Vec<&Diagnostic> {
    fit.diagnostics.iter().filter(|d| d.kind == kind).collect()
}

/// A wide file of `n` three-alternative situations: costs `ca cb cc` that vary,
/// a `price` equal for all alternatives, `inc` and its copy `inc_copy`, `has_c`.
/// Choices follow a logit in cost and income so that everything else is identified.
fn three_way(n: usize, seed: u64, never_c: bool, c_never_available: bool) -> String {
    let mut rng = Rng::new(seed);
    let mut s = String::from("id,mode,ca,cb,cc,price,inc,inc_copy,has_c\n");
    for i in 0..n {
        let c = [
            1.0 + 2.0 * rng.uniform(),
            1.0 + 2.0 * rng.uniform(),
            1.0 + 2.0 * rng.uniform(),
        ];
        let price = 2.0 + rng.uniform();
        let inc = 10.0 + 40.0 * rng.uniform();
        let avail_c = !c_never_available && rng.uniform() < 0.8;
        let v = [
            -0.7 * c[0],
            0.2 - 0.7 * c[1] + 0.01 * inc,
            -0.2 - 0.7 * c[2],
        ];
        let mut best = 0;
        let mut best_u = f64::NEG_INFINITY;
        for (j, vj) in v.iter().enumerate() {
            if j == 2 && (!avail_c || never_c) {
                continue;
            }
            let u = vj + rng.gumbel();
            if u > best_u {
                best_u = u;
                best = j;
            }
        }
        let mode = ["a", "b", "c"][best];
        let _ = writeln!(
            s,
            "{},{mode},{:.3},{:.3},{:.3},{price:.3},{inc:.2},{inc:.2},{}",
            i + 1,
            c[0],
            c[1],
            c[2],
            avail_c as u8
        );
    }
    s
}

const HEAD: &str = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"mode\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[alternatives.c]\navailable = \"has_c\"\n[[attribute]]\nname = \"cost\"\ncolumns = { a = \"ca\", b = \"cb\", c = \"cc\" }\n";

fn case(name: &str, data: &str, spec: &str) -> PathBuf {
    let dir = scratch(&format!("diagnostics_{name}"));
    write(&dir, "d.csv", data);
    write(&dir, "spec.toml", spec)
}

#[test]
fn attribute_equal_across_alternatives_is_not_identified() {
    // Only utility differences matter in a choice model, so a variable with the
    // same value for every alternative drops out (fact of the method).
    let spec = format!(
        "{HEAD}[[attribute]]\nname = \"fee\"\ncolumns = {{ a = \"price\", b = \"price\", c = \"price\" }}\n"
    );
    let fit = fit_at(&case(
        "equal_attribute",
        &three_way(600, 1, false, false),
        &spec,
    ));
    let flat = of_kind(&fit, DiagnosticKind::NotIdentified);
    assert_eq!(flat.len(), 1, "{:?}", fit.diagnostics);
    assert_eq!(flat[0].parameters, vec!["fee".to_string()]);
    assert!(flat[0].message.contains("`fee`"), "{}", flat[0].message);
    assert!(
        flat[0].message.contains("attribute fee"),
        "{}",
        flat[0].message
    );
    // The identified parameters keep finite estimates; the unidentified one has no error.
    let k = fit.names.iter().position(|n| n == "fee").unwrap();
    assert!(fit.parameters[k].std_error.is_nan());
    let cost = fit.names.iter().position(|n| n == "cost").unwrap();
    assert!((fit.parameters[cost].estimate - -0.7).abs() < 0.3);
}

#[test]
fn identical_characteristic_columns_are_not_identified_together() {
    // Two copies of one column: only the sum of their coefficients is
    // estimable for each alternative (fact of the method: collinearity).
    let spec = format!(
        "{HEAD}[[characteristic]]\nname = \"income\"\ncolumn = \"inc\"\n[[characteristic]]\nname = \"wealth\"\ncolumn = \"inc_copy\"\n"
    );
    let fit = fit_at(&case(
        "twin_columns",
        &three_way(600, 2, false, false),
        &spec,
    ));
    let flat = of_kind(&fit, DiagnosticKind::NotIdentified);
    assert!(!flat.is_empty(), "{:?}", fit.diagnostics);
    let named: Vec<&String> = flat.iter().flat_map(|d| &d.parameters).collect();
    for p in ["income_b", "wealth_b", "income_c", "wealth_c"] {
        assert!(
            named.iter().any(|n| *n == p),
            "{p} not named: {:?}",
            fit.diagnostics
        );
    }
    for d in &flat {
        assert!(d.parameters.len() >= 2, "{:?}", d);
        assert!(d.message.contains("characteristic income"), "{}", d.message);
        assert!(d.message.contains("characteristic wealth"), "{}", d.message);
    }
    // The constants and cost are not caught up in it.
    assert!(!named.iter().any(|n| *n == "cost" || n.starts_with("asc_")));
}

#[test]
fn alternative_never_chosen_is_named() {
    let fit = fit_at(&case("never_chosen", &three_way(400, 3, true, false), HEAD));
    let never = of_kind(&fit, DiagnosticKind::NeverChosen);
    assert_eq!(never.len(), 1, "{:?}", fit.diagnostics);
    assert_eq!(never[0].parameters, vec!["asc_c".to_string()]);
    assert!(never[0].message.contains("`c`"), "{}", never[0].message);
    assert!(never[0].message.contains("never chosen"));
    // Reported once: the constant's run-off is not repeated as separation or a flat direction.
    assert_eq!(fit.diagnostics.len(), 1, "{:?}", fit.diagnostics);
    let k = fit.names.iter().position(|n| n == "asc_c").unwrap();
    assert!(fit.parameters[k].estimate < -10.0);
    // When that constant leaves the other errors undefined, the message says so.
    let cost = fit.names.iter().position(|n| n == "cost").unwrap();
    assert_eq!(
        fit.parameters[cost].std_error.is_nan(),
        never[0].message.contains("standard errors are withheld"),
        "{}",
        never[0].message
    );
}

#[test]
fn alternative_never_available_is_named() {
    let fit = fit_at(&case(
        "never_available",
        &three_way(400, 4, false, true),
        HEAD,
    ));
    let never = of_kind(&fit, DiagnosticKind::NeverAvailable);
    assert_eq!(never.len(), 1, "{:?}", fit.diagnostics);
    assert_eq!(never[0].parameters, vec!["asc_c".to_string()]);
    assert!(never[0].message.contains("`c`"), "{}", never[0].message);
    // Its constant cannot be learnt either.
    let flat = of_kind(&fit, DiagnosticKind::NotIdentified);
    assert!(
        flat.iter()
            .any(|d| d.parameters == vec!["asc_c".to_string()]),
        "{:?}",
        fit.diagnostics
    );
    assert!(of_kind(&fit, DiagnosticKind::NeverChosen).is_empty());
}

/// A binary file where `x < 0` always picks `stay` and `x > 0` always `go`.
fn separated() -> String {
    let mut rng = Rng::new(5);
    let mut s = String::from("id,pick,x,z\n");
    for i in 0..200 {
        let mut x = -2.0 + 4.0 * rng.uniform();
        if x.abs() < 0.05 {
            x += 0.1_f64.copysign(x);
        }
        let z = rng.normal();
        let pick = if x > 0.0 { "go" } else { "stay" };
        let _ = writeln!(s, "{},{pick},{x:.4},{z:.4}", i + 1);
    }
    s
}

const SEPARATED: &str = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"pick\"\n[model]\nfamily = \"logit\"\nbase = \"stay\"\n[alternatives.stay]\n[alternatives.go]\n[[characteristic]]\nname = \"x\"\ncolumn = \"x\"\n[[characteristic]]\nname = \"z\"\ncolumn = \"z\"\n";

#[test]
fn perfect_separation_is_named() {
    // Under complete separation the logit likelihood has no maximum: the
    // coefficient of the separating variable runs off to infinity
    // (Albert and Anderson 1984, Biometrika 71(1)).
    let path = case("separation", &separated(), SEPARATED);
    let fit = fit_at(&path);
    let sep = of_kind(&fit, DiagnosticKind::Separation);
    assert!(
        sep.iter()
            .any(|d| d.parameters == vec!["x_go".to_string()]
                && d.message.contains("characteristic x")),
        "{:?}",
        fit.diagnostics
    );
    assert!(
        !sep.iter().any(|d| d.parameters == vec!["z_go".to_string()]),
        "{:?}",
        fit.diagnostics
    );
    // Flat directions that come with the run-off are put down to it, not to collinearity.
    for d in of_kind(&fit, DiagnosticKind::NotIdentified) {
        if d.parameters.iter().any(|p| p == "x_go") {
            assert!(!d.message.contains("collinear"), "{}", d.message);
            assert!(d.message.contains("`x_go` runs off"), "{}", d.message);
        }
    }
    let x = fit.names.iter().position(|n| n == "x_go").unwrap();
    assert!(fit.parameters[x].estimate > 10.0, "{:?}", fit.parameters[x]);

    // The command line shows the diagnostic; without convergence it fails unless allowed.
    let p = path.to_str().unwrap();
    let (code, out, err) = run(&["fit", p]);
    assert_ne!(code, 101, "panicked: {err}");
    assert!(out.contains("x_go"), "{out}");
    assert!(out.contains("separates the choices"), "{out}");
    if fit.stats.converged {
        assert_eq!(code, 0, "{err}");
    } else {
        assert_eq!(code, 2, "{out}\n{err}");
        assert!(err.contains("--allow-unconverged"), "{err}");
        let (code, out, err) = run(&["fit", p, "--allow-unconverged"]);
        assert_eq!(code, 0, "{err}");
        assert!(out.contains("separates the choices"), "{out}");
    }
}
