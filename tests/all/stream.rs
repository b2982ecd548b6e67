//! Forecasts over a population read in chunks (`simulate --data FILE
//! --chunk-rows N`) against the same forecast over the whole file in memory.
//! The reference is a fact of the method: sample enumeration is a sum over
//! independent situations, so sums over chunks added together equal the sum
//! over the file; only the order of the additions differs, so the figures
//! agree to 1e-12 (relative, or absolute for shares below 1) and counts,
//! labels and per-situation rows agree exactly.

mod checks;

use std::path::Path;

use serde_json::Value;

use crate::common::{path, run, scratch, write};

/// Runs `simulate` and returns its JSON document.
fn forecast(args: &[&str]) -> Value {
    let mut all = vec!["simulate"];
    all.extend_from_slice(args);
    all.push("--json");
    let (code, out, err) = run(&all);
    assert_eq!(code, 0, "simulate {args:?}: {err}");
    serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {out}"))
}

/// Every number within 1e-12 (relative above 1), everything else equal.
#[track_caller]
fn same(what: &str, a: &Value, b: &Value) {
    match (a, b) {
        (Value::Number(x), Value::Number(y)) => {
            let (x, y) = (x.as_f64().unwrap(), y.as_f64().unwrap());
            assert!(
                (x - y).abs() <= 1e-12 * y.abs().max(1.0),
                "{what}: {x} in chunks, {y} in memory"
            );
        }
        (Value::Array(x), Value::Array(y)) => {
            assert_eq!(x.len(), y.len(), "{what}: lengths");
            for (k, (p, q)) in x.iter().zip(y).enumerate() {
                same(&format!("{what}[{k}]"), p, q);
            }
        }
        (Value::Object(x), Value::Object(y)) => {
            let keys = |o: &serde_json::Map<String, Value>| o.keys().cloned().collect::<Vec<_>>();
            assert_eq!(keys(x), keys(y), "{what}: keys");
            for (k, p) in x {
                same(&format!("{what}.{k}"), p, &y[k]);
            }
        }
        _ => assert_eq!(a, b, "{what}"),
    }
}

/// The forecast with `args` over `data` in chunks of `rows` rows and whole.
fn chunks_and_whole(base: &[&str], data: &str, rows: usize) -> (Value, Value) {
    let rows = rows.to_string();
    let mut chunked = base.to_vec();
    chunked.extend_from_slice(&["--data", data, "--chunk-rows", &rows]);
    let mut whole = base.to_vec();
    whole.extend_from_slice(&["--data", data, "--chunk-rows", "100000000"]);
    (forecast(&chunked), forecast(&whole))
}

#[test]
fn csv_in_chunks_gives_the_whole_file_figures_with_segments_volumes_revenue_and_bands() {
    // The commute demo: weights, decision makers kept together, 6,000 rows in
    // 9 chunks of 700 (the last shorter).
    let base = [
        "specs/commute.toml",
        "--scenario",
        "specs/scenarios/rail_fare_up.toml",
        "--by",
        "district",
        "--market",
        "250000",
        "--draws",
        "40",
    ];
    let (c, w) = chunks_and_whole(&base, "demo-data/commute.csv", 700);
    same("forecast", &c, &w);
    assert_eq!(c["situations"], 6000);
    assert_eq!(c["draws"], 40);
    assert_eq!(c["segments"].as_array().unwrap().len(), 5 * 5);
    let rail = &c["shares"][2];
    assert!(rail["scenario_revenue"].as_f64().unwrap() > 0.0, "{rail}");
    assert!(rail["low"].as_f64().unwrap() < rail["high"].as_f64().unwrap());
    // Volumes are the market times the shares (definition).
    let v = rail["scenario_volume"].as_f64().unwrap();
    assert!((v - 250000.0 * rail["scenario"].as_f64().unwrap()).abs() < 1e-6);
    // Weights read as demand units add up over the chunks.
    let base_w = [
        "specs/commute.toml",
        "--scenario",
        "specs/scenarios/tram_line.toml",
        "--market",
        "weights",
        "--draws",
        "0",
    ];
    let (c, w) = chunks_and_whole(&base_w, "demo-data/commute.csv", 1111);
    same("forecast with a new alternative", &c, &w);
}

#[test]
fn the_default_chunk_of_a_small_file_is_the_in_memory_forecast_bit_for_bit() {
    let base = [
        "specs/commute.toml",
        "--scenario",
        "specs/scenarios/rail_fare_up.toml",
        "--draws",
        "30",
        "--by",
        "district",
    ];
    let estimation = forecast(&base);
    let mut other = base.to_vec();
    other.extend_from_slice(&["--data", "demo-data/commute.csv"]);
    assert_eq!(forecast(&other), estimation);
}

#[test]
fn parquet_long_layout_in_chunks_never_splits_a_purchase() {
    // The grocery demo is long (a row per purchase and brand) and Parquet;
    // chunks of 1,000 rows end inside purchases and households.
    let base = [
        "specs/grocery.toml",
        "--scenario",
        "specs/scenarios/own_label_promo.toml",
        "--market",
        "1000",
        "--draws",
        "25",
    ];
    let (c, w) = chunks_and_whole(&base, "demo-data/grocery.parquet", 1000);
    same("forecast", &c, &w);
    assert_eq!(c["situations"], w["situations"]);
}

#[test]
fn mixed_panel_in_chunks_gets_each_decision_maker_the_same_draws() {
    // 600 respondents x 8 tasks; chunks of 500 rows end inside respondents.
    let base = [
        "specs/express_survey.toml",
        "--scenario",
        "specs/scenarios/express_fare_cut.toml",
        "--draws",
        "10",
    ];
    let (c, w) = chunks_and_whole(&base, "demo-data/express_survey.csv", 500);
    same("forecast", &c, &w);
}

/// A small data set and spec for a registered family: `n` situations of 4
/// alternatives (2 for a binary family), attribute `x` (not for a
/// single-index family), characteristic `z`, weights, a segment column.
fn family_case(dir: &Path, e: &sharecast::model::registry::Entry, n: usize) -> String {
    let j = e.example_alternatives;
    let single = e.rules.single_index();
    let mut rng = sharecast::rng::Rng::new(17);
    let mut csv = String::from("alt,z,w,seg");
    for a in 0..j {
        csv.push_str(&format!(",x_a{a}"));
    }
    csv.push('\n');
    for i in 0..n {
        let z = 2.0 * rng.uniform() - 1.0;
        let x: Vec<f64> = (0..j).map(|_| 3.0 * rng.uniform()).collect();
        let choice = if single {
            let y = 1.5 * z + (rng.uniform() - 0.5) * 3.0;
            [(-0.6), 0.0, 0.6]
                .iter()
                .take(j - 1)
                .filter(|c| y > **c)
                .count()
        } else {
            (0..j)
                .map(|a| (a, -0.8 * x[a] + 0.3 * a as f64 + rng.gumbel()))
                .max_by(|p, q| p.1.total_cmp(&q.1))
                .map(|p| p.0)
                .unwrap_or(0)
        };
        csv.push_str(&format!(
            "a{choice},{z:.4},{:.3},{}",
            0.5 + rng.uniform(),
            1 + i % 3
        ));
        for v in &x {
            csv.push_str(&format!(",{v:.4}"));
        }
        csv.push('\n');
    }
    let name = format!(
        "{}_{}",
        e.name.replace('-', "_"),
        (e.example_model.len() + e.example_attribute.len()) % 97
    );
    write(dir, &format!("{name}.csv"), &csv);
    let mut spec = format!(
        "[data]\nfile = \"{name}.csv\"\nlayout = \"wide\"\nchoice = \"alt\"\nweight = \"w\"\n[model]\nfamily = \"{}\"\n{}",
        e.name,
        if single { "" } else { "base = \"a0\"\n" }
    );
    spec.push_str(e.example_model);
    for a in 0..j {
        spec.push_str(&format!("[alternatives.a{a}]\n"));
    }
    if !single {
        let cols: Vec<String> = (0..j).map(|a| format!("a{a} = \"x_a{a}\"")).collect();
        spec.push_str(&format!(
            "[[attribute]]\nname = \"x\"\ncolumns = {{ {} }}\n{}",
            cols.join(", "),
            e.example_attribute
        ));
    }
    spec.push_str("[[characteristic]]\nname = \"z\"\ncolumn = \"z\"\n");
    spec.push_str(e.example_spec);
    write(dir, &format!("{name}.toml"), &spec);
    name
}

#[test]
fn every_registered_family_forecasts_the_same_in_chunks() {
    let dir = scratch("stream_families");
    write(
        &dir,
        "scenario.toml",
        "name = \"z up\"\n[[change]]\nattribute = \"z\"\nmultiply = 1.5\n",
    );
    // A characteristic change works for every family, single-index ones too.
    let scenario = dir.join("scenario.toml");
    for e in sharecast::model::registry::FAMILIES {
        let name = family_case(&dir, e, 1500);
        let spec = dir.join(format!("{name}.toml"));
        let data = dir.join(format!("{name}.csv"));
        let base = [
            spec.to_str().unwrap(),
            "--scenario",
            scenario.to_str().unwrap(),
            "--by",
            "seg",
            "--market",
            "weights",
            "--draws",
            "12",
        ];
        let (c, w) = chunks_and_whole(&base, data.to_str().unwrap(), 400);
        same(e.name, &c, &w);
        assert_eq!(c["draws"], 12, "{}", e.name);
    }
}

#[test]
fn per_situation_rows_in_chunks_are_the_whole_files_rows() {
    let dir = scratch("stream_per_situation");
    for ext in ["csv", "json", "parquet"] {
        let mut files = Vec::new();
        for rows in ["450", "100000000"] {
            let out = dir.join(format!("rows_{rows}.{ext}"));
            let args = [
                "simulate",
                "specs/commute.toml",
                "--scenario",
                "specs/scenarios/tram_line.toml",
                "--data",
                "demo-data/commute.csv",
                "--chunk-rows",
                rows,
                "--draws",
                "0",
                "--per-situation",
                "--out",
                out.to_str().unwrap(),
            ];
            let (code, _, err) = run(&args);
            assert_eq!(code, 0, "{ext} {rows}: {err}");
            // Written once, then refused without --force (atomic, never overwritten).
            let (code, _, err) = run(&args);
            assert_ne!(code, 0);
            assert!(err.contains("--force"), "{err}");
            files.push(out);
        }
        if ext == "parquet" {
            let read = |p: &Path| {
                let names: Vec<String> = sharecast::data::load::column_names(p).unwrap();
                let t = sharecast::data::load::read(p, &names, &[]).unwrap();
                names
                    .iter()
                    .map(|n| t.raw_numbers(n).unwrap().to_vec())
                    .collect::<Vec<_>>()
            };
            let (a, b) = (read(&files[0]), read(&files[1]));
            assert_eq!(a, b, "parquet rows differ");
            assert_eq!(a[0].len(), 6000);
        } else {
            let a = std::fs::read(&files[0]).unwrap();
            let b = std::fs::read(&files[1]).unwrap();
            assert!(a == b, "{ext}: the chunked file differs from the whole one");
        }
    }
}

/// `simulate` of the rail fare scenario over `data` in chunks of `rows`; (exit code, stderr).
pub(super) fn over(data: &Path, rows: &str) -> (i32, String) {
    let (code, _, err) = run(&[
        "simulate",
        "specs/commute.toml",
        "--scenario",
        "specs/scenarios/rail_fare_up.toml",
        "--data",
        data.to_str().unwrap(),
        "--chunk-rows",
        rows,
        "--draws",
        "0",
    ]);
    (code, err)
}

#[test]
fn errors_in_chunks_name_the_file_the_column_and_the_file_row() {
    let dir = scratch("stream_errors");
    let text = std::fs::read_to_string(path("demo-data/commute.csv")).unwrap();
    // A population file without `rail_fare`.
    let header: Vec<&str> = text.lines().next().unwrap().split(',').collect();
    let drop = header.iter().position(|c| *c == "rail_fare").unwrap();
    let cut: String = text
        .lines()
        .map(|l| {
            let mut f: Vec<&str> = l.split(',').collect();
            f.remove(drop);
            f.join(",") + "\n"
        })
        .collect();
    let missing = write(&dir, "no_rail_fare.csv", &cut);
    // A population file with a bad value at file row 4,321 (line 4,322).
    let mut lines: Vec<String> = text.lines().map(|l| l.to_string()).collect();
    let mut f: Vec<String> = lines[4321].split(',').map(|s| s.to_string()).collect();
    f[drop] = "n/a".into();
    lines[4321] = f.join(",");
    let bad = write(&dir, "bad_row.csv", &(lines.join("\n") + "\n"));
    for rows in ["500", "100000000"] {
        let go = |data: &Path| over(data, rows);
        let (code, err) = go(&missing);
        assert_ne!(code, 0);
        assert!(
            err.contains("no_rail_fare.csv") && err.contains("`rail_fare`"),
            "{rows}: {err}"
        );
        let (code, err) = go(&bad);
        assert_ne!(code, 0);
        assert!(
            err.contains("bad_row.csv") && err.contains("rail_fare") && err.contains("4321"),
            "{rows}: {err}"
        );
    }
    // --chunk-rows 0 is refused naming the flag.
    let (code, err) = over(Path::new("demo-data/commute.csv"), "0");
    assert_ne!(code, 0);
    assert!(err.contains("--chunk-rows"), "{err}");
}

#[test]
fn draws_of_a_later_part_are_the_whole_runs_draws_for_every_sequence() {
    // What chunked mixed forecasts rely on: decision makers 7..19 of a run of
    // 19 get the same uniforms whether made with the others or on their own
    // (a property of the sequences as defined: Halton by position, MLHS and
    // pseudo-random by the generator's order).
    for sequence in ["halton", "mlhs", "pseudo"] {
        let keys: toml::Table = toml::from_str(&format!(
            "[simulation]\ndraws = 13\nsequence = \"{sequence}\"\nseed = 5\n"
        ))
        .unwrap();
        let s = sharecast::model::draws::Simulation::from_keys(&keys).unwrap();
        let whole = s.uniforms(19, 3);
        let part = s.uniforms_from(7, 12, 3);
        assert_eq!(&whole[7 * 3 * 13..], &part[..], "{sequence}");
        assert_ne!(
            &whole[..12 * 3 * 13],
            &part[..],
            "{sequence}: not a restart"
        );
    }
}

#[test]
fn an_ordered_forecast_over_chunks_that_lack_a_rating_is_the_whole_files() {
    // A forecast reads no observed rating, so a chunk in which a rating never
    // occurs is forecast like any other (a fit would refuse such data: its
    // cut-points would not be identified). The demo ratings sorted by rating
    // and read 100 rows at a time give chunks of one rating each.
    let dir = scratch("stream_ordered_sorted");
    let text = std::fs::read_to_string(path("demo-data/ratings.csv")).unwrap();
    let mut lines: Vec<&str> = text.lines().collect();
    let header = lines.remove(0);
    lines.sort_by_key(|l| l.split(',').nth(2).unwrap_or("").to_string());
    let data = dir.join("sorted.csv");
    std::fs::write(&data, format!("{header}\n{}\n", lines.join("\n"))).unwrap();
    write(
        &dir,
        "slower.toml",
        "name = \"slower\"\n[[change]]\nattribute = \"wait_minutes\"\nmultiply = 1.2\n",
    );
    let scenario = dir.join("slower.toml");
    let base = [
        "specs/delivery_ratings.toml",
        "--scenario",
        scenario.to_str().unwrap(),
        "--draws",
        "0",
    ];
    let (c, w) = chunks_and_whole(&base, data.to_str().unwrap(), 100);
    same("ordered in sorted chunks", &c, &w);
}
