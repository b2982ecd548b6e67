//! The catalogue's third part: the reports' own wording and layout (p-values,
//! the zero model, value ± error with the errors named, models named M1, M2,
//! ...), models that cannot be ranked, and writes that must not replace a link.

use crate::common::*;
use crate::limits::{run_in, setup, spec, CSV};
use sharecast::report::pval;

#[test]
fn p_values_have_two_significant_digits_and_a_floor() {
    // Our notation: plain to 0.001, e-notation below, `< 1e-12` under the floor.
    let cases = [
        (0.4567, "0.46"),
        (0.04567, "0.046"),
        (0.004567, "0.0046"),
        (0.001, "0.0010"),
        (0.000_456_7, "4.6e-4"),
        (2.94e-5, "2.9e-5"),
        (1.1e-12, "1.1e-12"),
        (9.9e-13, "< 1e-12"),
        (0.0, "< 1e-12"),
        (1.0, "1.0"),
        (f64::NAN, "—"),
    ];
    for (p, want) in cases {
        assert_eq!(pval(p), want, "p = {p}");
    }
}

#[test]
fn the_fit_report_names_its_errors_and_the_zero_model() {
    let (code, out, err) = run(&["fit", "specs/commute.toml"]);
    assert_eq!(code, 0, "{err}");
    for w in [
        "zero model",
        "rho² vs zero",
        "every coefficient 0, so each situation's available alternatives are equally likely",
        "value ± standard error clustered by decision maker",
        "-0.58466 ± 0.13993",
        "Hessian s.e.",
        "< 1e-12",
    ] {
        assert!(out.contains(w), "`{w}` not in:\n{out}");
    }
    for gone in ["<.0001", "at equal shares", "vs equal", "(equal shares"] {
        assert!(!out.contains(gone), "`{gone}` still in:\n{out}");
    }
    // Without groups the errors are the Hessian's, and the heading says so.
    let d = setup(
        "hessian_heading",
        CSV,
        &spec("d.csv", "").replace("group = \"who\"\n", ""),
    );
    let r = run_in(
        &d,
        &["fit", "spec.toml", "--no-analysis", "--allow-unconverged"],
        60,
    );
    assert!(
        r.1.contains("value ± standard error from the Hessian"),
        "{}",
        r.1
    );
    assert!(!r.1.contains("Hessian s.e."), "{}", r.1);
}

#[test]
fn compare_names_models_the_same_way_and_ranks_only_on_the_same_data() {
    let (code, out, err) = run(&[
        "compare",
        "specs/commute.toml",
        "specs/commute_generic.toml",
    ]);
    assert_eq!(code, 0, "{err}");
    for w in [
        "M1  specs/commute.toml",
        "errors clustered by decision maker",
        "asc_bus      M1    -0.58466 ± 0.13993",
        "by AIC: M1, M2",
        "M2 within M1",
    ] {
        assert!(out.contains(w), "`{w}` not in:\n{out}");
    }
    assert!(!out.contains("(0.1") && !out.contains("[1]"), "{out}");
    let (_, json, _) = run(&[
        "compare",
        "specs/commute.toml",
        "specs/commute_generic.toml",
        "--json",
    ]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["models"][1]["id"], "M2");
    assert_eq!(v["comparison"]["ids"][0], "M1");
    assert_eq!(v["comparison"]["comparable"], true);
    // Different data: the likelihoods are not comparable, so nothing is ranked.
    let (code, out, err) = run(&["compare", "specs/commute.toml", "specs/grocery.toml"]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("not ranked: M2 is fitted on other data than M1"),
        "{out}"
    );
    assert!(!out.contains("by AIC"), "{out}");
    let (_, json, _) = run(&[
        "compare",
        "specs/commute.toml",
        "specs/grocery.toml",
        "--json",
    ]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["comparison"]["comparable"], false);
    assert_eq!(v["comparison"]["aic_rank"].as_array().unwrap().len(), 0);
    assert!(v["comparison"]["note"]
        .as_str()
        .unwrap()
        .contains("not comparable"));
}

#[test]
fn a_dangling_symbolic_link_is_not_replaced_without_force() {
    let d = setup("dangling_link", CSV, &spec("d.csv", ""));
    write(
        &d,
        "s.toml",
        "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\n",
    );
    std::os::unix::fs::symlink(d.join("nowhere/target.csv"), d.join("out.csv")).unwrap();
    let args = [
        "simulate",
        "spec.toml",
        "--scenario",
        "s.toml",
        "--draws",
        "0",
        "--out",
        "out.csv",
    ];
    let r = run_in(&d, &args, 60);
    assert_eq!(r.0, 1, "{}", r.2);
    assert!(
        r.2.contains("out.csv") && r.2.contains("symbolic link") && r.2.contains("--force"),
        "{}",
        r.2
    );
    assert!(std::fs::symlink_metadata(d.join("out.csv"))
        .unwrap()
        .file_type()
        .is_symlink());
    let mut forced = args.to_vec();
    forced.push("--force");
    let r = run_in(&d, &forced, 60);
    assert_eq!(r.0, 0, "{}", r.2);
    // fit --save too
    std::os::unix::fs::symlink(d.join("gone.json"), d.join("saved.json")).unwrap();
    let r = run_in(
        &d,
        &[
            "fit",
            "spec.toml",
            "--no-analysis",
            "--allow-unconverged",
            "--save",
            "saved.json",
        ],
        60,
    );
    assert_eq!(r.0, 1, "{}", r.2);
    assert!(r.2.contains("symbolic link"), "{}", r.2);
}
