//! The tables layout from the command line: refusals that name the file,
//! column and row; tables over the top alternatives; shares and diversion
//! by a column of the table of alternatives; a scenario whose `where` picks
//! alternatives from their table. Data: the invented fixture in
//! tests/fixtures/destinations/.

use std::path::Path;

use crate::common::*;
use crate::destinations::tables_spec;

/// The fixture's files copied into `dir` with `edit(name, text)` applied.
fn copy_fixture(dir: &Path, edit: &dyn Fn(&str, String) -> String) {
    for f in ["zones.csv", "pairs.csv", "trips.csv"] {
        let text =
            std::fs::read_to_string(path(&format!("tests/fixtures/destinations/{f}"))).unwrap();
        write(dir, f, &edit(f, text));
    }
}

/// A spec over copies of the fixture's files in a scratch folder.
fn spec_over(name: &str, edit: &dyn Fn(&str, String) -> String, extra: &str) -> String {
    let dir = scratch(&format!("destinations-cli-{name}"));
    copy_fixture(&dir, edit);
    let text = format!(
        "[data]\nfile = \"trips.csv\"\nlayout = \"tables\"\nchoice = \"dest\"\n[data.alternatives]\nfile = \"zones.csv\"\nid = \"zone\"\n[data.pairs]\nfile = \"pairs.csv\"\nfrom = \"origin\"\nid = \"zone\"\n[model]\nconstants = false\n{}\n{extra}",
        crate::destinations::ATTRIBUTES
    );
    write(&dir, "spec.toml", &text).display().to_string()
}

#[track_caller]
fn refused(name: &str, edit: &dyn Fn(&str, String) -> String, extra: &str, wants: &[&str]) {
    let spec = spec_over(name, edit, extra);
    let (code, _, err) = run(&["fit", &spec, "--no-analysis"]);
    assert_ne!(code, 0, "{name}: accepted");
    assert!(!err.contains("panicked"), "{name}: {err}");
    for w in wants {
        assert!(err.contains(w), "{name}: message lacks `{w}`:\n{err}");
    }
}

fn replace_line(text: String, line: usize, with: &str) -> String {
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    lines[line] = with.to_string();
    lines.join("\n") + "\n"
}

#[test]
fn mistakes_in_the_tables_are_refused_naming_the_file_column_and_row() {
    let same = |_: &str, t: String| t;
    // A chosen id the table of alternatives does not have (trips row 3).
    let unknown = |f: &str, t: String| {
        if f == "trips.csv" {
            replace_line(t, 3, "3,a31,1,zz9")
        } else {
            t
        }
    };
    refused(
        "unknown-choice",
        &unknown,
        "",
        &["trips.csv", "`dest`", "row 3", "zz9"],
    );
    // An id on two rows of the table of alternatives.
    let dup = |f: &str, t: String| {
        if f == "zones.csv" {
            replace_line(t, 2, "a01,Larkfield,2184,7.689371,1")
        } else {
            t
        }
    };
    refused(
        "duplicate-id",
        &dup,
        "",
        &["zones.csv", "`zone`", "rows 1 and 2"],
    );
    // A pair written twice (pairs rows 1 and 2).
    let pair = |f: &str, t: String| {
        if f == "pairs.csv" {
            replace_line(t, 2, "a01,a01,5.0,1")
        } else {
            t
        }
    };
    refused(
        "duplicate-pair",
        &pair,
        "",
        &["pairs.csv", "rows 1 and 2", "a01"],
    );
    // An id in the pairs table that is not an alternative.
    let stray = |f: &str, t: String| {
        if f == "pairs.csv" {
            replace_line(t, 5, "a01,q77,5.0,0")
        } else {
            t
        }
    };
    refused(
        "pair-id",
        &stray,
        "",
        &["pairs.csv", "`zone`", "row 5", "q77"],
    );
    // A situation whose origin has no rows in the pairs table.
    let origin = |f: &str, t: String| {
        if f == "trips.csv" {
            replace_line(t, 2, "2,nowhere,0,a05")
        } else {
            t
        }
    };
    refused(
        "missing-origin",
        &origin,
        "",
        &["trips.csv", "`origin`", "row 2", "nowhere"],
    );
    // A chosen zone that is closed (a26 has available = 0).
    let closed = |f: &str, t: String| {
        if f == "trips.csv" {
            replace_line(t, 1, "1,a39,0,a26")
        } else {
            t
        }
    };
    refused(
        "closed-choice",
        &closed,
        "",
        &["trips.csv", "row 1", "a26", "unavailable"],
    );
    // Sampling more than the set holds, and a weight that is not positive.
    refused(
        "too-many",
        &same,
        "[sampling]\nalternatives = 39\n",
        &["[sampling].alternatives", "remove [sampling]"],
    );
    let zero = |f: &str, t: String| {
        if f == "zones.csv" {
            replace_line(t, 4, "a04,Brackenmoor,0,6.340359,1")
        } else {
            t
        }
    };
    refused(
        "zero-weight",
        &zero,
        "[sampling]\nalternatives = 5\nscheme = \"weighted\"\nweight = \"jobs\"\n",
        &["zones.csv", "`jobs`", "row 4", "not positive"],
    );
    // Terms that differ between alternatives under sampling.
    let spec = spec_over("asc", &same, "");
    let text = std::fs::read_to_string(&spec)
        .unwrap()
        .replace("constants = false", "constants = true\nbase = \"a01\"")
        + "[sampling]\nalternatives = 5\n";
    std::fs::write(&spec, text).unwrap();
    let (code, _, err) = run(&["fit", &spec, "--no-analysis"]);
    assert_ne!(code, 0);
    assert!(
        err.contains("[sampling]") && err.contains("constants"),
        "{err}"
    );
}

#[test]
fn fit_shows_the_top_alternatives_and_groups_by_a_column_of_their_table() {
    let (dir, _) = tables_spec("cli-top", "");
    let spec = dir.join("spec.toml").display().to_string();
    let (code, out, err) = run(&[
        "fit",
        &spec,
        "--top",
        "4",
        "--by-alternative",
        "district",
        "--draws",
        "0",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("… and 36 more alternatives"), "{out}");
    assert!(out.contains("by district (alternatives grouped)"), "{out}");
    let (code, out, _) = run(&[
        "fit",
        &spec,
        "--top",
        "4",
        "--by-alternative",
        "district",
        "--draws",
        "0",
        "--json",
    ]);
    assert_eq!(code, 0);
    let doc: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(doc["top"].as_array().unwrap().len(), 4);
    assert_eq!(
        doc["shares"].as_array().unwrap().len(),
        40,
        "every alternative's shares"
    );
    let groups = doc["by_alternative"]["groups"].as_array().unwrap();
    assert_eq!(groups.len(), 3, "three districts");
    // Common practice: grouped shares add up to the whole, alternatives to 40.
    let sum: f64 = groups
        .iter()
        .map(|g| g["predicted"].as_f64().unwrap())
        .sum();
    assert!((sum - 1.0).abs() < 1e-9);
    let n: u64 = groups
        .iter()
        .map(|g| g["alternatives"].as_u64().unwrap())
        .sum();
    assert_eq!(n, 40);
    // Diversion out of a district goes somewhere: each row is a share in 0..1
    // and those of one district add up to at most 1.
    for g in groups {
        let name = g["group"].as_str().unwrap();
        let total: f64 = doc["by_alternative"]["diversion"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|r| r["removed"] == name)
            .map(|r| r["share"].as_f64().unwrap())
            .sum();
        assert!(total > 0.0 && total <= 1.0 + 1e-9, "{name}: {total}");
    }
    let (code, _, err) = run(&["fit", &spec, "--by-alternative", "nonesuch", "--draws", "0"]);
    assert_ne!(code, 0);
    assert!(
        err.contains("nonesuch") && err.contains("table of alternatives"),
        "{err}"
    );
}

#[test]
fn a_scenario_picks_its_alternatives_by_a_column_of_their_table() {
    let (dir, _) = tables_spec("cli-where", "");
    let spec = dir.join("spec.toml").display().to_string();
    let sc = write(
        &dir,
        "more_jobs.toml",
        "name = \"More jobs in the big zones\"\n[[change]]\nattribute = \"jobs\"\nwhere = \"jobs > 3000\"\nadd = 0.2\n",
    );
    let (code, out, err) = run(&[
        "simulate",
        &spec,
        "--scenario",
        &sc.display().to_string(),
        "--draws",
        "0",
        "--json",
        "--by-alternative",
        "district",
    ]);
    assert_eq!(code, 0, "{err}");
    let doc: serde_json::Value = serde_json::from_str(&out).unwrap();
    let zones = std::fs::read_to_string(path("tests/fixtures/destinations/zones.csv")).unwrap();
    let big: Vec<String> = zones
        .lines()
        .skip(1)
        .filter(|l| {
            let f: Vec<&str> = l.split(',').collect();
            // Open zones only: a closed one has no share to gain.
            f[2].parse::<f64>().unwrap() > 3000.0 && f[4] == "1"
        })
        .map(|l| l.split(',').next().unwrap().to_string())
        .collect();
    assert!(!big.is_empty());
    // Fact of the logit: only the picked zones' utilities rise, so exactly
    // they gain share and every other zone loses (or keeps 0).
    for r in doc["shares"].as_array().unwrap() {
        let name = r["alternative"].as_str().unwrap();
        let change = r["change"].as_f64().unwrap();
        if big.iter().any(|b| b == name) {
            assert!(change > 0.0, "{name} {change}");
        } else {
            assert!(change <= 0.0, "{name} {change}");
        }
    }
    let groups = doc["by_alternative"]["groups"].as_array().unwrap();
    let sum: f64 = groups.iter().map(|g| g["change"].as_f64().unwrap()).sum();
    assert!(sum.abs() < 1e-9, "the changes add up to 0");
    let bad = write(
        &dir,
        "bad.toml",
        "[[change]]\nattribute = \"jobs\"\nwhere = \"parking > 1\"\nadd = 0.2\n",
    );
    let (code, _, err) = run(&[
        "simulate",
        &spec,
        "--scenario",
        &bad.display().to_string(),
        "--draws",
        "0",
    ]);
    assert_ne!(code, 0);
    assert!(
        err.contains("parking") && err.contains("zones.csv"),
        "{err}"
    );
}
