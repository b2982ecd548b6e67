//! `sharecast fit` on the demo specs: the text report, the JSON results
//! document (docs/results-json.md) with each statistic checked against its
//! textbook formula, and `--save` with its refusal to overwrite.

use std::collections::HashSet;

use serde_json::Value;
use statrs::function::erf::erfc;

use crate::common::*;

const PARAMETER_FIELDS: &[&str] = &[
    "name",
    "term",
    "estimate",
    "std_error",
    "robust_std_error",
    "t_stat",
    "p_value",
    "ci_low",
    "ci_high",
    "fixed",
];

const FIT_FIELDS: &[&str] = &[
    "situations",
    "groups",
    "log_likelihood",
    "null_log_likelihood",
    "constants_log_likelihood",
    "rho_squared",
    "rho_squared_constants",
    "adjusted_rho_squared",
    "aic",
    "bic",
    "iterations",
    "gradient_norm",
    "converged",
    "seconds",
];

fn num(v: &Value, what: &str) -> f64 {
    v.as_f64()
        .unwrap_or_else(|| panic!("{what} is not a number: {v}"))
}

/// FNV-1a, 64 bits (Fowler, Noll and Vo; offset basis and prime as published
/// in the IETF draft "The FNV Non-Cryptographic Hash Algorithm").
fn fnv1a(chunks: &[&[u8]]) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for c in chunks {
        for b in *c {
            h ^= *b as u64;
            h = h.wrapping_mul(0x0000_0100_0000_01b3);
        }
    }
    format!("{h:016x}")
}

#[test]
fn fnv1a_matches_its_published_test_vectors() {
    // Test vectors of the FNV reference code: "" -> offset basis, "a" -> af63dc4c8601ec8c.
    assert_eq!(fnv1a(&[b""]), "cbf29ce484222325");
    assert_eq!(fnv1a(&[b"a"]), "af63dc4c8601ec8c");
    assert_eq!(fnv1a(&[b"foobar"]), "85944171f73967e8");
}

/// Checks the documented fields and one formula per statistic; returns K.
fn check_document(doc: &Value, spec: &str, family: &str, situations: u64, groups: u64) -> usize {
    assert_eq!(doc["spec"], spec);
    assert_eq!(doc["family"], family);
    let fp = doc["fingerprint"].as_str().unwrap();
    assert_eq!(fp.len(), 16, "{fp}");
    assert!(fp.chars().all(|c| c.is_ascii_hexdigit()), "{fp}");
    // The fingerprint is FNV-1a of the spec text, a zero byte and the data bytes (docs/results-json.md).
    let spec_bytes = std::fs::read(path(spec)).unwrap();
    let data_rel = if spec.contains("commute") {
        "demo-data/commute.csv"
    } else {
        "demo-data/grocery.parquet"
    };
    let data_bytes = std::fs::read(path(data_rel)).unwrap();
    assert_eq!(fp, fnv1a(&[&spec_bytes, b"\x00", &data_bytes]));

    let params = doc["parameters"].as_array().unwrap();
    assert!(!params.is_empty());
    for p in params {
        for f in PARAMETER_FIELDS {
            assert!(p.get(*f).is_some(), "parameter lacks `{f}`: {p}");
        }
    }
    let fit = &doc["fit"];
    for f in FIT_FIELDS {
        assert!(fit.get(*f).is_some(), "fit lacks `{f}`: {fit}");
    }
    assert_eq!(fit["situations"].as_u64(), Some(situations));
    assert_eq!(fit["groups"].as_u64(), Some(groups));
    assert_eq!(fit["converged"], true);
    assert!(num(&fit["seconds"], "seconds") >= 0.0);
    assert!(num(&fit["iterations"], "iterations") >= 0.0);
    assert!(num(&fit["gradient_norm"], "gradient_norm") < 1e-3);

    let free: Vec<&Value> = params.iter().filter(|p| p["fixed"] == false).collect();
    let k = free.len() as f64;
    let n = situations as f64;
    let ll = num(&fit["log_likelihood"], "ll");
    let ll0 = num(&fit["null_log_likelihood"], "ll0");
    let llc = num(&fit["constants_log_likelihood"], "llc");
    // Nested models: equal shares within constants only within the full model (fact of the method).
    assert!(ll0 <= llc + 1e-9 && llc <= ll + 1e-9, "{ll0} {llc} {ll}");
    // AIC = 2K - 2LL (Akaike 1974); BIC = K ln N - 2LL (Schwarz 1978). Fact of the method.
    assert_close("aic", num(&fit["aic"], "aic"), 2.0 * k - 2.0 * ll, 1e-12);
    assert_close("bic", num(&fit["bic"], "bic"), k * n.ln() - 2.0 * ll, 1e-12);
    // McFadden's rho-squared 1 - LL/LL0 and its adjusted form 1 - (LL - K)/LL0
    // (Ben-Akiva and Lerman 1985, ch. 7). Fact of the method.
    assert_close(
        "rho2",
        num(&fit["rho_squared"], "rho2"),
        1.0 - ll / ll0,
        1e-12,
    );
    assert_close(
        "rho2 constants",
        num(&fit["rho_squared_constants"], "rho2c"),
        1.0 - ll / llc,
        1e-12,
    );
    assert_close(
        "adjusted rho2",
        num(&fit["adjusted_rho_squared"], "adj"),
        1.0 - (ll - k) / ll0,
        1e-12,
    );

    // Covariance: names are the estimated parameters, square symmetric matrices
    // whose diagonals are the squared standard errors (fact of the method).
    let cov = &doc["covariance"];
    let names: Vec<&str> = cov["names"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    let free_names: Vec<&str> = free.iter().map(|p| p["name"].as_str().unwrap()).collect();
    assert_eq!(names, free_names);
    for (which, se_field) in [("classical", "std_error"), ("robust", "robust_std_error")] {
        let m = cov[which].as_array().unwrap();
        assert_eq!(m.len(), names.len());
        for (a, row) in m.iter().enumerate() {
            let row = row.as_array().unwrap();
            assert_eq!(row.len(), names.len());
            for b in 0..names.len() {
                let x = num(&row[b], which);
                let y = num(&m[b][a], which);
                assert!((x - y).abs() <= 1e-9 * x.abs().max(y.abs()).max(1e-300));
            }
            let se = num(&free[a][se_field], se_field);
            assert_close(se_field, se, num(&row[a], which).sqrt(), 1e-12);
        }
    }

    // Both demos have decision-maker groups, so t, p and intervals use robust errors.
    assert_eq!(doc["fit"]["inference"], "robust");
    for p in &free {
        let name = p["name"].as_str().unwrap();
        let b = num(&p["estimate"], name);
        let se = num(&p["robust_std_error"], name);
        let t = num(&p["t_stat"], name);
        // t = estimate / s.e.; two-sided normal p = erfc(|t| / sqrt 2); interval
        // estimate -/+ 1.959964 s.e. (fact of the method).
        assert_close(&format!("{name} t"), t, b / se, 1e-12);
        assert_close(
            &format!("{name} p"),
            num(&p["p_value"], name),
            erfc(t.abs() / std::f64::consts::SQRT_2),
            1e-6,
        );
        assert_close(
            &format!("{name} ci_low"),
            num(&p["ci_low"], name),
            b - 1.959_963_984_540_054 * se,
            1e-12,
        );
        assert_close(
            &format!("{name} ci_high"),
            num(&p["ci_high"], name),
            b + 1.959_963_984_540_054 * se,
            1e-12,
        );
        assert!(p["term"].as_str().is_some_and(|t| !t.is_empty()));
    }
    free.len()
}

/// Null log-likelihood of the commute demo from the CSV itself: equal shares
/// over each trip's available modes, with the expansion weights rescaled to
/// average 1: -sum w_i ln(n_i) (fact of the method).
fn commute_null_ll() -> f64 {
    let text = std::fs::read_to_string(path("demo-data/commute.csv")).unwrap();
    let mut lines = text.lines();
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    let col = |n: &str| head.iter().position(|h| *h == n).unwrap();
    let (car, bike, walk, w) = (
        col("has_car"),
        col("bike_ok"),
        col("walk_ok"),
        col("expansion"),
    );
    let rows: Vec<(f64, f64)> = lines
        .filter(|l| !l.is_empty())
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            let v = |i: usize| f[i].parse::<f64>().unwrap();
            (v(w), 2.0 + v(car) + v(bike) + v(walk))
        })
        .collect();
    let mean = rows.iter().map(|r| r.0).sum::<f64>() / rows.len() as f64;
    -rows.iter().map(|(w, n)| w / mean * n.ln()).sum::<f64>()
}

#[test]
fn commute_report_and_document() {
    let (code, out, err) = run(&["fit", "specs/commute.toml"]);
    assert_eq!(code, 0, "{err}");
    for name in [
        "asc_bus",
        "asc_walk",
        "cost",
        "time",
        "wait",
        "access",
        "income_rail",
        "age_walk",
    ] {
        assert!(out.contains(name), "report lacks {name}:\n{out}");
    }
    assert!(out.contains("Cautions:"), "{out}");
    assert!(out.contains("independence from irrelevant alternatives"));

    let (code, out, err) = run(&["fit", "specs/commute.toml", "--json"]);
    assert_eq!(code, 0, "{err}");
    let doc: Value = serde_json::from_str(&out).unwrap();
    let k = check_document(&doc, "specs/commute.toml", "logit", 6000, 2000);
    assert_eq!(k, 14);
    assert_eq!(doc["base"], "car");
    assert_close(
        "null log-likelihood",
        num(&doc["fit"]["null_log_likelihood"], "ll0"),
        commute_null_ll(),
        1e-10,
    );
    let names: HashSet<&str> = doc["parameters"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["name"].as_str().unwrap())
        .collect();
    assert_eq!(names.len(), 14);
    assert!(doc["cautions"].as_str().unwrap().starts_with("Cautions:"));
}

#[test]
fn grocery_report_and_document() {
    let (code, out, err) = run(&["fit", "specs/grocery.toml"]);
    assert_eq!(code, 0, "{err}");
    for name in [
        "asc_quillfield",
        "asc_own_label",
        "price",
        "promo",
        "eye_level",
        "income_fennick",
        "size_marrowby",
    ] {
        assert!(out.contains(name), "report lacks {name}:\n{out}");
    }
    assert!(out.contains("Cautions:"), "{out}");

    let (code, out, err) = run(&["fit", "specs/grocery.toml", "--json"]);
    assert_eq!(code, 0, "{err}");
    let doc: Value = serde_json::from_str(&out).unwrap();
    // 8,000 purchases by 1,600 households (src/demo.rs).
    let k = check_document(&doc, "specs/grocery.toml", "logit", 8000, 1600);
    assert_eq!(k, 15);
    assert_eq!(doc["alternatives"].as_array().unwrap().len(), 5);
}

#[test]
fn save_writes_the_document_and_refuses_to_overwrite() {
    let dir = scratch("fit_cli_save");
    let file = dir.join("commute.json");
    let f = file.to_str().unwrap();

    let (code, out, err) = run(&["fit", "specs/commute.toml", "--json", "--save", f]);
    assert_eq!(code, 0, "{err}");
    let saved = std::fs::read_to_string(&file).unwrap();
    // The saved file is the printed document.
    assert_eq!(saved.trim_end(), out.trim_end());
    let doc: Value = serde_json::from_str(&saved).unwrap();
    check_document(&doc, "specs/commute.toml", "logit", 6000, 2000);

    // An existing file is not replaced without --force.
    let (code, _, err) = run(&["fit", "specs/commute.toml", "--save", f]);
    assert_ne!(code, 0);
    assert_ne!(code, 101, "panicked: {err}");
    assert!(err.contains("--force"), "{err}");
    assert!(err.contains("commute.json"), "{err}");
    assert_eq!(std::fs::read_to_string(&file).unwrap(), saved);

    // With --force it is; the text report still goes to stdout.
    std::fs::write(&file, "stale").unwrap();
    let (code, out, err) = run(&["fit", "specs/commute.toml", "--save", f, "--force"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("Cautions:"), "{out}");
    let doc: Value = serde_json::from_str(&std::fs::read_to_string(&file).unwrap()).unwrap();
    check_document(&doc, "specs/commute.toml", "logit", 6000, 2000);
}

#[test]
fn a_fixed_parameter_is_reported_as_fixed_with_null_errors() {
    // commute.toml with one constant fixed at its true value.
    let dir = scratch("fit_cli_fixed");
    let text = std::fs::read_to_string(path("specs/commute.toml"))
        .unwrap()
        .replace(
            "file = \"../demo-data/commute.csv\"",
            &format!(
                "file = {:?}",
                path("demo-data/commute.csv").to_str().unwrap()
            ),
        )
        + "\n[parameters]\nasc_walk = { fixed = 0.8 }\n";
    let spec = write(&dir, "fixed.toml", &text);
    let (code, out, err) = run(&["fit", spec.to_str().unwrap(), "--json"]);
    assert_eq!(code, 0, "{err}");
    let doc: Value = serde_json::from_str(&out).unwrap();
    let params = doc["parameters"].as_array().unwrap();
    let walk = params.iter().find(|p| p["name"] == "asc_walk").unwrap();
    assert_eq!(walk["fixed"], true);
    assert_eq!(walk["estimate"].as_f64(), Some(0.8));
    // Non-finite values are written as null (docs/results-json.md).
    for f in [
        "std_error",
        "robust_std_error",
        "t_stat",
        "p_value",
        "ci_low",
        "ci_high",
    ] {
        assert!(walk[f].is_null(), "{f}: {}", walk[f]);
    }
    let names = doc["covariance"]["names"].as_array().unwrap();
    assert_eq!(names.len(), 13);
    assert!(!names.iter().any(|n| n == "asc_walk"));
    // K in AIC counts the 13 estimated parameters only.
    let ll = doc["fit"]["log_likelihood"].as_f64().unwrap();
    assert_close(
        "aic",
        doc["fit"]["aic"].as_f64().unwrap(),
        2.0 * 13.0 - 2.0 * ll,
        1e-12,
    );
}
