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
        "-0.82712 ± 0.16183",
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
        "asc_bus      M1    -0.82712 ± 0.16183",
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

#[test]
fn value_ratios_are_willingness_to_pay_with_their_unit() {
    // Sign convention (docs/methods.md): -scale·b_num/b_den for one unit more,
    // +scale·b_num/b_den for one unit less. Fixed coefficients make it exact.
    let extra = "[parameters]\ncost = { fixed = -0.5 }\nincome_b = { fixed = 0.25 }\n[[ratio]]\nname = \"more\"\nnumerator = \"income_b\"\ndenominator = \"cost\"\nunit = \"£ per thousand\"\n[[ratio]]\nname = \"less\"\nnumerator = \"income_b\"\ndenominator = \"cost\"\nscale = 2\nper = \"unit less\"\n";
    let d = setup("ratio_sign", CSV, &spec("d.csv", extra));
    let r = run_in(
        &d,
        &["fit", "spec.toml", "--json", "--allow-unconverged"],
        60,
    );
    assert_eq!(r.0, 0, "{}", r.2);
    let v: serde_json::Value = serde_json::from_str(&r.1).unwrap();
    let rows = v["ratios"].as_array().unwrap();
    // -1 · 0.25 / -0.5 = 0.5 for a unit more of a liked variable; 2 · 0.25 / -0.5 = -1 for a unit less
    assert_eq!(rows[0]["value"].as_f64(), Some(0.5));
    assert_eq!(rows[0]["unit"], "£ per thousand");
    assert_eq!(rows[0]["per"], "unit more");
    assert_eq!(rows[1]["value"].as_f64(), Some(-1.0));
    assert_eq!(rows[1]["per"], "unit less");
    let r = run_in(&d, &["fit", "spec.toml", "--allow-unconverged"], 60);
    assert!(r.1.contains("0.5000 ± 0.0000    £ per thousand"), "{}", r.1);
    assert!(r.1.contains("for 2 units less of `income_b`"), "{}", r.1);
    let bad = setup("ratio_per", CSV, &spec("d.csv", "[[ratio]]\nname = \"x\"\nnumerator = \"income_b\"\ndenominator = \"cost\"\nper = \"hour\"\n"));
    let r = run_in(&bad, &["check", "spec.toml"], 60);
    assert_eq!(r.0, 1, "{}", r.2);
    assert!(
        r.2.contains("[[ratio]] x") && r.2.contains("unit less"),
        "{}",
        r.2
    );
}

#[test]
fn check_says_which_shares_are_weighted() {
    let (code, out, err) = run(&["check", "specs/commute.toml"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("unweighted share  weighted share"), "{out}");
    // car: 1608 of 6000 situations chosen (counted in demo-data/commute.csv)
    assert!(
        out.contains("1608           0.2680          0.2665"),
        "{out}"
    );
    assert!(out.contains("as `fit` reports its shares"), "{out}");
}

#[test]
fn the_field_picks_its_own_cautions() {
    // The transport caution only where the spec says `field = "transport"`.
    let (_, commute, _) = run(&["fit", "specs/commute.toml", "--no-analysis"]);
    assert!(commute.contains("Transport appraisal"), "{commute}");
    let (_, grocery, _) = run(&["fit", "specs/grocery.toml", "--no-analysis"]);
    assert!(!grocery.contains("Transport"), "{grocery}");
    let d = setup("field_default", CSV, &spec("d.csv", ""));
    let r = run_in(
        &d,
        &["fit", "spec.toml", "--no-analysis", "--allow-unconverged"],
        60,
    );
    assert!(
        r.1.contains("Cautions:") && !r.1.contains("Transport"),
        "{}",
        r.1
    );
    write(
        &d,
        "bad.toml",
        &format!("field = \"trains\"\n{}", spec("d.csv", "")),
    );
    let r = run_in(&d, &["check", "bad.toml"], 60);
    assert_eq!(r.0, 1, "{}", r.2);
    assert!(
        r.2.contains("field: `trains`") && r.2.contains("transport"),
        "{}",
        r.2
    );
}

#[test]
fn flags_report_the_switch_from_0_to_1_not_an_elasticity() {
    // grocery: promo and eye_level are 0/1 attributes (demo-data/README.md).
    let (code, out, err) = run(&["fit", "specs/grocery.toml", "--json", "--draws", "100"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let el = v["elasticities"].as_array().unwrap();
    assert!(el
        .iter()
        .all(|e| e["variable"] != "promo" && e["variable"] != "eye_level"));
    assert!(el.iter().any(|e| e["variable"] == "price"));
    let flags = v["flag_effects"].as_array().unwrap();
    assert_eq!(
        flags.len(),
        2 * 5 * 5,
        "two flags, five brands, five shares"
    );
    for f in flags {
        let (s0, s1, ch) = (
            f["share_at_0"].as_f64().unwrap(),
            f["share_at_1"].as_f64().unwrap(),
            f["change"].as_f64().unwrap(),
        );
        assert!((s1 - s0 - ch).abs() < 1e-15);
        // facts of the logit with a positive flag coefficient: the own share rises, the others fall
        if f["changed"] == f["affected"] {
            assert!(ch > 0.0 && f["std_error"].as_f64().unwrap() > 0.0, "{f}");
        } else {
            assert!(ch < 0.0, "{f}");
        }
    }
    // Shares add up to one at 0 and at 1, so the changes of one switch add up to zero.
    for chunk in flags.chunks(5) {
        let sum: f64 = chunk.iter().map(|f| f["change"].as_f64().unwrap()).sum();
        assert!(sum.abs() < 1e-12, "{sum}");
    }
    let (_, text, _) = run(&["fit", "specs/grocery.toml", "--draws", "100"]);
    assert!(
        text.contains("0/1 variables (no elasticity") && text.contains("promo of own_label"),
        "{text}"
    );
    assert!(!text.contains("  promo of the row's"), "{text}");
}

#[test]
fn the_iia_test_says_what_its_degrees_of_freedom_count() {
    let (code, out, err) = run(&[
        "fit",
        "specs/commute.toml",
        "--iia-drop",
        "bike",
        "--draws",
        "100",
    ]);
    assert_eq!(code, 0, "{err}");
    let line = out
        .lines()
        .find(|l| l.starts_with("IIA"))
        .unwrap_or_default();
    assert!(
        line.contains("`bike` dropped") && !line.contains("<.0001"),
        "{out}"
    );
    assert!(
        out.contains("are estimated again without `bike`; if IIA holds they should barely move")
            && out.contains("degrees of freedom count the independent ways"),
        "{out}"
    );
    assert!(!out.contains("V_restricted"), "{out}");
}

#[test]
fn matrices_name_their_axes_in_their_corners_and_sections_follow_the_registry() {
    let (code, out, err) = run(&["fit", "specs/commute.toml", "--draws", "100"]);
    assert_eq!(code, 0, "{err}");
    for corner in [
        "cost of ↓ / share of →",
        "variable ↓ / share of →",
        "withdrawn ↓ / moves to →",
        "cost of ↓ / moves to →",
    ] {
        assert!(out.contains(corner), "`{corner}` not in:\n{out}");
    }
    for gone in ["row's", "column's", "changed \\ share", "removed \\ to"] {
        assert!(!out.contains(gone), "`{gone}` still in:\n{out}");
    }
    // The text report's blocks come in the registry's order (the page's).
    let blocks = [
        "━━ sharecast ━━",
        "how well it fits",
        "estimates · value",
        "value ratios:",
        "elasticities of predicted shares",
        "diversion on withdrawal",
        "shares (weighted)",
        "diagnostics",
        "Cautions:",
    ];
    let at: Vec<usize> = blocks
        .iter()
        .map(|b| {
            out.find(b)
                .unwrap_or_else(|| panic!("`{b}` not in:\n{out}"))
        })
        .collect();
    assert!(at.windows(2).all(|w| w[0] < w[1]), "{at:?}:\n{out}");
}

#[test]
fn a_lognormal_location_reads_as_the_mean_of_log_with_the_median_beside() {
    // express_survey: cost is negative-lognormal (specs/express_survey.toml).
    let (code, json, err) = run(&[
        "fit",
        "specs/express_survey.toml",
        "--json",
        "--no-analysis",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let cost = v["parameters"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["name"] == "cost")
        .unwrap();
    let m = cost["estimate"].as_f64().unwrap();
    let se = cost["robust_std_error"].as_f64().unwrap();
    // Fact of the method (common practice): the median of -exp(m + s z) is
    // -exp(m), its delta-method error exp(m)·se(m).
    let want = format!(
        "median {}",
        sharecast::report::plus_minus(-m.exp(), m.exp() * se)
    );
    let (code, out, err) = run(&["fit", "specs/express_survey.toml", "--no-analysis"]);
    assert_eq!(code, 0, "{err}");
    let line = out
        .lines()
        .find(|l| l.contains("cost (mean of log)"))
        .unwrap_or_else(|| panic!("no `cost (mean of log)` row:\n{out}"));
    assert!(
        line.contains(&want),
        "`{want}` not beside the location:\n{line}"
    );
    // Only the lognormal's location is relabelled.
    assert!(!out.contains("time (mean of log)"), "{out}");
    assert!(
        out.contains("mean of log: the location of a lognormal coefficient"),
        "{out}"
    );
}
