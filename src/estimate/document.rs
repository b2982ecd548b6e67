//! The fit part of the results document (`fit --json`, `fit --save`) as one
//! serde type: written by the report, read back by `restore`, so a field
//! cannot be written under one name and read under another. The documented
//! fields (docs/results-json.md) are a contract: extend, never rename. NaN is
//! written as null and read back as NaN.

use serde::{Deserialize, Deserializer, Serialize};

use super::{Diagnostic, Fit, FitStats, ParameterRow, ShareRow};
use crate::spec::Spec;

/// The estimated parameters' covariances (free parameters only, in `names` order).
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Covariances {
    pub names: Vec<String>,
    pub classical: Vec<Vec<Option<f64>>>,
    pub robust: Vec<Vec<Option<f64>>>,
}

/// Everything a fit writes; analysis sections are added beside it by the caller.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct FitDocument {
    pub spec: String,
    pub title: Option<String>,
    pub family: String,
    pub base: String,
    pub alternatives: Vec<String>,
    pub fingerprint: String,
    pub parameters: Vec<ParameterRow>,
    pub fit: FitStats,
    pub covariance: Covariances,
    pub shares: Vec<ShareRow>,
    pub diagnostics: Vec<Diagnostic>,
    pub cautions: String,
    /// The family's structure in words (nests; random coefficients, draws and
    /// whether the draws are per decision maker); empty for the others.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub structure: Vec<String>,
}

impl FitDocument {
    /// The document of `fit`; `spec_label` is how the spec is named in it, `cautions` the report's line.
    pub fn new(spec: &Spec, fit: &Fit, spec_label: &str, cautions: String) -> FitDocument {
        let matrix = |m: &nalgebra::DMatrix<f64>| -> Vec<Vec<Option<f64>>> {
            fit.free
                .iter()
                .map(|&a| {
                    fit.free
                        .iter()
                        .map(|&b| Some(m[(a, b)]).filter(|x| x.is_finite()))
                        .collect()
                })
                .collect()
        };
        FitDocument {
            spec: spec_label.to_string(),
            title: spec.title.clone(),
            family: fit.family.name().to_string(),
            base: spec.alternatives[spec.base].name.clone(),
            alternatives: spec.alternative_names(),
            fingerprint: fingerprint(spec),
            parameters: fit.parameters.clone(),
            fit: fit.stats.clone(),
            covariance: Covariances {
                names: fit.free.iter().map(|&k| fit.names[k].clone()).collect(),
                classical: matrix(&fit.covariance),
                robust: matrix(&fit.robust_covariance),
            },
            shares: fit.shares.clone(),
            diagnostics: fit.diagnostics.clone(),
            cautions,
            structure: fit.family.structure(spec),
        }
    }
}

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

/// Reads a number that the writer may have written as null (NaN, infinity).
pub fn nullable<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
    Ok(Option::<f64>::deserialize(d)?.unwrap_or(f64::NAN))
}
