//! What the spec room asks of a model family while it validates a spec: the
//! family's own sections and `[model]` keys, its constraints, and the
//! parameters it adds beyond the linear-in-parameters utility. The model room
//! implements these traits; the spec room only calls them.

use toml::Table;

use super::{Alternative, Attribute, Characteristic, Layout, Parameter};

/// A parameter a family adds (a nest scale, a spread, a cut-point, ...).
#[derive(Clone, Debug)]
pub struct FamilyParameter {
    pub name: String,
    /// What it is, for reports ("nest scale", "cut-point", ...).
    pub label: String,
    /// Where a search starts when `[parameters]` says nothing.
    pub start: f64,
    /// The value its reported test is against (1 for a nest scale: the logit).
    pub null: f64,
    /// Whether it stays free in the reference model of rho-squared (cut-points
    /// do, like constants; a nest scale is held at its start).
    pub in_reference: bool,
}

/// The copies of the linear utility a family estimates (`FamilyRules::copies`).
#[derive(Clone, Debug, PartialEq)]
pub struct Copies {
    /// 1: the utility once (every family but a latent class model).
    pub count: usize,
    /// Linear parameters that all copies share, by name (one parameter each).
    pub common: Vec<String>,
    /// The key `common` came from, for messages.
    pub common_key: &'static str,
}

impl Default for Copies {
    fn default() -> Self {
        Copies {
            count: 1,
            common: Vec::new(),
            common_key: "",
        }
    }
}

/// The validated spec as far as it is known when the family is asked.
pub struct SpecView<'a> {
    pub layout: &'a Layout,
    pub alternatives: &'a [Alternative],
    pub base: usize,
    pub constants: bool,
    pub attributes: &'a [Attribute],
    pub characteristics: &'a [Characteristic],
    /// The linear utility's parameters.
    pub parameters: &'a [Parameter],
    /// The family's own keys: its top-level sections by name, and the extra
    /// `[model]` keys under `model`.
    pub keys: &'a Table,
}

/// One family's rules for the spec.
pub trait FamilyRules: Sync {
    /// Top-level sections (`[[nest]]`, `[simulation]`, ...) this family reads.
    fn sections(&self) -> &'static [&'static str] {
        &[]
    }
    /// Keys of `[model]` beyond `family`, `base` and `constants` that this family reads.
    fn model_keys(&self) -> &'static [&'static str] {
        &[]
    }
    /// Whether the model has one latent index for all alternatives (ordered
    /// categories): no base and no constants, one coefficient per
    /// characteristic entering every alternative, named after it.
    fn single_index(&self) -> bool {
        false
    }
    /// Whether `random = "..."` on attributes and characteristics is this
    /// family's to read (coefficients that vary across decision makers).
    fn random_terms(&self) -> bool {
        false
    }
    /// Checks the starting and fixed values `[parameters]` gave the family's
    /// own parameters (a nest scale must be positive, cut-points increasing).
    fn check_parameters(&self, parameters: &[super::Parameter]) -> Result<(), String> {
        let _ = parameters;
        Ok(())
    }
    /// How many copies of the linear utility's parameters the family
    /// estimates (one per latent class) and which of them all copies share,
    /// read from its keys before the parameters are listed. An error names the key.
    fn copies(&self, keys: &Table) -> Result<Copies, String> {
        let _ = keys;
        Ok(Copies::default())
    }
    /// Data columns the family reads per situation beyond the utility's
    /// terms, each with the role messages name it by (`[model].membership`).
    fn columns(&self, keys: &Table) -> Vec<(String, String)> {
        let _ = keys;
        Vec::new()
    }
    /// Whether estimation on sampled choice sets (`[sampling]`) stays
    /// consistent for this family as its keys set it up (the logit's does).
    fn sampled_sets(&self, keys: &Table) -> bool {
        let _ = keys;
        false
    }
    /// Checks the family's constraints and keys; returns the parameters it adds.
    /// An error is a message naming the key at fault.
    fn check(&self, spec: &SpecView) -> Result<Vec<FamilyParameter>, String>;
}

/// The families the spec may name.
pub trait Catalog {
    /// The rules of the family named `name`, if there is one.
    fn rules(&self, name: &str) -> Option<&dyn FamilyRules>;
    /// Every family name, for messages.
    fn names(&self) -> Vec<&'static str>;
    /// The families that read section `section` (for messages).
    fn owners_of(&self, section: &str) -> Vec<&'static str>;
    /// The families that read `[model]` key `key` (for messages).
    fn model_key_owners(&self, key: &str) -> Vec<&'static str>;
    /// The ids in column `id` of a table of alternatives, in file order
    /// (layout "tables"; the data room reads the file). An error names the
    /// file, the column and the row.
    fn table_ids(&self, file: &std::path::Path, id: &str) -> crate::error::Result<Vec<String>>;
}
