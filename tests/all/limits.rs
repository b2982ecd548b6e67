//! The catalogue's second part: inputs that used to crash, overflow the stack,
//! hang or print nonsense (output to a full disk, Parquet column types, absurd
//! counts, deep expressions, huge start values, identifier segments, NaN in
//! scenarios, stranded situations, out-of-range options). Each must end with a
//! message and a clean exit, in bounded time.

mod quotes;

use std::io::Read;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use crate::common::*;

pub const CSV: &str = "id,who,mode,wt,ca,cb,cc,inc\n1,1,a,1.0,1.0,2.0,3.0,10\n2,1,b,1.0,1.5,2.5,3.5,20\n3,2,c,1.0,1.2,2.2,3.2,30\n4,2,a,2.0,1.1,2.1,3.1,40\n5,3,b,1.0,2.1,1.1,3.3,50\n6,3,c,1.0,1.9,2.4,1.3,60\n";

pub fn spec(data: &str, extra: &str) -> String {
    format!(
        "[data]\nfile = \"{data}\"\nlayout = \"wide\"\nchoice = \"mode\"\nweight = \"wt\"\ngroup = \"who\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[alternatives.c]\n[[attribute]]\nname = \"cost\"\ncolumns = {{ a = \"ca\", b = \"cb\", c = \"cc\" }}\n[[characteristic]]\nname = \"income\"\ncolumn = \"inc\"\n{extra}"
    )
}

/// A scratch folder with `d.csv` (the catalogue data) and `spec.toml`.
pub fn setup(name: &str, csv: &str, spec_text: &str) -> std::path::PathBuf {
    let dir = scratch(name);
    write(&dir, "d.csv", csv);
    write(&dir, "spec.toml", spec_text);
    dir
}

/// Runs the binary in `dir` with a time limit; (exit code, stdout, stderr).
/// A run past the limit is killed and fails the test: it would have hung.
pub fn run_in(dir: &std::path::Path, args: &[&str], limit_s: u64) -> (i32, String, String) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_sharecast"))
        .args(args)
        .current_dir(dir)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let (mut out, mut err) = (child.stdout.take().unwrap(), child.stderr.take().unwrap());
    let t_out = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = out.read_to_string(&mut s);
        s
    });
    let t_err = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = err.read_to_string(&mut s);
        s
    });
    let start = Instant::now();
    let status = loop {
        if let Some(s) = child.try_wait().unwrap() {
            break s;
        }
        if start.elapsed() > Duration::from_secs(limit_s) {
            let _ = child.kill();
            panic!("`sharecast {}` ran past {limit_s} s", args.join(" "));
        }
        std::thread::sleep(Duration::from_millis(20));
    };
    (
        status.code().unwrap_or(-1),
        t_out.join().unwrap(),
        t_err.join().unwrap(),
    )
}

#[track_caller]
fn fails_with(r: &(i32, String, String), words: &[&str]) {
    let (code, out, err) = r;
    assert_ne!(*code, 0, "expected a failure, got:\n{out}\n{err}");
    assert_ne!(*code, 101, "panicked:\n{err}");
    assert!(!err.contains("panicked"), "panicked:\n{err}");
    for w in words {
        assert!(err.contains(w), "message lacks `{w}`:\n{err}");
    }
}

#[test]
fn a_full_disk_is_an_error_and_a_closed_pipe_ends_quietly() {
    // `fit ... > /dev/full`: every write is checked; a message and exit 1, no panic.
    let dir = setup("stdout_full", CSV, &spec("d.csv", ""));
    for args in [
        &["fit", "spec.toml"][..],
        &["fit", "spec.toml", "--json"],
        &["check", "spec.toml"],
    ] {
        let full = std::fs::OpenOptions::new()
            .write(true)
            .open("/dev/full")
            .unwrap();
        let out = Command::new(env!("CARGO_BIN_EXE_sharecast"))
            .args(args)
            .current_dir(&dir)
            .stdout(full)
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(1), "{args:?}: {err}");
        assert!(
            err.contains("standard output") && !err.contains("panicked"),
            "{err}"
        );
    }
    // `| head -1`: the reader goes away after one line; no message, no panic.
    let mut child = Command::new(env!("CARGO_BIN_EXE_sharecast"))
        .args(["fit", "spec.toml"])
        .current_dir(&dir)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let out = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.is_empty(), "a closed pipe printed: {err}");
}

#[test]
fn parquet_small_integers_and_decimals_are_cast_and_other_types_named() {
    // tests/data/types.parquet holds CSV's values as int8/int16/uint8/uint16 and
    // decimal columns (tests/reference/make_parquet_types.py): the fit must equal the CSV fit.
    let dir = setup("parquet_types", CSV, &spec("d.csv", ""));
    std::fs::copy(path("tests/data/types.parquet"), dir.join("t.parquet")).unwrap();
    write(&dir, "pq.toml", &spec("t.parquet", ""));
    let args = |s: &'static str| vec!["fit", s, "--json", "--no-analysis", "--allow-unconverged"];
    let (c1, o1, e1) = run_in(&dir, &args("spec.toml"), 60);
    let (c2, o2, e2) = run_in(&dir, &args("pq.toml"), 60);
    assert_eq!((c1, c2), (0, 0), "{e1}\n{e2}");
    let ll = |o: &str| {
        let v: serde_json::Value = serde_json::from_str(o).unwrap();
        v["fit"]["log_likelihood"].as_f64().unwrap()
    };
    assert!((ll(&o1) - ll(&o2)).abs() < 1e-9, "{o2}");
    // a uint32 flag as a characteristic, then types that cannot be numbers
    write(
        &dir,
        "flag.toml",
        &spec("t.parquet", "").replace("\"inc\"", "\"flag\""),
    );
    assert_eq!(run_in(&dir, &args("flag.toml"), 60).0, 0);
    for (col, kind) in [("when", "date"), ("lst", "list")] {
        let name = format!("{col}.toml");
        write(
            &dir,
            &name,
            &spec("t.parquet", "").replace("\"inc\"", &format!("\"{col}\"")),
        );
        let r = run_in(&dir, &["check", &name], 60);
        fails_with(&r, &["t.parquet", &format!("`{col}`"), kind]);
    }
}

#[test]
fn absurd_counts_are_refused_with_the_limit_and_the_memory() {
    let dir = setup(
        "absurd_counts",
        CSV,
        &spec(
            "d.csv",
            "[[ratio]]\nname = \"r\"\nnumerator = \"income_b\"\ndenominator = \"cost\"\n",
        ),
    );
    write(
        &dir,
        "s.toml",
        "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\n",
    );
    let max = usize::MAX.to_string();
    let near = (usize::MAX - 5).to_string();
    for args in [
        vec!["fit", "spec.toml", "--draws", &max],
        vec![
            "simulate",
            "spec.toml",
            "--scenario",
            "s.toml",
            "--draws",
            &near,
        ],
        vec![
            "sweep",
            "spec.toml",
            "--attribute",
            "cost",
            "--alternative",
            "b",
            "--steps",
            &max,
        ],
    ] {
        let r = run_in(&dir, &args, 60);
        let opt = if args.contains(&"--steps") {
            "--steps"
        } else {
            "--draws"
        };
        fails_with(&r, &[opt, "allowed", "GB of memory"]);
    }
}

#[test]
fn deep_or_long_expressions_are_refused_not_a_stack_overflow() {
    // Regression: these aborted the process with a stack overflow.
    let deep = format!("{}inc{}", "(".repeat(1500), ")".repeat(1500));
    let minus = format!("{}inc", "-".repeat(3000));
    let long = vec!["inc"; 2000].join(" + ");
    for (n, e) in [&deep, &minus, &long].into_iter().enumerate() {
        let words: &[&str] = if n == 2 {
            &["characters long", "4000"]
        } else {
            &["nested more than 64"]
        };
        let d = setup(
            &format!("deep_derived_{n}"),
            CSV,
            &spec("d.csv", &format!("[derived]\nk = \"{e}\"\n")),
        );
        fails_with(&run_in(&d, &["check", "spec.toml"], 60), words);
        let s = setup(&format!("deep_where_{n}"), CSV, &spec("d.csv", ""));
        write(
            &s,
            "s.toml",
            &format!(
                "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\nwhere = \"{e}\"\n"
            ),
        );
        let r = run_in(
            &s,
            &[
                "simulate",
                "spec.toml",
                "--scenario",
                "s.toml",
                "--draws",
                "0",
            ],
            60,
        );
        fails_with(&r, &["where", words[0]]);
        let restriction = format!("cost = {}", e.replace("inc", "income_b"));
        let r = run_in(&s, &["fit", "spec.toml", "--restrict", &restriction], 60);
        fails_with(&r, &["--restrict", words[0]]);
    }
}

#[test]
fn huge_start_values_end_in_a_named_failure_not_a_hang() {
    // Regression: a start of 1e308 sent the line search into an endless loop.
    for (n, extra) in [
        "[parameters]\ncost = { start = 1e308 }\n",
        "[parameters]\ncost = { start = -1e308 }\nincome_b = { start = 1e300 }\n",
        "[parameters]\ncost = { fixed = 1e308 }\n",
    ]
    .into_iter()
    .enumerate()
    {
        let d = setup(&format!("huge_start_{n}"), CSV, &spec("d.csv", extra));
        let r = run_in(&d, &["fit", "spec.toml", "--no-analysis"], 60);
        assert_ne!(r.0, 101, "{}", r.2);
        assert!(!r.2.contains("panicked"), "{}", r.2);
        assert_ne!(r.0, 0, "a fit from 1e308 cannot converge:\n{}", r.1);
        assert!(
            r.2.contains("did not converge") || r.2.contains("not finite"),
            "{}",
            r.2
        );
    }
}

#[test]
fn by_an_identifier_column_is_refused_and_many_segments_are_fast() {
    // 30,000 situations, each its own `id`: refused past 1000 segments, quickly.
    let mut csv = String::from("id,who,mode,wt,ca,cb,cc,inc,zone\n");
    for i in 0..30_000 {
        let m = ["a", "b", "c"][(i * 7 + i / 3) % 3];
        let (x, y) = ((i % 17) as f64 / 10.0, (i % 11) as f64 / 10.0);
        csv.push_str(&format!(
            "{i},{i},{m},1,{x},{y},1.5,{},{}\n",
            i % 50,
            i % 900
        ));
    }
    let d = setup("by_identifier", &csv, &spec("d.csv", ""));
    write(
        &d,
        "s.toml",
        "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\n",
    );
    let t = Instant::now();
    let r = run_in(&d, &["fit", "spec.toml", "--by", "id"], 120);
    fails_with(&r, &["`id`", "more than 1000 distinct values"]);
    let r = run_in(
        &d,
        &[
            "simulate",
            "spec.toml",
            "--scenario",
            "s.toml",
            "--by",
            "id",
            "--draws",
            "0",
        ],
        120,
    );
    fails_with(&r, &["`id`", "more than 1000 distinct values"]);
    // 900 segments are reported, every one of them
    let r = run_in(
        &d,
        &[
            "fit",
            "spec.toml",
            "--by",
            "zone",
            "--json",
            "--allow-unconverged",
        ],
        120,
    );
    assert_eq!(r.0, 0, "{}", r.2);
    let v: serde_json::Value = serde_json::from_str(&r.1).unwrap();
    assert_eq!(v["segments"].as_array().unwrap().len(), 900 * 3);
    assert_eq!(v["segments"][3]["segment"], "1", "numeric order");
    assert!(t.elapsed() < Duration::from_secs(100));
}

#[test]
fn non_finite_scenario_numbers_are_refused() {
    let d = setup("scenario_nan", CSV, &spec("d.csv", ""));
    for (n, body, key) in [
        (
            0,
            "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nmultiply = nan\n",
            "multiply",
        ),
        (
            1,
            "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = inf\n",
            "add",
        ),
        (2, "[[change]]\nattribute = \"income\"\nset = -inf\n", "set"),
        (
            3,
            "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nset = 1e300\n",
            "set",
        ),
        (
            4,
            "[[new_alternative]]\nname = \"d\"\nlike = \"b\"\nconstant = nan\n",
            "constant",
        ),
        (
            5,
            "[[new_alternative]]\nname = \"d\"\nlike = \"b\"\nattributes = { cost = inf }\n",
            "attributes.cost",
        ),
    ] {
        let f = format!("s{n}.toml");
        write(&d, &f, body);
        let r = run_in(
            &d,
            &["simulate", "spec.toml", "--scenario", &f, "--draws", "0"],
            60,
        );
        fails_with(&r, &[&f, key]);
    }
}

#[test]
fn a_withdrawal_that_strands_situations_says_so_and_accounts_for_their_demand() {
    // Situations 1 and 4 can only choose `a`; withdrawing `a` leaves them nothing.
    let csv = CSV
        .replace(
            "id,who,mode,wt,ca,cb,cc,inc\n",
            "id,who,mode,wt,ca,cb,cc,inc,open\n",
        )
        .replace(",10\n", ",10,0\n")
        .replace(",40\n", ",40,0\n")
        .replace(",20\n", ",20,1\n")
        .replace(",30\n", ",30,1\n")
        .replace(",50\n", ",50,1\n")
        .replace(",60\n", ",60,1\n");
    let s = spec("d.csv", "[parameters]\nasc_b = { fixed = 0.2 }\nasc_c = { fixed = -0.1 }\ncost = { fixed = -0.5 }\nincome_b = { fixed = 0 }\nincome_c = { fixed = 0 }\n")
        .replace("[alternatives.b]\n", "[alternatives.b]\navailable = \"open\"\n")
        .replace("[alternatives.c]\n", "[alternatives.c]\navailable = \"open\"\n");
    let d = setup("stranded", &csv, &s);
    write(&d, "s.toml", "remove = [\"a\"]\n");
    let r = run_in(
        &d,
        &[
            "simulate",
            "spec.toml",
            "--scenario",
            "s.toml",
            "--draws",
            "0",
            "--json",
        ],
        60,
    );
    assert_eq!(r.0, 0, "{}", r.2);
    let v: serde_json::Value = serde_json::from_str(&r.1).unwrap();
    assert_eq!(v["stranded_situations"], 2);
    // their weight: rows 1 and 4 have weights 1 and 2 of a total 7 (fact of the data)
    let lost = v["lost_share"].as_f64().unwrap();
    assert!((lost - 3.0 / 7.0).abs() < 1e-12, "{lost}");
    let total: f64 = v["shares"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x["scenario"].as_f64().unwrap())
        .sum();
    assert!(
        (total + lost - 1.0).abs() < 1e-12,
        "shares {total} + lost {lost}"
    );
    let w = v["warnings"].to_string();
    assert!(w.contains("2 of 6 situations") && w.contains("lost"), "{w}");
    let r = run_in(
        &d,
        &[
            "simulate",
            "spec.toml",
            "--scenario",
            "s.toml",
            "--draws",
            "0",
        ],
        60,
    );
    assert!(
        r.1.contains("2 of 6 situations have no available alternative"),
        "{}",
        r.1
    );
}

#[test]
fn arc_and_draws_out_of_range_are_refused_or_dashed() {
    let d = setup(
        "arc_draws",
        CSV,
        &spec(
            "d.csv",
            "[[ratio]]\nname = \"r\"\nnumerator = \"income_b\"\ndenominator = \"cost\"\n",
        ),
    );
    for arc in ["0", "nan", "inf", "-100", "-250"] {
        let r = run_in(
            &d,
            &[
                "fit",
                "spec.toml",
                "--allow-unconverged",
                &format!("--arc={arc}"),
            ],
            60,
        );
        fails_with(&r, &["--arc", "finite percentage"]);
    }
    let r = run_in(
        &d,
        &["fit", "spec.toml", "--allow-unconverged", "--draws", "0"],
        60,
    );
    assert_eq!(r.0, 0, "{}", r.2);
    let line =
        r.1.lines()
            .find(|l| l.contains("Krinsky-Robb —"))
            .unwrap_or_default();
    assert!(
        line.contains("(no draws)") && !line.to_lowercase().contains("nan"),
        "{}",
        r.1
    );
    assert!(r.1.contains("--draws 0"), "{}", r.1);
}

#[test]
fn the_iia_test_cannot_drop_the_base_and_says_why() {
    let d = setup("iia_base", CSV, &spec("d.csv", ""));
    let r = run_in(
        &d,
        &["fit", "spec.toml", "--iia-drop", "a", "--allow-unconverged"],
        60,
    );
    fails_with(
        &r,
        &["--iia-drop", "`a` is the base alternative", "[model].base"],
    );
}

#[test]
fn absurd_bench_counts_are_refused_before_any_work() {
    // Regression: these wrote (or passed over) data for ever.
    let d = scratch("bench_counts");
    let max = usize::MAX.to_string();
    let keep = d.join("b");
    let keep = keep.to_str().unwrap();
    for (args, opt) in [
        (
            vec![
                "bench",
                "--situations",
                &max,
                "--write-only",
                "--keep",
                keep,
            ],
            "--situations",
        ),
        (
            vec![
                "bench",
                "--situations",
                "100",
                "--repeats",
                &max,
                "--no-process",
            ],
            "--repeats",
        ),
        (
            vec!["bench", "--situations", "100", "--profile", &max],
            "--profile",
        ),
    ] {
        let r = run_in(&d, &args, 30);
        fails_with(&r, &[opt, "allowed"]);
    }
    assert!(!d.join("b").join("bench.csv").exists());
}
