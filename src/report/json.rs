//! The results document (`fit --json`, `fit --save`): a stable JSON contract
//! described in docs/results-json.md. NaN values are written as null.

use serde_json::{json, Map, Value};

use crate::estimate::Fit;
use crate::spec::Spec;

/// FNV-1a over the spec text and the data file's bytes, as 16 hex digits.
pub fn fingerprint(spec: &Spec) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    let mut feed = |bytes: &[u8]| {
        for b in bytes {
            h ^= *b as u64;
            h = h.wrapping_mul(0x0000_0100_0000_01b3);
        }
    };
    if let Ok(b) = std::fs::read(&spec.path) {
        feed(&b);
    }
    feed(b"\x00");
    if let Ok(b) = std::fs::read(&spec.data.file) {
        feed(&b);
    }
    format!("{h:016x}")
}

fn matrix(fit: &Fit, m: &nalgebra::DMatrix<f64>) -> Value {
    Value::Array(
        fit.free
            .iter()
            .map(|&a| Value::Array(fit.free.iter().map(|&b| finite(m[(a, b)])).collect()))
            .collect(),
    )
}

pub fn finite(x: f64) -> Value {
    if x.is_finite() {
        json!(x)
    } else {
        Value::Null
    }
}

/// The fit part of the results document; analysis sections are added by the caller.
pub fn results(spec: &Spec, fit: &Fit, spec_label: &str) -> Map<String, Value> {
    let mut m = Map::new();
    m.insert("spec".into(), json!(spec_label));
    m.insert("title".into(), json!(spec.title));
    m.insert("family".into(), json!(spec.family.name()));
    m.insert("base".into(), json!(spec.alternatives[spec.base].name));
    m.insert("alternatives".into(), json!(spec.alternative_names()));
    m.insert("fingerprint".into(), json!(fingerprint(spec)));
    m.insert(
        "parameters".into(),
        serde_json::to_value(&fit.parameters).unwrap_or(Value::Null),
    );
    m.insert(
        "fit".into(),
        serde_json::to_value(&fit.stats).unwrap_or(Value::Null),
    );
    let names: Vec<&str> = fit.free.iter().map(|&k| fit.names[k].as_str()).collect();
    m.insert(
        "covariance".into(),
        json!({
            "names": names,
            "classical": matrix(fit, &fit.covariance),
            "robust": matrix(fit, &fit.robust_covariance),
        }),
    );
    m.insert(
        "shares".into(),
        serde_json::to_value(&fit.shares).unwrap_or(Value::Null),
    );
    m.insert(
        "diagnostics".into(),
        serde_json::to_value(&fit.diagnostics).unwrap_or(Value::Null),
    );
    m.insert("cautions".into(), json!(super::cautions(spec)));
    m
}
