//! The results document (`fit --json`, `fit --save`): a stable JSON contract
//! described in docs/results-json.md, written through the typed
//! `estimate::document::FitDocument`. NaN values are written as null.

use serde_json::{Map, Value};

use crate::estimate::document::FitDocument;
use crate::estimate::Fit;
use crate::spec::Spec;

pub use crate::estimate::document::fingerprint;

/// The fit part of the results document; analysis sections are added by the caller.
pub fn results(spec: &Spec, fit: &Fit, spec_label: &str) -> Map<String, Value> {
    let doc = FitDocument::new(spec, fit, spec_label, super::cautions(spec, &*fit.family));
    match serde_json::to_value(doc) {
        Ok(Value::Object(m)) => m,
        _ => Map::new(),
    }
}
