//! Helpers shared by the integration tests.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::Arc;

use sharecast::data::{self, Extra};
use sharecast::estimate::{self, Fit, Step};
use sharecast::spec::Spec;

pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

pub fn path(rel: &str) -> PathBuf {
    root().join(rel)
}

pub fn load(rel: &str) -> (Spec, data::Dataset) {
    let spec = sharecast::model::read_spec(&path(rel)).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    (spec, ds)
}

pub fn fit_spec(spec: &Spec, ds: &data::Dataset) -> Fit {
    let quiet = |_s: Step| {};
    estimate::fit(spec, Arc::new(ds.obs.clone()), &quiet).unwrap()
}

pub fn fit_file(rel: &str) -> (Spec, Fit) {
    let (spec, ds) = load(rel);
    let fit = fit_spec(&spec, &ds);
    (spec, fit)
}

/// Runs the sharecast binary; returns (exit code, stdout, stderr).
pub fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_sharecast"))
        .args(args)
        .current_dir(root())
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).to_string(),
        String::from_utf8_lossy(&out.stderr).to_string(),
    )
}

/// A fresh scratch folder under the target directory.
pub fn scratch(name: &str) -> PathBuf {
    let dir = root().join("target").join("test-scratch").join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

pub fn write(dir: &Path, name: &str, body: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, body).unwrap();
    p
}

pub fn reference() -> serde_json::Value {
    let text = std::fs::read_to_string(path("tests/fixtures/statsmodels_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

pub fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(1e-300)
}

#[track_caller]
pub fn assert_close(what: &str, got: f64, want: f64, rel: f64) {
    assert!(
        close(got, want, rel),
        "{what}: got {got}, want {want} (relative tolerance {rel})"
    );
}

/// `[model]` lines of a mixed logit in willingness-to-pay space (cost the
/// price) whose constant, time and cost tastes are correlated.
pub const WTP_CORRELATED: &str =
    "correlated = [\"asc_rail\", \"time\", \"cost\"]\nspace = \"willingness\"\nprice = \"cost\"";

/// The demo's express survey spec (a mixed logit) written into `dir` as
/// `name`, its data path made absolute and 100 draws, with `model` lines added
/// under `[model]` and, when given, cost's distribution replaced by `cost`.
pub fn express_variant(dir: &Path, name: &str, model: &str, cost: Option<&str>) -> String {
    let text = std::fs::read_to_string(path("specs/express_survey.toml")).unwrap();
    let mut out = text
        .replace(
            "file = \"../demo-data/express_survey.csv\"",
            &format!(
                "file = {:?}",
                path("demo-data/express_survey.csv").display().to_string()
            ),
        )
        .replace(
            "random_constants = [\"rail\"]",
            &format!("random_constants = [\"rail\"]\n{model}"),
        )
        .replace("draws = 500", "draws = 100");
    if let Some(c) = cost {
        out = out.replace(
            "random = \"negative-lognormal\"",
            &format!("random = \"{c}\""),
        );
    }
    assert!(out.contains("demo-data/express_survey.csv\"") && out.contains("draws = 100"));
    write(dir, name, &out).display().to_string()
}

/// The demo's commute spec (a logit) written into `dir` as `name`, its data
/// path made absolute, with `model` lines added under `[model]`.
pub fn commute_variant(dir: &Path, name: &str, model: &str) -> String {
    let text = std::fs::read_to_string(path("specs/commute.toml")).unwrap();
    let out = text
        .replace(
            "file = \"../demo-data/commute.csv\"",
            &format!(
                "file = {:?}",
                path("demo-data/commute.csv").display().to_string()
            ),
        )
        .replace("base = \"car\"", &format!("base = \"car\"\n{model}"));
    assert!(out.contains(&path("demo-data/commute.csv").display().to_string()));
    write(dir, name, &out).display().to_string()
}
