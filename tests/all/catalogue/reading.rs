//! The catalogue's bad files read by other commands than `check`: data files
//! drafted by `new` (rows of the wrong length, columns named like a choice
//! that cannot be one), population files of `simulate --data` read whole and
//! in chunks (every check of the whole-file reader in every chunk), and
//! options and outputs (`--chunk-rows` alone, a folder that cannot be written).

use super::{spec, with_note, CSV};
use crate::common::*;

#[track_caller]
fn refused(r: &(i32, String, String), what: &str, words: &[&str]) {
    let (code, out, err) = r;
    assert_eq!(*code, 1, "{what}: expected a refusal, got:\n{out}\n{err}");
    assert!(!err.contains("panicked"), "{what}: panicked:\n{err}");
    for w in words {
        assert!(err.contains(w), "{what}: message lacks `{w}`:\n{err}");
    }
}

#[test]
fn drafts_refuse_rows_of_the_wrong_length_naming_the_row_and_its_line() {
    // A short row would be read as missing values and change the guesses (a
    // weight column with a gap is no weight): `new` refuses it, and a long
    // one, naming the file, the data row, its line and both counts.
    let dir = scratch("draft_ragged");
    let quoted = CSV
        .replace("id,who,", "id,note,who,")
        .replace("\n1,", "\n1,\"two\nlines\",")
        .replace("\n2,", "\n2,x,")
        .replace("\n3,", "\n3,x,")
        .replace("\n4,", "\n4,x,")
        .replace("\n5,3", "\n5,x,3")
        .replace("\n6,", "\n6,x,");
    let cases: Vec<(&str, String, &[&str])> = vec![
        (
            "short middle row",
            CSV.replace(",30\n", "\n"),
            &["row 3 (line 4 of the file)", "7 fields", "8 columns"],
        ),
        (
            "short last row without a line end",
            CSV.trim_end().trim_end_matches(",60").to_string(),
            &["row 6 (line 7 of the file)", "7 fields"],
        ),
        (
            "long first row",
            CSV.replace(",10\n", ",10,\n"),
            &["row 1 (line 2 of the file)", "9 fields", "8 columns"],
        ),
        (
            "short row after a quoted line end",
            quoted.replace("\n5,x,3", "\n5,3"),
            &["row 5 (line 7 of the file)", "8 fields", "9 columns"],
        ),
        (
            "short row after empty lines",
            CSV.replace("\n2,", "\n\n\n2,").replace(",20\n", "\n"),
            &["row 2 (line 5 of the file)", "7 fields"],
        ),
    ];
    for (name, csv, words) in cases {
        let (r, out) = draft(&dir, &csv);
        let mut all = vec!["d.csv"];
        all.extend_from_slice(words);
        refused(&r, name, &all);
        assert!(!out.exists(), "{name}: a draft was written");
    }
    // The same file with every row whole is drafted, with its weight.
    let ((code, _, err), out) = draft(&dir, &quoted);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(out).unwrap();
    assert!(text.contains("weight = \"wt\""), "{text}");
}

/// `new` on `csv` written as `d.csv` in `dir`, drafting `d.toml`: the run and the draft's path.
fn draft(dir: &std::path::Path, csv: &str) -> ((i32, String, String), std::path::PathBuf) {
    let data = write(dir, "d.csv", csv);
    let out = dir.join("d.toml");
    let _ = std::fs::remove_file(&out);
    let r = run(&[
        "new",
        data.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    (r, out)
}

#[test]
fn a_column_named_like_the_choice_that_cannot_be_one_says_why() {
    // A column named like a choice with too many values, or with numbers
    // that are not whole, is named with what is wrong (its count and the limit).
    let dir = scratch("draft_choice_named");
    let many: String = std::iter::once("id,choice,ca,cb\n".to_string())
        .chain((0..200).map(|i| format!("{i},opt{},{}.5,{}.25\n", i % 100, i % 7, i % 5)))
        .collect();
    let sixty_five: String = std::iter::once("id,mode,ca,cb\n".to_string())
        .chain((0..130).map(|i| format!("{i},{},{}.5,{}.25\n", i % 65 + 1, i % 7, i % 5)))
        .collect();
    let halves: String = std::iter::once("id,rating,x\n".to_string())
        .chain((0..20).map(|i| format!("{i},{}.5,{}\n", i % 3, i % 4)))
        .collect();
    for (name, csv, words) in [
        (
            "100 names",
            many,
            &["`choice`", "100 distinct values", "64"][..],
        ),
        (
            "65 codes",
            sixty_five,
            &["`mode`", "65 distinct values", "64"],
        ),
        (
            "numbers not whole",
            halves,
            &["`rating`", "not whole", "`0.5`"],
        ),
    ] {
        let (r, _) = draft(&dir, &csv);
        let mut all = vec!["d.csv"];
        all.extend_from_slice(words);
        refused(&r, name, &all);
        let (_, _, err) = r;
        assert!(
            !err.contains("is named like a choice (choice"),
            "{name}: {err}"
        );
    }
}

#[test]
fn every_data_check_holds_for_a_population_read_in_chunks() {
    // The whole-file reader's checks, each with the bad row in the first, a
    // middle and the last chunk (chunks of 2 rows: decision makers are rows
    // 1-2, 3-4 and 5-6): the same refusal, naming the file row, read whole
    // or in chunks.
    let dir = scratch("population_checks");
    write(
        &dir,
        "s.toml",
        "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\n",
    );
    let good = with_note(&["1", "2", "3", "4", "5", "6"]);
    write(&dir, "good.csv", &good);
    let plain = spec("good.csv", "");
    let derived =
        spec("good.csv", "[derived]\nk = \"ca + note\"\n").replace("a = \"ca\"", "a = \"k\"");
    // Row `row` with field `k` (id, note, who, mode, wt, ca, ...) set to `value`, or one field more.
    let edit = |row: usize, k: Option<usize>, value: &str| -> String {
        let mut lines: Vec<String> = good.lines().map(str::to_string).collect();
        match k {
            Some(k) => {
                let mut f: Vec<&str> = lines[row].split(',').collect();
                f[k] = value;
                lines[row] = f.join(",");
            }
            None => lines[row].push_str(",9"),
        }
        lines.join("\n") + "\n"
    };
    let mut cases: Vec<(&str, &String, String, Vec<String>)> = Vec::new();
    for row in [1usize, 4, 6] {
        cases.push((
            "more fields",
            &plain,
            edit(row, None, ""),
            vec![format!("row {row} (line {}", row + 1), "10 fields".into()],
        ));
        cases.push((
            "not a number",
            &plain,
            edit(row, Some(5), "NaN"),
            vec!["`ca`".into(), format!("row {row} (")],
        ));
        cases.push((
            "undeclared choice",
            &plain,
            edit(row, Some(3), "ferry"),
            vec!["`ferry`".into(), format!("row {row}:")],
        ));
        cases.push((
            "negative weight",
            &plain,
            edit(row, Some(4), "-1"),
            vec!["`wt`".into(), "positive".into(), format!("row {row} has")],
        ));
        cases.push((
            "derived reads text",
            &derived,
            edit(row, Some(1), "late"),
            vec![
                "[derived].k".into(),
                "`late`".into(),
                format!("row {row} of"),
            ],
        ));
    }
    for (what, spec_text, population, words) in &cases {
        let sp = write(&dir, "spec.toml", spec_text);
        let pop = write(&dir, "pop.csv", population);
        for rows in ["2", "1000"] {
            let r = run(&[
                "simulate",
                sp.to_str().unwrap(),
                "--scenario",
                dir.join("s.toml").to_str().unwrap(),
                "--data",
                pop.to_str().unwrap(),
                "--chunk-rows",
                rows,
                "--draws",
                "0",
            ]);
            let mut all: Vec<&str> = vec!["pop.csv"];
            all.extend(words.iter().map(String::as_str));
            refused(&r, &format!("{what}, chunks of {rows}"), &all);
        }
    }
}

#[test]
fn chunk_rows_goes_with_data_and_a_failed_write_names_the_file_asked_for() {
    let dir = scratch("usability");
    write(&dir, "d.csv", CSV);
    let sp = write(&dir, "spec.toml", &spec("d.csv", ""));
    let sc = write(
        &dir,
        "s.toml",
        "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\n",
    );
    let (sp, sc) = (sp.to_str().unwrap(), sc.to_str().unwrap());
    // --chunk-rows without --data would be ignored: it is refused, saying what it goes with.
    let r = run(&[
        "simulate",
        sp,
        "--scenario",
        sc,
        "--chunk-rows",
        "5",
        "--draws",
        "0",
    ]);
    refused(&r, "--chunk-rows alone", &["--chunk-rows", "--data"]);
    // A folder that cannot be written in (here a file stands where the folder
    // would be, which refuses even a user who may write anywhere): every
    // writer names the file asked for, not its temporary file.
    write(&dir, "afile", "x");
    for (args, target) in [
        (
            vec!["simulate", sp, "--scenario", sc, "--draws", "0", "--out"],
            "afile/forecast.csv",
        ),
        (
            vec![
                "simulate",
                sp,
                "--scenario",
                sc,
                "--draws",
                "0",
                "--per-situation",
                "--out",
            ],
            "afile/rows.parquet",
        ),
        (vec!["fit", sp, "--save"], "afile/fit.json"),
        (
            vec!["new", dir.join("d.csv").to_str().unwrap(), "--out"],
            "afile/d.toml",
        ),
    ] {
        let out = dir.join(target);
        let mut all = args.clone();
        all.push(out.to_str().unwrap());
        let r = run(&all);
        refused(&r, target, &[out.to_str().unwrap()]);
        let (_, _, err) = r;
        let first = err.lines().next().unwrap_or("");
        assert!(
            first.starts_with(&format!("error: {}:", out.display())),
            "{target}: {err}"
        );
    }
}
