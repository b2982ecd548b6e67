//! The latent class logit from the command line and on the garden demo:
//! recovery of the generating segments, the fit by number of classes, the
//! posterior class probabilities file, calibration and a new alternative
//! through the classes, and the spec's refusals naming their key.

use std::path::Path;

use serde_json::Value;
use sharecast::demo::{GARDEN_SHARES, GARDEN_TRUTH};

use crate::common::*;

const SPEC: &str = "specs/garden_classes.toml";

/// The garden demo's spec text with its data file made absolute and the
/// `[model]` lines after `family` replaced by `model`.
fn garden_variant(dir: &Path, name: &str, model: &str) -> String {
    let text = std::fs::read_to_string(path(SPEC)).unwrap();
    let data = path("demo-data/garden_panel.csv");
    let mut out = String::new();
    let mut in_model = false;
    for line in text.lines() {
        let key = line.split('=').next().unwrap_or("").trim();
        if line.starts_with('[') {
            in_model = line.starts_with("[model]");
        }
        if in_model && ["classes", "membership", "starts"].contains(&key) {
            continue;
        }
        if line.starts_with("file =") {
            out.push_str(&format!("file = {:?}\n", data.display().to_string()));
            continue;
        }
        out.push_str(line);
        out.push('\n');
        if line.starts_with("family =") {
            out.push_str(model);
        }
    }
    write(dir, name, &out).display().to_string()
}

#[test]
fn the_garden_demo_recovers_its_segments() {
    let (c, out, err) = run(&["fit", SPEC, "--json", "--draws", "200"]);
    assert_eq!(c, 0, "{err}");
    let doc: Value = serde_json::from_str(&out).unwrap();
    // Recovery within 3.5 standard errors (consistency and asymptotic
    // normality of maximum likelihood; Train 2009 ch. 8): every parameter
    // against the generator's truth (src/demo/garden.rs), with the errors
    // clustered by shopper.
    for row in doc["parameters"].as_array().unwrap() {
        let name = row["name"].as_str().unwrap();
        let truth = GARDEN_TRUTH.iter().find(|t| t.0 == name).unwrap().1;
        let (est, se) = (
            row["estimate"].as_f64().unwrap(),
            row["robust_std_error"].as_f64().unwrap(),
        );
        assert!(
            ((est - truth) / se).abs() < 3.5,
            "{name}: {est} ± {se}, truth {truth}"
        );
    }
    // The segments' sizes: the sample's true shares (the generator's
    // membership probabilities averaged over the shoppers) within 3.5 s.e.
    let rows = doc["classes"]["rows"].as_array().unwrap();
    for (k, r) in rows.iter().enumerate() {
        let (s, se) = (
            r["share"].as_f64().unwrap(),
            r["share_std_error"].as_f64().unwrap(),
        );
        assert!(
            ((s - GARDEN_SHARES[k]) / se).abs() < 3.5,
            "class {k}: {s} ± {se}"
        );
    }
    assert_eq!(doc["classes"]["structure"], "panel");
    // The starts: all reached the best log-likelihood on these data.
    let starts = &doc["fit"]["starts"];
    assert_eq!(starts["tried"], 10);
    assert_eq!(starts["reached_best"], 10);
    // The classes are numbered by share, largest first (the rule).
    assert!(rows[0]["share"].as_f64().unwrap() > rows[1]["share"].as_f64().unwrap());
}

#[test]
fn the_fit_by_number_of_classes_starts_from_the_logit() {
    let dir = scratch("classes_counts");
    let (c, out, err) = run(&["fit", SPEC, "--classes", "1..3", "--json"]);
    assert_eq!(c, 0, "{err}");
    let doc: Value = serde_json::from_str(&out).unwrap();
    let rows = doc["class_counts"].as_array().unwrap();
    assert_eq!(rows.len(), 3);
    // One class is the logit (fact of the model): the logit's log-likelihood
    // on the same data, to 1e-9.
    let logit = garden_variant(&dir, "logit.toml", "");
    let logit = std::fs::read_to_string(&logit)
        .unwrap()
        .replace("\"latent-class\"", "\"logit\"");
    let logit = write(&dir, "logit.toml", &logit);
    let (c, out, err) = run(&["fit", logit.to_str().unwrap(), "--json", "--no-analysis"]);
    assert_eq!(c, 0, "{err}");
    let l: Value = serde_json::from_str(&out).unwrap();
    assert_close(
        "one class",
        rows[0]["log_likelihood"].as_f64().unwrap(),
        l["fit"]["log_likelihood"].as_f64().unwrap(),
        1e-9,
    );
    // More classes nest fewer (fact of the model): the log-likelihood does
    // not fall, and each class adds its copy of the utility and a membership row.
    for w in rows.windows(2) {
        assert!(
            w[1]["log_likelihood"].as_f64().unwrap()
                >= w[0]["log_likelihood"].as_f64().unwrap() - 1e-6
        );
        assert_eq!(
            w[1]["estimated_parameters"].as_u64().unwrap()
                - w[0]["estimated_parameters"].as_u64().unwrap(),
            7
        );
    }
    assert_eq!(rows[0]["smallest_share"], 1.0);
    // The text form marks the lowest BIC: two classes on this demo.
    let (c, out, _) = run(&["fit", SPEC, "--classes", "1..3"]);
    assert_eq!(c, 0);
    let two = out
        .lines()
        .find(|l| l.trim_start().starts_with("2 "))
        .unwrap();
    assert!(two.contains('◂'), "{out}");
    let (c, _, err) = run(&["fit", SPEC, "--classes", "4..2"]);
    assert_ne!(c, 0);
    assert!(err.contains("--classes"), "{err}");
}

#[test]
fn class_probabilities_are_written_once_and_sum_to_one() {
    let dir = scratch("classes_out");
    let out = dir.join("classes.csv");
    let o = out.to_str().unwrap();
    let (c, _, err) = run(&["fit", SPEC, "--no-analysis", "--classes-out", o]);
    assert_eq!(c, 0, "{err}");
    let text = std::fs::read_to_string(&out).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next().unwrap(),
        "shopper,prior_class1,prior_class2,posterior_class1,posterior_class2,likeliest_class"
    );
    let rows: Vec<Vec<f64>> = lines
        .map(|l| l.split(',').map(|x| x.parse::<f64>().unwrap()).collect())
        .collect();
    assert_eq!(rows.len(), 1000);
    for r in &rows {
        assert!((r[1] + r[2] - 1.0).abs() < 1e-12 && (r[3] + r[4] - 1.0).abs() < 1e-12);
        assert_eq!(r[5], if r[3] >= r[4] { 1.0 } else { 2.0 });
    }
    // Nothing the user has is overwritten without --force.
    let (c, _, err) = run(&["fit", SPEC, "--no-analysis", "--classes-out", o]);
    assert_ne!(c, 0);
    assert!(err.contains("--force"), "{err}");
    let (c, _, err) = run(&["fit", SPEC, "--no-analysis", "--classes-out", o, "--force"]);
    assert_eq!(c, 0, "{err}");
    // A family without classes says so.
    let (c, _, err) = run(&[
        "fit",
        "specs/commute.toml",
        "--no-analysis",
        "--classes-out",
        o,
        "--force",
    ]);
    assert_ne!(c, 0);
    assert!(err.contains("latent-class"), "{err}");
}

#[test]
fn the_spec_refuses_what_classes_cannot_do_naming_the_key() {
    let dir = scratch("classes_refusals");
    let csv = std::fs::read_to_string(path("demo-data/garden_panel.csv")).unwrap();
    let cases: Vec<(&str, &str, Vec<&str>)> = vec![
        ("classes = 0\n", "", vec!["[model].classes", "at least 1"]),
        ("starts = 3\n", "", vec!["[model].classes", "missing"]),
        (
            "classes = 1\nmembership = [\"garden_size\"]\n",
            "",
            vec!["[model].membership", "classes = 1"],
        ),
        (
            "classes = 2\ncommon = [\"speed\"]\n",
            "",
            vec!["[model].common", "`speed`"],
        ),
        (
            "classes = 2\nspace = \"willingness\"\n",
            "",
            vec!["[model].space"],
        ),
        (
            "classes = 2\nmembership = [\"garden_size\"]\n",
            "vary",
            vec![
                "[model].membership",
                "garden_size",
                "decision maker `2`",
                "rows 9 and 10",
            ],
        ),
        (
            "classes = 60\n",
            "",
            vec!["[model].classes", "decision makers"],
        ),
    ];
    for (k, (model, data, words)) in cases.into_iter().enumerate() {
        let mut spec = garden_variant(&dir, &format!("s{k}.toml"), model);
        if data == "vary" {
            // The second shopper's second row gets another garden size.
            let mut lines: Vec<String> = csv.lines().map(String::from).collect();
            let mut cells: Vec<String> = lines[10].split(',').map(String::from).collect();
            let n = cells.len();
            cells[n - 2] = "99".into();
            lines[10] = cells.join(",");
            write(&dir, "vary.csv", &(lines.join("\n") + "\n"));
            spec = std::fs::read_to_string(&spec).unwrap();
            spec = spec.replace(
                &path("demo-data/garden_panel.csv").display().to_string(),
                &dir.join("vary.csv").display().to_string(),
            );
            spec = write(&dir, &format!("s{k}.toml"), &spec)
                .display()
                .to_string();
        }
        let (c, _, err) = run(&["fit", &spec, "--no-analysis"]);
        assert_ne!(c, 0, "{model}");
        assert!(!err.contains("panicked"), "{err}");
        for w in words {
            assert!(err.contains(w), "{model}: `{w}` not in {err}");
        }
    }
}

#[test]
fn forecasts_are_the_class_sized_sum_of_the_classes_and_calibrate_every_class() {
    let dir = scratch("classes_forecast");
    // A new alternative like the plugs in each class's tastes.
    let (c, out, err) = run(&[
        "simulate",
        SPEC,
        "--scenario",
        "specs/scenarios/garden_quick_plugs.toml",
        "--draws",
        "0",
        "--json",
    ]);
    assert_eq!(c, 0, "{err}");
    let f: Value = serde_json::from_str(&out).unwrap();
    let classes = f["classes"].as_array().unwrap();
    assert_eq!(classes.len(), 2);
    // The mixture's forecast is the class-size-weighted sum of the classes'
    // (fact of the model: each situation's probabilities are the
    // membership-weighted average of the classes' logits).
    for (k, row) in f["shares"].as_array().unwrap().iter().enumerate() {
        let sum: f64 = classes
            .iter()
            .map(|c| c["size"].as_f64().unwrap() * c["scenario"][k].as_f64().unwrap())
            .sum();
        assert!(
            (sum - row["scenario"].as_f64().unwrap()).abs() < 1e-12,
            "{}",
            row["alternative"]
        );
    }
    // Calibration moves every class's constant of an alternative by the
    // same step until the predicted shares meet the targets (common practice).
    write(
        &dir,
        "calibrated.toml",
        "name = \"counted\"\n[calibration]\ntargets = { packet = 0.35, plugs = 0.35, potted = 0.30 }\n",
    );
    let sc = dir.join("calibrated.toml");
    let (c, out, err) = run(&[
        "simulate",
        SPEC,
        "--scenario",
        sc.to_str().unwrap(),
        "--draws",
        "0",
        "--json",
    ]);
    assert_eq!(c, 0, "{err}");
    let f: Value = serde_json::from_str(&out).unwrap();
    for row in f["calibration"]["rows"].as_array().unwrap() {
        assert!(
            (row["share_after"].as_f64().unwrap() - row["target"].as_f64().unwrap()).abs() < 1e-6
        );
        if row["alternative"] != "packet" {
            assert!(
                row["parameter"].as_str().unwrap().contains("_class2"),
                "{row}"
            );
        }
    }
}

#[test]
fn three_segments_of_three_thousand_decision_makers_are_recovered() {
    // The benchmark's invented panel (src/bench/classes.rs: 3 classes, a
    // membership logit on two columns) at 3,000 decision makers x 8 tasks.
    let dir = scratch("classes_recovery");
    let keep = dir.join("panel");
    let k = keep.to_str().unwrap();
    let (c, out, err) = run(&[
        "bench",
        "--model",
        "classes",
        "--decision-makers",
        "3000",
        "--tasks",
        "8",
        "--starts",
        "5",
        "--peer-seconds",
        "0",
        "--no-process",
        "--keep",
        k,
        "--json",
    ]);
    assert_eq!(c, 0, "{err}");
    let b: Value = serde_json::from_str(&out).unwrap();
    // Recovery within 3.5 standard errors (consistency and asymptotic
    // normality of maximum likelihood; Train 2009 ch. 8): every parameter.
    for p in b["recovery"]["parameters"].as_array().unwrap() {
        let (est, se, truth) = (
            p["estimate"].as_f64().unwrap(),
            p["std_error"].as_f64().unwrap(),
            p["truth"].as_f64().unwrap(),
        );
        assert!(
            ((est - truth) / se).abs() < 3.5,
            "{}: {est} ± {se}, truth {truth}",
            p["name"]
        );
    }
    // And the class shares, against the sample's true ones, with their
    // delta-method errors from the fit's analysis.
    let spec = keep.join("classes.toml");
    let (c, out, err) = run(&["fit", spec.to_str().unwrap(), "--json", "--draws", "0"]);
    assert_eq!(c, 0, "{err}");
    let f: Value = serde_json::from_str(&out).unwrap();
    let truth = b["recovery"]["true_shares"].as_array().unwrap();
    for (r, t) in f["classes"]["rows"].as_array().unwrap().iter().zip(truth) {
        let (s, se, t) = (
            r["share"].as_f64().unwrap(),
            r["share_std_error"].as_f64().unwrap(),
            t.as_f64().unwrap(),
        );
        assert!(
            ((s - t) / se).abs() < 3.5,
            "{}: {s} ± {se}, truth {t}",
            r["class"]
        );
    }
}
