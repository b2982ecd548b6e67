//! `sharecast design` and `sharecast report DESIGN.toml` as a user runs them:
//! the written tasks, the JSON document's fields, the rehearsal, the same
//! design on one core as on two, the design report, and errors naming the key.

use crate::common::{path, run, scratch, write};
use crate::design::WAVE;

fn json(out: &str) -> serde_json::Value {
    serde_json::from_str(out).unwrap_or_else(|e| panic!("not JSON ({e}): {out}"))
}

#[test]
fn design_writes_the_wide_tasks_and_its_document() {
    let dir = scratch("design_cli_out");
    let file = write(&dir, "wave.toml", WAVE);
    let out = dir.join("wave.csv");
    let (code, stdout, stderr) = run(&[
        "design",
        file.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--json",
    ]);
    assert_eq!(code, 0, "{stderr}");
    let doc = json(&stdout);
    for key in [
        "d_error",
        "a_error",
        "level_counts",
        "standard_errors",
        "sample_size",
        "respondents",
        "tasks",
        "search",
    ] {
        assert!(doc.get(key).is_some(), "the document has no `{key}`");
    }
    assert_eq!(doc["bayesian"], true);
    let csv = std::fs::read_to_string(&out).unwrap();
    let mut lines = csv.lines();
    assert_eq!(
        lines.next().unwrap(),
        "task,block,cost_A,cost_B,time_A,time_B,headway_A,headway_B"
    );
    let rows: Vec<&str> = lines.collect();
    assert_eq!(rows.len(), 16);
    assert!(rows[0].starts_with("1,1,") && rows[15].starts_with("16,2,"));
    // The written levels are the document's.
    let first: Vec<f64> = rows[0]
        .split(',')
        .skip(2)
        .map(|v| v.parse().unwrap())
        .collect();
    let want: Vec<f64> = doc["tasks"][0]["levels"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    assert_eq!(first, want);
    // The file the user has is not replaced without --force.
    let (code, _, stderr) = run(&[
        "design",
        file.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 1);
    assert!(
        stderr.contains("wave.csv") && stderr.contains("--force"),
        "{stderr}"
    );
    let (code, stdout, _) = run(&[
        "design",
        file.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--force",
    ]);
    assert_eq!(code, 0);
    assert!(
        stdout.contains("D-error") && stdout.contains("Level balance"),
        "{stdout}"
    );
}

#[test]
fn the_design_is_the_same_on_one_core_as_on_all() {
    // taskset limits the process to one core: the starts then run one after
    // another instead of side by side.
    if std::process::Command::new("taskset")
        .arg("--version")
        .output()
        .is_err()
    {
        panic!("taskset (util-linux) is needed for this test");
    }
    let dir = scratch("design_cli_threads");
    let file = write(&dir, "wave.toml", WAVE);
    let all = dir.join("all.csv");
    let one = dir.join("one.csv");
    let (code, _, stderr) = run(&[
        "design",
        file.to_str().unwrap(),
        "--out",
        all.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let status = std::process::Command::new("taskset")
        .args(["-c", "0", env!("CARGO_BIN_EXE_sharecast"), "design"])
        .args([file.to_str().unwrap(), "--out", one.to_str().unwrap()])
        .output()
        .unwrap();
    assert!(
        status.status.success(),
        "{}",
        String::from_utf8_lossy(&status.stderr)
    );
    assert_eq!(std::fs::read(&all).unwrap(), std::fs::read(&one).unwrap());
}

#[test]
fn the_rehearsal_recovers_the_priors_and_its_spec_fits() {
    let dir = scratch("design_cli_rehearsal");
    let src = std::fs::read_to_string(path("specs/designs/express_tasks.toml")).unwrap();
    let file = write(
        &dir,
        "express_tasks.toml",
        &src.replace("draws = 500", "draws = 100"),
    );
    let out = dir.join("tasks.csv");
    let (code, stdout, stderr) = run(&[
        "design",
        file.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--simulate",
        "900",
        "--json",
    ]);
    assert_eq!(code, 0, "{stderr}");
    let doc = json(&stdout);
    let r = &doc["rehearsal"];
    assert_eq!(r["respondents"], 900);
    // Recovery within 3.5 standard errors (the check; a correct
    // estimator misses it about once in 2,000 per parameter).
    for p in r["parameters"].as_array().unwrap() {
        assert!(p["z"].as_f64().unwrap().abs() < 3.5, "{p}");
    }
    assert_eq!(r["all_within"], true);
    let answers = std::fs::read_to_string(dir.join("tasks_answers.csv")).unwrap();
    assert_eq!(
        answers.lines().count(),
        1 + 900 * 8,
        "each respondent answers one block of 8"
    );
    // The generated spec is a spec `fit` reads, with the design's parameters.
    let spec = dir.join("tasks_answers.toml");
    let (code, stdout, stderr) = run(&["fit", spec.to_str().unwrap(), "--json", "--no-analysis"]);
    assert_eq!(code, 0, "{stderr}");
    let fit = json(&stdout);
    let names: Vec<&str> = fit["parameters"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["name"].as_str().unwrap())
        .collect();
    for want in ["cost", "time", "headway", "asc_coach", "asc_rail"] {
        assert!(names.contains(&want), "{names:?}");
    }
    // A rehearsal under a new name writes new files; run again, it replaces
    // them only with --force.
    let again = |out: &str, force: bool| {
        let target = dir.join(out);
        let mut args = vec![
            "design",
            file.to_str().unwrap(),
            "--out",
            target.to_str().unwrap(),
        ];
        args.extend(["--simulate", "10"]);
        if force {
            args.push("--force");
        }
        run(&args)
    };
    assert_eq!(again("other.csv", false).0, 0);
    let (code, _, stderr) = again("other.csv", false);
    assert_eq!(code, 1);
    assert!(
        stderr.contains("other.csv") && stderr.contains("--force"),
        "{stderr}"
    );
    assert_eq!(again("other.csv", true).0, 0);
    std::fs::write(dir.join("fourth_answers.csv"), "mine").unwrap();
    let (code, _, stderr) = again("fourth.csv", false);
    assert_eq!(code, 1);
    assert!(stderr.contains("fourth_answers.csv"), "{stderr}");
    assert_eq!(
        std::fs::read_to_string(dir.join("fourth_answers.csv")).unwrap(),
        "mine"
    );
    assert!(
        !dir.join("fourth.csv").exists(),
        "nothing is written when one output is refused"
    );
}

#[test]
fn the_design_report_lays_out_the_documents_figures() {
    let dir = scratch("design_cli_report");
    let file = write(&dir, "wave.toml", WAVE);
    let (code, stdout, stderr) = run(&[
        "design",
        file.to_str().unwrap(),
        "--out",
        dir.join("w.csv").to_str().unwrap(),
        "--json",
    ]);
    assert_eq!(code, 0, "{stderr}");
    let doc = json(&stdout);
    let html = dir.join("design.html");
    let (code, _, stderr) = run(&[
        "report",
        file.to_str().unwrap(),
        "--out",
        html.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let page = std::fs::read_to_string(&html).unwrap();
    let mut at = 0;
    for sec in sharecast::report::experiment::REGISTRY {
        let (id, _) = sec.names();
        let here = page
            .find(&format!("<section id=\"{id}\">"))
            .unwrap_or_else(|| panic!("no section {id}"));
        assert!(here > at, "{id} out of order");
        at = here;
    }
    let d = sharecast::report::experiment::fig(doc["d_error"].as_f64().unwrap());
    assert!(page.contains(&d), "the page shows the D-error {d}");
    for p in doc["standard_errors"].as_array().unwrap() {
        let se = sharecast::report::experiment::fig(p["standard_error"].as_f64().unwrap());
        assert!(
            page.contains(&se),
            "the page shows {}'s s.e. {se}",
            p["parameter"]
        );
    }
    assert!(page.contains("No rehearsal was run"));
    let (code, _, stderr) = run(&[
        "report",
        file.to_str().unwrap(),
        "--out",
        html.to_str().unwrap(),
        "--force",
        "--top",
        "3",
    ]);
    assert_eq!(code, 1);
    assert!(
        stderr.contains("--top") && stderr.contains("design file"),
        "{stderr}"
    );
}

/// Runs `design` on a variant of WAVE and returns its error.
fn refused(name: &str, from: &str, to: &str) -> String {
    let dir = scratch(&format!("design_cli_err_{name}"));
    assert!(WAVE.contains(from), "{from}");
    let file = write(&dir, "d.toml", &WAVE.replacen(from, to, 1));
    let (code, stdout, stderr) = run(&[
        "design",
        file.to_str().unwrap(),
        "--out",
        dir.join("d.csv").to_str().unwrap(),
    ]);
    assert_eq!(code, 1, "{name}: {stdout}");
    assert!(!dir.join("d.csv").exists(), "{name}: nothing written");
    assert!(
        stderr.contains("d.toml"),
        "{name}: names the file: {stderr}"
    );
    stderr
}

#[test]
fn mistakes_are_refused_naming_the_key() {
    let cases = [
        ("tasks", "tasks = 16", "tasks = 2", "[design].tasks"),
        ("blocks", "blocks = 2", "blocks = 3", "[design].blocks"),
        ("levels", "levels = [10, 20, 30]", "levels = [10]", "levels"),
        (
            "same_levels",
            "levels = [10, 20, 30]",
            "levels = [10, 10]",
            "listed twice",
        ),
        ("sd", "sd = 0.1", "sd = -0.1", "negative"),
        ("unknown_key", "seed = 4", "seed = 4\nrounds = 3", "rounds"),
        ("forbid_column", "cost_A > 6", "cost_C > 6", "cost_C"),
        (
            "forbid_all",
            "cost_A > 6 && time_A > 40",
            "cost_A > 0",
            "matches every task",
        ),
        (
            "forbid_balance",
            "cost_A > 6 && time_A > 40",
            "cost_A == 8",
            "[[forbid]] 1",
        ),
        (
            "alternative",
            "alternatives = [\"A\", \"B\"]",
            "alternatives = [\"A\", \"A\"]",
            "listed twice",
        ),
    ];
    for (name, from, to, says) in cases {
        let e = refused(name, from, to);
        assert!(e.contains(says), "{name}: {e}");
    }
    // No attribute at all.
    let dir = scratch("design_cli_err_none");
    let file = write(
        &dir,
        "d.toml",
        "[design]\nalternatives = [\"A\", \"B\"]\ntasks = 4\n",
    );
    let (code, _, stderr) = run(&[
        "design",
        file.to_str().unwrap(),
        "--out",
        dir.join("d.csv").to_str().unwrap(),
    ]);
    assert_eq!(code, 1);
    assert!(
        stderr.contains("[[attribute]]") && stderr.contains("no attribute varies"),
        "{stderr}"
    );
    // A single attribute with a known sign: every task has a dominant
    // alternative, which level balance cannot avoid.
    let file = write(
        &dir,
        "one.toml",
        "[design]\nalternatives = [\"A\", \"B\"]\ntasks = 4\n[[attribute]]\nname = \"cost\"\nlevels = [1, 2]\nprior = -1\n",
    );
    let (code, _, stderr) = run(&[
        "design",
        file.to_str().unwrap(),
        "--out",
        dir.join("one.csv").to_str().unwrap(),
    ]);
    assert_eq!(code, 1);
    assert!(stderr.contains("dominates"), "{stderr}");
}
