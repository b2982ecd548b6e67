//! Layout "tables": the table of alternatives, the optional table of values
//! by situation and alternative (pairs), and `[sampling]`, estimation on
//! sampled choice sets.

use std::path::PathBuf;

/// `[data.alternatives]`: one row per alternative; its ids name the alternatives.
#[derive(Clone, Debug, PartialEq)]
pub struct AlternativesTable {
    /// The file, resolved against the spec file's folder.
    pub file: PathBuf,
    /// The path as written in the spec.
    pub file_written: String,
    /// The id column.
    pub id: String,
}

/// `[data.pairs]`: values that depend on the situation and the alternative,
/// one row per (`from` key, alternative id).
#[derive(Clone, Debug, PartialEq)]
pub struct PairsTable {
    pub file: PathBuf,
    pub file_written: String,
    /// A column of the situations file, matched with the same-named column here.
    pub from: String,
    /// This file's alternative column.
    pub id: String,
}

/// How `[sampling]` draws the alternatives beside the chosen one.
#[derive(Clone, Debug, PartialEq)]
pub enum Scheme {
    /// Uniformly without replacement from the situation's other available
    /// alternatives: every member's set has the same probability, so no
    /// correction enters.
    Uniform,
    /// With replacement, in proportion to this column of the alternatives
    /// table; the estimator adds ln(k_j / q_j) to each member's utility.
    Weighted(String),
}

/// `[sampling]`: estimation on sampled choice sets (analyses, scenarios and
/// forecasts use the full sets).
#[derive(Clone, Debug, PartialEq)]
pub struct Sampling {
    /// Alternatives drawn per situation besides the chosen one (draws, for `Weighted`).
    pub alternatives: usize,
    pub scheme: Scheme,
    pub seed: u64,
}
