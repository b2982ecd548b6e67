//! The spec file exactly as written: serde types that reject unknown keys.
//! The top level and `[model]` keep keys they do not know in `extra`, for the
//! model family to claim (`spec::family`); `spec::validate` rejects the rest.
//! Checking what the values mean is the job of `spec::validate`.

use serde::Deserialize;

#[derive(Debug, Deserialize)]
pub struct RawSpec {
    pub title: Option<String>,
    /// The field of application, for the report's cautions.
    pub field: Option<String>,
    pub data: RawData,
    pub model: RawModel,
    /// Kept as a table so that the written order of alternatives survives;
    /// absent in layout "tables" (the alternatives come from a file).
    pub alternatives: Option<toml::Table>,
    #[serde(default)]
    pub attribute: Vec<RawAttribute>,
    #[serde(default)]
    pub characteristic: Vec<RawCharacteristic>,
    #[serde(default)]
    pub derived: toml::Table,
    #[serde(default)]
    pub parameters: toml::Table,
    #[serde(default)]
    pub ratio: Vec<RawRatio>,
    pub validation: Option<RawValidation>,
    pub calibration: Option<RawCalibration>,
    #[serde(default)]
    pub restrictions: Vec<String>,
    /// Estimation on sampled choice sets (layout "tables").
    pub sampling: Option<RawSampling>,
    /// Keys no common section claims: a family's sections, or mistakes.
    #[serde(flatten)]
    pub extra: toml::Table,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawData {
    pub file: String,
    pub layout: String,
    pub choice: Option<String>,
    pub situation: Option<String>,
    pub alternative: Option<String>,
    pub chosen: Option<String>,
    pub weight: Option<String>,
    pub group: Option<String>,
    /// Layout "tables": the table of alternatives.
    pub alternatives: Option<RawAlternativesTable>,
    /// Layout "tables": values by situation and alternative.
    pub pairs: Option<RawPairsTable>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawAlternativesTable {
    pub file: String,
    pub id: String,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawPairsTable {
    pub file: String,
    pub from: String,
    pub id: String,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSampling {
    pub alternatives: i64,
    pub scheme: Option<String>,
    pub weight: Option<String>,
    pub seed: Option<u64>,
}

#[derive(Debug, Deserialize)]
pub struct RawModel {
    /// Defaults to "logit".
    pub family: Option<String>,
    /// Required except for single-index families (ordered categories).
    pub base: Option<String>,
    pub constants: Option<bool>,
    /// Keys the family may claim.
    #[serde(flatten)]
    pub extra: toml::Table,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawAlternative {
    pub available: Option<String>,
    pub code: Option<i64>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawAttribute {
    pub name: String,
    pub coefficient: Option<String>,
    /// Wide layout: a column name or a number per alternative.
    pub columns: Option<toml::Table>,
    /// Long layout: the one column holding the attribute.
    pub column: Option<String>,
    /// Long layout: which alternatives get the term (default all).
    pub alternatives: Option<Vec<String>>,
    /// Layout "tables": a column of the situations file multiplying the values.
    pub times: Option<String>,
    /// A distribution name: the coefficient varies across decision makers
    /// (checked by a family with random coefficients).
    pub random: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCharacteristic {
    pub name: String,
    pub column: String,
    pub alternatives: Option<Vec<String>>,
    /// As for attributes: each of its per-alternative coefficients varies.
    pub random: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawParameter {
    pub start: Option<f64>,
    pub fixed: Option<f64>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawRatio {
    pub name: String,
    pub numerator: String,
    pub denominator: String,
    pub scale: Option<f64>,
    pub unit: Option<String>,
    pub per: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawValidation {
    pub holdout: Option<toml::Value>,
    pub seed: Option<u64>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCalibration {
    pub targets: toml::Table,
    pub tolerance: Option<f64>,
    pub max_iterations: Option<usize>,
}
