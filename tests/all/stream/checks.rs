//! Populations read in chunks are checked as a whole file is: a row with
//! more fields than the header, bad values of a Parquet population, in the
//! first, a middle and the last chunk; and a population without observed
//! choices is forecast as one with them.

use std::path::Path;

use super::{chunks_and_whole, over, same};
use crate::common::{path, run, scratch, write};

/// A copy of a shipped data file at `out` (CSV or Parquet by its ending),
/// less the column `drop` (if any), with `edit` applied to each numeric
/// column's values by name.
fn copy_of(data: &str, out: &Path, drop: &str, edit: &dyn Fn(&str, &mut Vec<f64>)) {
    use sharecast::data::{load, write, Column};
    let (names, _) = load::readable_columns(&path(data)).unwrap();
    let t = load::read(&path(data), &names, &names).unwrap();
    let mut cols = Vec::new();
    for n in names.iter().filter(|n| *n != drop) {
        let v = match t.column(n).unwrap() {
            Column::Num(v) => {
                let mut v = v.clone();
                edit(n, &mut v);
                write::Values::Num(v)
            }
            Column::Text(v) => {
                write::Values::Text(v.iter().map(|x| x.clone().unwrap_or_default()).collect())
            }
        };
        cols.push((n.clone(), v));
    }
    write::table(out, true, &cols).unwrap();
}

#[test]
fn a_population_without_observed_choices_is_forecast_as_one_with_them() {
    // A forecast reads no observed choice: a population file without the
    // choice column (wide) or the chosen column (long) gives the same figures,
    // whole and in chunks.
    let dir = scratch("stream_no_choices");
    let wide = dir.join("commute_no_mode.parquet");
    copy_of("demo-data/commute.csv", &wide, "mode", &|_, _| {});
    let base = [
        "specs/commute.toml",
        "--scenario",
        "specs/scenarios/rail_fare_up.toml",
        "--by",
        "district",
        "--draws",
        "20",
    ];
    let (with_c, with_w) = chunks_and_whole(&base, "demo-data/commute.csv", 700);
    let (c, w) = chunks_and_whole(&base, wide.to_str().unwrap(), 700);
    same("wide, in chunks", &c, &with_c);
    same("wide, whole", &w, &with_w);
    let long = dir.join("grocery_no_chosen.parquet");
    copy_of("demo-data/grocery.parquet", &long, "chosen", &|_, _| {});
    let base = [
        "specs/grocery.toml",
        "--scenario",
        "specs/scenarios/own_label_promo.toml",
        "--draws",
        "10",
    ];
    let (with_c, with_w) = chunks_and_whole(&base, "demo-data/grocery.parquet", 1000);
    let (c, w) = chunks_and_whole(&base, long.to_str().unwrap(), 1000);
    same("long, in chunks", &c, &with_c);
    same("long, whole", &w, &with_w);
    // Fitting still needs the observed choices: the spec's own file without them is refused.
    let spec = std::fs::read_to_string(path("specs/commute.toml"))
        .unwrap()
        .replace("../demo-data/commute.csv", "commute_no_mode.parquet");
    let sp = write(&dir, "commute.toml", &spec);
    let (code, _, err) = run(&["check", sp.to_str().unwrap()]);
    assert_eq!(code, 1, "{err}");
    assert!(
        err.contains("commute_no_mode.parquet") && err.contains("`mode`"),
        "{err}"
    );
}

#[test]
fn a_row_with_more_fields_is_refused_in_the_first_a_middle_and_the_last_chunk() {
    // The whole-file reader refuses a row with more fields than the header;
    // so does every chunk, naming the file row (and its line), whichever
    // chunk holds it.
    let dir = scratch("stream_ragged");
    let text = std::fs::read_to_string(path("demo-data/commute.csv")).unwrap();
    for row in [10, 3000, 5999] {
        let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
        lines[row].push_str(",99");
        let bad = write(
            &dir,
            &format!("ragged_{row}.csv"),
            &(lines.join("\n") + "\n"),
        );
        for rows in ["700", "100000000"] {
            let (code, err) = over(&bad, rows);
            assert_eq!(code, 1, "row {row}, chunks of {rows}: {err}");
            for w in [
                format!("ragged_{row}.csv"),
                format!("row {row} (line {}", row + 1),
                "24 fields".into(),
                "23 columns".into(),
            ] {
                assert!(
                    err.contains(&w),
                    "row {row}, chunks of {rows}: no `{w}` in {err}"
                );
            }
        }
    }
}

#[test]
fn bad_values_of_a_parquet_population_are_refused_in_every_chunk_naming_the_file_row() {
    // A missing fare and a negative weight at file rows in the first, a
    // middle and the last chunk of a Parquet population: the same refusal
    // as the whole file's, with the same row.
    let dir = scratch("stream_parquet_rows");
    for row in [10usize, 3000, 5999] {
        for (column, value, words) in [
            ("rail_fare", f64::NAN, "missing or not a number"),
            ("expansion", -1.0, "positive"),
        ] {
            let bad = dir.join(format!("{column}_{row}.parquet"));
            copy_of("demo-data/commute.csv", &bad, "", &|n, v| {
                if n == column {
                    v[row - 1] = value;
                }
            });
            for rows in ["700", "100000000"] {
                let (code, err) = over(&bad, rows);
                assert_eq!(code, 1, "{column} at {row}, chunks of {rows}: {err}");
                for w in [
                    format!("{column}_{row}.parquet"),
                    format!("`{column}`"),
                    format!("row {row} "),
                    words.to_string(),
                ] {
                    assert!(
                        err.contains(&w),
                        "{column} at {row}, chunks of {rows}: no `{w}` in {err}"
                    );
                }
            }
        }
    }
}
