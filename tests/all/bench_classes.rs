//! `sharecast bench --model classes` on a small panel: its JSON figures,
//! the data and spec it writes, and the flags it refuses. No timing is
//! asserted, only what the run must report.

use std::collections::HashMap;

use serde_json::Value;

use crate::common::*;

fn bench(extra: &[&str]) -> Value {
    let mut args = vec![
        "bench",
        "--model",
        "classes",
        "--decision-makers",
        "300",
        "--tasks",
        "5",
        "--starts",
        "2",
        "--repeats",
        "1",
        "--no-process",
        "--json",
    ];
    args.extend_from_slice(extra);
    let (code, out, err) = run(&args);
    assert_eq!(code, 0, "{err}");
    serde_json::from_str(&out).unwrap()
}

#[test]
fn the_classes_bench_reports_its_starts_fit_and_recovery() {
    let v = bench(&["--no-peer"]);
    assert_eq!(v["situations"].as_u64(), Some(1500));
    for k in [
        "load_seconds",
        "pass_seconds",
        "hessian_pass_seconds",
        "start_median_seconds",
    ] {
        assert!(v[k].as_f64().is_some_and(|s| s > 0.0), "{k}: {}", v[k]);
    }
    let fit = &v["fit"];
    assert_eq!(fit["converged"], true);
    assert_eq!(fit["start_seconds"].as_array().unwrap().len(), 2);
    let starts = &fit["starts"];
    assert_eq!(starts["tried"].as_u64(), Some(2));
    let reached = starts["reached_best"].as_u64().unwrap();
    assert!((1..=2).contains(&reached), "{reached}");
    // 3 classes x 6 utility terms, then 2 membership logits of a constant
    // and 2 columns.
    let rows = v["recovery"]["parameters"].as_array().unwrap();
    assert_eq!(rows.len(), 24);
    assert_eq!(rows[0]["name"], "asc_standard_class1");
    assert_eq!(rows[23]["name"], "member_class3_distance");
    assert!(rows.iter().all(|r| r["std_error"].as_f64().unwrap() > 0.0));
    // Fact of maximum likelihood: the maximum is at least the
    // log-likelihood at the generating values.
    let ll = fit["log_likelihood"].as_f64().unwrap();
    let at_truth = v["log_likelihood_at_truth"].as_f64().unwrap();
    assert!(ll >= at_truth - 1e-6, "{ll} < {at_truth}");
    let shares: f64 = v["recovery"]["estimated_shares"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s.as_f64().unwrap())
        .sum();
    assert!((shares - 1.0).abs() < 1e-9, "{shares}");
    assert_eq!(v["peer_note"], "skipped (--no-peer)");
}

#[test]
fn the_classes_bench_runs_the_numpy_peer_when_it_can() {
    let ready = std::process::Command::new("python3")
        .args(["-c", "import numpy, scipy"])
        .output()
        .is_ok_and(|o| o.status.success());
    if !ready {
        eprintln!("note: python3 with numpy and scipy is missing, so the peer is not checked");
        return;
    }
    // A budget of 0 s: the peer runs one start only.
    let v = bench(&["--peer-seconds", "0"]);
    let peer = &v["peer"];
    assert!(peer.is_object(), "{}", v["peer_note"]);
    assert_eq!(peer["start_seconds"].as_array().unwrap().len(), 1);
    assert_eq!(peer["starts_asked"].as_u64(), Some(2));
    assert_eq!(peer["failed"].as_u64(), Some(0));
    // Both codes maximise the same log-likelihood on the same data and
    // sharecast's search converged: a peer start ending well above it would
    // mean the two do not compute the same model.
    let best = peer["best_log_likelihood"].as_f64().unwrap();
    let ll = v["fit"]["log_likelihood"].as_f64().unwrap();
    assert!(best <= ll + 0.01, "peer {best} above sharecast {ll}");
}

#[test]
fn the_classes_bench_writes_a_panel_with_household_columns() {
    let dir = scratch("bench_classes_write");
    let keep = dir.display().to_string();
    let (code, _, err) = run(&[
        "bench",
        "--model",
        "classes",
        "--decision-makers",
        "50",
        "--tasks",
        "4",
        "--keep",
        &keep,
        "--write-only",
    ]);
    assert_eq!(code, 0, "{err}");
    let spec: toml::Table = std::fs::read_to_string(dir.join("classes.toml"))
        .unwrap()
        .parse()
        .unwrap();
    assert_eq!(spec["model"]["family"].as_str(), Some("latent-class"));
    assert_eq!(spec["model"]["classes"].as_integer(), Some(3));
    assert_eq!(spec["data"]["group"].as_str(), Some("household_id"));
    let text = std::fs::read_to_string(dir.join("classes.csv")).unwrap();
    let mut lines = text.lines();
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    let col = |n: &str| head.iter().position(|h| *h == n).unwrap();
    let (id, size, dist) = (col("household_id"), col("household"), col("distance"));
    let mut seen: HashMap<String, (String, String)> = HashMap::new();
    let mut rows = 0;
    for line in lines {
        let f: Vec<&str> = line.split(',').collect();
        let z = (f[size].to_string(), f[dist].to_string());
        // The membership columns are the same on all of a household's rows.
        assert_eq!(seen.entry(f[id].to_string()).or_insert(z.clone()), &z);
        rows += 1;
    }
    assert_eq!(rows, 200);
    assert_eq!(seen.len(), 50);
    // The size is --decision-makers x --tasks: --situations is refused.
    let (code, _, err) = run(&["bench", "--model", "classes", "--situations", "10"]);
    assert_ne!(code, 0);
    assert!(err.contains("--situations"), "{err}");
}
