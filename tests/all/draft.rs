//! `sharecast new`: drafts of the shipped data sets pass `sharecast check` and
//! fit to the log-likelihood of the shipped specs written by hand (source:
//! the tool's own fit of both; the same model has the same likelihood), every
//! guess carries a comment, nothing is overwritten without --force, and files
//! that are not choices are refused with the reason.

use std::path::{Path, PathBuf};

use crate::common::{fit_spec, path, run, scratch, write};
use sharecast::data::{self, Extra};

/// Runs `new` on a shipped data file into a scratch folder; returns the spec path and stdout.
fn draft(data_file: &str, dir: &Path, name: &str) -> (PathBuf, String) {
    let out = dir.join(name);
    let (code, stdout, err) = run(&["new", data_file, "--out", out.to_str().unwrap()]);
    assert_eq!(code, 0, "new {data_file}: {err}");
    assert!(
        stdout.contains(&format!("sharecast check {}", out.display())),
        "no next command: {stdout}"
    );
    let (code, _, err) = run(&["check", out.to_str().unwrap()]);
    assert_eq!(
        code,
        0,
        "check of the draft of {data_file}: {err}\n{}",
        std::fs::read_to_string(&out).unwrap()
    );
    (out, stdout)
}

/// The log-likelihood and the number of parameters of a spec's fit.
fn fitted(spec_path: &Path) -> (f64, usize) {
    let spec = sharecast::model::read_spec(spec_path).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    assert!(fit.stats.converged, "{}", spec_path.display());
    (fit.stats.log_likelihood, fit.parameters.len())
}

#[track_caller]
fn same_ll(what: &str, got: f64, want: f64) {
    assert!(
        (got - want).abs() <= 1e-6 * want.abs(),
        "{what}: draft {got}, shipped {want}"
    );
}

#[test]
fn grocery_draft_is_the_shipped_long_model() {
    let dir = scratch("draft-grocery");
    let (spec, stdout) = draft("demo-data/grocery.parquet", &dir, "grocery.toml");
    assert!(stdout.contains("long layout"), "{stdout}");
    let (ll, k) = fitted(&spec);
    let (want, want_k) = fitted(&path("specs/grocery.toml"));
    same_ll("grocery", ll, want);
    assert_eq!(k, want_k);
}

#[test]
fn express_survey_draft_is_the_shipped_fixed_coefficient_logit() {
    // A stated-choice panel: the respondent column is the group (its values
    // repeat over the tasks), the task number is left out, and `car_owner`
    // is car's availability (car is never chosen where it is 0). The draft
    // is the logit; the random tastes of specs/express_survey.toml are the
    // modeller's choice.
    let dir = scratch("draft-express");
    let (spec, stdout) = draft("demo-data/express_survey.csv", &dir, "express.toml");
    assert!(stdout.contains("group respondent"), "{stdout}");
    let text = std::fs::read_to_string(&spec).unwrap();
    assert!(text.contains("available = \"car_owner\""), "{text}");
    let (ll, k) = fitted(&spec);
    let (want, want_k) = fitted(&path("specs/express_logit.toml"));
    same_ll("express", ll, want);
    assert_eq!(k, want_k);
}

#[test]
fn ratings_draft_is_the_shipped_ordered_model() {
    // Ordered ratings: whole-number codes in a column named like a rating, with
    // no column carrying them, are drafted as an ordered logit (categories lowest first).
    let dir = scratch("draft-ratings");
    let (spec, stdout) = draft("demo-data/ratings.csv", &dir, "ratings.toml");
    assert!(stdout.contains("ordered-logit"), "{stdout}");
    let text = std::fs::read_to_string(&spec).unwrap();
    assert!(text.contains("family = \"ordered-logit\""), "{text}");
    let (ll, k) = fitted(&spec);
    let (want, want_k) = fitted(&path("specs/delivery_ratings.toml"));
    same_ll("ratings", ll, want);
    assert_eq!(k, want_k);
}

#[test]
fn commute_draft_is_the_shipped_wide_model_but_for_one_choice_of_the_modeller() {
    let dir = scratch("draft-commute");
    let (spec, stdout) = draft("demo-data/commute.csv", &dir, "commute.toml");
    assert!(stdout.contains("wide layout"), "{stdout}");
    let (ll, k) = fitted(&spec);
    // The shipped spec lets age enter bike and walk only, a modelling choice no
    // look at the data can make; the draft lets it enter every alternative but
    // the base. Without that one line the shipped spec is the draft's model.
    let shipped = std::fs::read_to_string(path("specs/commute.toml")).unwrap();
    let line = "alternatives = [\"bike\", \"walk\"]\n";
    assert!(shipped.contains(line));
    let data_file = path("demo-data/commute.csv");
    let edited = shipped.replace(line, "").replace(
        "\"../demo-data/commute.csv\"",
        &format!("{:?}", data_file.display().to_string()),
    );
    let (want, want_k) = fitted(&write(&dir, "shipped-age-everywhere.toml", &edited));
    same_ll("commute", ll, want);
    assert_eq!(k, want_k);
    // Fact of maximum likelihood: the shipped model is the draft's with two
    // coefficients held at 0, so its log-likelihood cannot be higher.
    let (restricted, rk) = fitted(&path("specs/commute.toml"));
    assert!(
        restricted <= ll + 1e-6 && rk + 2 == k,
        "{restricted} vs {ll}"
    );
}

#[test]
fn every_guess_in_the_commute_draft_has_a_comment_above_it() {
    let dir = scratch("draft-comments");
    let (spec, _) = draft("demo-data/commute.csv", &dir, "commute.toml");
    let text = std::fs::read_to_string(spec).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    for key in ["weight = ", "group = ", "available = "] {
        let at: Vec<usize> = (0..lines.len())
            .filter(|&i| lines[i].starts_with(key))
            .collect();
        assert!(!at.is_empty(), "no {key}line:\n{text}");
        for i in at {
            assert!(
                lines[i - 1].starts_with("# guessed"),
                "`{}` has no guess comment above it",
                lines[i]
            );
        }
    }
    // Money columns of different names are one attribute, and the draft says so.
    assert!(
        text.contains("# guessed: cost and fare are one money attribute"),
        "{text}"
    );
    // Columns left out say why: a category code, a column that moves with an attribute, an identifier.
    assert!(
        text.contains("# left out: `district` looks like a category code"),
        "{text}"
    );
    assert!(
        text.contains("# left out: `distance_km` moves with"),
        "{text}"
    );
    assert!(text.contains("#   trip_id: an identifier"), "{text}");
}

#[test]
fn new_refuses_to_replace_a_file_without_force() {
    let dir = scratch("draft-force");
    let out = write(&dir, "mine.toml", "# mine\n");
    let (code, _, err) = run(&[
        "new",
        "demo-data/ratings.csv",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 1);
    assert!(
        err.contains("mine.toml") && err.contains("--force"),
        "{err}"
    );
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "# mine\n");
    let (code, _, err) = run(&[
        "new",
        "demo-data/ratings.csv",
        "--out",
        out.to_str().unwrap(),
        "--force",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(std::fs::read_to_string(&out).unwrap().contains("[data]"));
}

#[test]
fn files_that_are_not_choices_are_refused_with_the_reason() {
    let dir = scratch("draft-refusals");
    let cases = [
        ("one.csv", "x\n1\n2\n3\n", "it has 1 column"),
        (
            "notes.txt",
            "Dear all,\nthe notes from Tuesday are attached.\n",
            "must end in .csv or .parquet",
        ),
        (
            "notes.csv",
            "Dear all,\nthe notes from Tuesday are attached.\n",
            "row 1 (line 2 of the file) has 1 field but the header names 2 columns",
        ),
        (
            "measures.csv",
            "height,weight\n1.71,60.2\n1.80,75.5\n1.65,58.0\n",
            "no column looks like the chosen alternative",
        ),
        (
            "same.csv",
            "mode,bus_time,car_time\nbus,1,2\nbus,3,4\n",
            "`mode` looks like the chosen alternative but holds one value only (`bus`)",
        ),
        (
            "gaps.csv",
            "mode,bus_time,car_time\nbus,1,2\n,3,4\ncar,2,2\n",
            "`mode` looks like the chosen alternative but is missing in 1 row (first at row 2)",
        ),
    ];
    for (name, body, why) in cases {
        let file = write(&dir, name, body);
        let out = dir.join(format!("{name}.toml"));
        let (code, _, err) = run(&[
            "new",
            file.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ]);
        assert_eq!(code, 1, "{name}");
        assert!(err.contains(name) && err.contains(why), "{name}: {err}");
        assert!(!out.exists(), "{name}: a draft was written");
    }
}

#[test]
fn a_code_of_the_alternative_is_left_out_of_a_long_draft() {
    // Greene's travel-mode data carry `mode` (1-4), a code of `alt`: as an
    // attribute it would move with the constants (fact: it is a linear
    // combination of them), so the draft leaves it out and says why.
    let dir = scratch("draft-modechoice");
    let (spec, stdout) = draft("tests/data/modechoice_long.csv", &dir, "mode.toml");
    assert!(stdout.contains("long layout"), "{stdout}");
    let text = std::fs::read_to_string(&spec).unwrap();
    assert!(
        text.contains("#   mode: one value per alternative in every situation"),
        "{text}"
    );
    assert!(!text.contains("column = \"mode\""), "{text}");
    let spec = sharecast::model::read_spec(&spec).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    assert!(
        fit.stats.converged && fit.diagnostics.is_empty(),
        "{:?}",
        fit.diagnostics
    );
}

#[test]
fn codes_carried_by_column_names_make_a_wide_draft() {
    // Constructed data: the chosen code (1-3) is carried by `time_1` ..
    // `time_3`; `case` counts the rows and is an identifier, not a characteristic.
    let dir = scratch("draft-codes");
    let mut body = String::from("case,mode,time_1,time_2,time_3,age\n");
    for i in 0..30 {
        let t = [10 + (i * 7) % 23, 12 + (i * 5) % 19, 9 + (i * 11) % 29];
        let best = (0..3)
            .min_by_key(|&k| t[k] + (i % 3 == k) as usize * 5)
            .unwrap_or(0);
        body.push_str(&format!(
            "{},{},{},{},{},{}\n",
            i + 1,
            best + 1,
            t[0],
            t[1],
            t[2],
            20 + (i * 13) % 50
        ));
    }
    let data = write(&dir, "codes.csv", &body);
    let (spec, stdout) = draft(data.to_str().unwrap(), &dir, "codes.toml");
    let text = std::fs::read_to_string(&spec).unwrap();
    assert!(
        stdout.contains("3 other columns' names carry them"),
        "{stdout}"
    );
    assert!(
        text.contains(
            "columns = { mode_1 = \"time_1\", mode_2 = \"time_2\", mode_3 = \"time_3\" }"
        ),
        "{text}"
    );
    assert!(text.contains("code = 2"), "{text}");
    assert!(text.contains("#   case: a counter"), "{text}");
    assert!(text.contains("column = \"age\""), "{text}");
}

#[test]
fn a_draft_into_a_new_nested_folder_names_its_data_from_there() {
    // `--out` into folders that do not exist yet: they are made, and the data
    // path written is right from the spec's folder, so `check` of the spec
    // succeeds from any working directory.
    let dir = scratch("draft-nested");
    let data = path("demo-data/commute.csv");
    for (out, up) in [
        (dir.join("a/b/c/commute.toml"), 6),
        (dir.join("x/../y/z/commute.toml"), 5),
    ] {
        let (code, _, err) = run(&[
            "new",
            data.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ]);
        assert_eq!(code, 0, "{}: {err}", out.display());
        let text = std::fs::read_to_string(&out).unwrap();
        let want = format!("file = \"{}demo-data/commute.csv\"", "../".repeat(up));
        assert!(
            text.contains(&want),
            "{}: no {want} in\n{text}",
            out.display()
        );
        for cwd in [dir.clone(), std::env::temp_dir()] {
            let status = std::process::Command::new(env!("CARGO_BIN_EXE_sharecast"))
                .args(["check", out.to_str().unwrap()])
                .current_dir(&cwd)
                .output()
                .unwrap();
            assert!(
                status.status.success(),
                "check from {}: {}",
                cwd.display(),
                String::from_utf8_lossy(&status.stderr)
            );
        }
    }
    // A relative --out from another working directory.
    let (code, _, err) = run(&[
        "new",
        "demo-data/commute.csv",
        "--out",
        "target/test-scratch/draft-nested/r/s/commute.toml",
    ]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(dir.join("r/s/commute.toml")).unwrap();
    assert!(
        text.contains("file = \"../../../../../demo-data/commute.csv\""),
        "{text}"
    );
}
