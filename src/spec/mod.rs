//! The model spec: the validated form of a TOML spec file, and the list of
//! parameters it implies. `raw` holds the serde types, `validate` the checks.

pub mod expr;
pub mod family;
mod ratio;
pub mod raw;
mod restriction;
pub mod tables;
mod validate;

use std::path::{Path, PathBuf};

pub use expr::Expr;
pub use family::{Catalog, Copies, FamilyParameter, FamilyRules, SpecView};
pub use restriction::parse_restriction;
pub use tables::{AlternativesTable, PairsTable, Sampling, Scheme};
pub use validate::parse_targets;

use crate::error::{Error, Result};

#[derive(Clone, Debug, PartialEq)]
pub enum Layout {
    Wide {
        choice: String,
    },
    Long {
        situation: String,
        alternative: String,
        chosen: String,
    },
    /// One row per situation; the alternatives come from a table of their
    /// own, values by situation and alternative from an optional table of pairs.
    Tables {
        choice: String,
        alternatives: AlternativesTable,
        pairs: Option<PairsTable>,
    },
}

impl Layout {
    /// The layout's name as a spec writes it.
    pub fn name(&self) -> &'static str {
        match self {
            Layout::Wide { .. } => "wide",
            Layout::Long { .. } => "long",
            Layout::Tables { .. } => "tables",
        }
    }
}

#[derive(Clone, Debug)]
pub struct DataSpec {
    /// The data file, resolved against the spec file's folder.
    pub file: PathBuf,
    /// The path as written in the spec.
    pub file_written: String,
    pub layout: Layout,
    pub weight: Option<String>,
    pub group: Option<String>,
}

#[derive(Clone, Debug)]
pub struct Alternative {
    pub name: String,
    pub available: Option<String>,
    pub code: Option<i64>,
}

/// Where an attribute's value for one alternative comes from.
#[derive(Clone, Debug, PartialEq)]
pub enum Source {
    Column(String),
    Value(f64),
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Coefficient {
    Shared,
    PerAlternative,
}

#[derive(Clone, Debug)]
pub struct Attribute {
    pub name: String,
    pub coefficient: Coefficient,
    /// One entry per alternative (spec order); `None` = the term is absent there.
    pub sources: Vec<Option<Source>>,
    /// `random = "..."`: the distribution of its coefficient across decision
    /// makers (read by a family with random coefficients).
    pub random: Option<String>,
    /// `times = "column"` (layout "tables"): a column of the situations file
    /// that multiplies the values (an interaction with a characteristic).
    pub times: Option<String>,
}

#[derive(Clone, Debug)]
pub struct Characteristic {
    pub name: String,
    pub column: String,
    /// Indices of the alternatives the characteristic enters.
    pub alternatives: Vec<usize>,
    /// `random = "..."`, as for attributes.
    pub random: Option<String>,
}

/// Which spec term a parameter comes from.
#[derive(Clone, Debug, PartialEq)]
pub enum Term {
    Constant,
    Attribute(usize),
    Characteristic(usize),
    /// A parameter the model family adds (its label says what it is).
    Family(String),
}

#[derive(Clone, Debug)]
pub struct Parameter {
    pub name: String,
    pub term: Term,
    /// The alternative the parameter belongs to, if it is alternative-specific.
    pub alternative: Option<usize>,
    pub start: f64,
    pub fixed: Option<f64>,
    /// The value its test is against: 0, or a family's own (1 for a nest scale).
    pub null: f64,
    /// A family parameter that stays free in the constants-only reference model.
    pub in_reference: bool,
    /// For a family that estimates one copy of the utility per latent class
    /// (`FamilyRules::copies`): the class (from 1) this parameter belongs to;
    /// 0 for a parameter every class shares, and in every other model.
    pub class: usize,
}

/// The field of application a spec declares (top-level `field`).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Field {
    #[default]
    General,
    Transport,
    Retail,
    Health,
    Energy,
}

impl Field {
    pub const NAMES: [&'static str; 5] = ["general", "transport", "retail", "health", "energy"];

    pub fn parse(name: &str) -> Option<Field> {
        Some(match name {
            "general" => Field::General,
            "transport" => Field::Transport,
            "retail" => Field::Retail,
            "health" => Field::Health,
            "energy" => Field::Energy,
            _ => return None,
        })
    }

    /// The field's own sentence for the cautions line, if it has one.
    pub fn caution(self) -> Option<&'static str> {
        match self {
            Field::Transport => Some("Transport appraisal should follow the local official guidance on values and methods."),
            Field::General | Field::Retail | Field::Health | Field::Energy => None,
        }
    }
}

#[derive(Clone, Debug)]
pub struct Ratio {
    pub name: String,
    pub numerator: usize,
    pub denominator: usize,
    pub scale: f64,
    /// Printed after the value (`"£ per hour"`), when given.
    pub unit: Option<String>,
    /// True for `per = "unit less"`: the willingness to pay for one unit less of
    /// the numerator's variable (a saving); else for one unit more.
    pub per_less: bool,
}

#[derive(Clone, Debug)]
pub enum Holdout {
    Fraction { fraction: f64, seed: u64 },
    Column(String),
}

#[derive(Clone, Debug)]
pub struct Calibration {
    /// (alternative index, target share), in spec order of alternatives.
    pub targets: Vec<(usize, f64)>,
    pub tolerance: f64,
    pub max_iterations: usize,
}

/// A linear restriction `sum a_k beta_k = c` for the Wald test.
#[derive(Clone, Debug)]
pub struct Restriction {
    pub text: String,
    pub coefficients: Vec<(usize, f64)>,
    pub constant: f64,
}

#[derive(Clone, Debug)]
pub struct Spec {
    pub path: PathBuf,
    pub title: Option<String>,
    /// The field the model is applied in (`field = "transport"`): only picks
    /// the field's own caution for the reports; `general` by default.
    pub field: Field,
    pub data: DataSpec,
    /// The model family's name (`[model].family`, default "logit").
    pub family: String,
    /// The family's own keys, as written: its sections by name, extra `[model]` keys under `model`.
    pub family_keys: toml::Table,
    /// The reference alternative: index 0, unused, when none is named (the
    /// constants are off and no characteristic enters; `base_named` false).
    pub base: usize,
    pub base_named: bool,
    pub constants: bool,
    pub alternatives: Vec<Alternative>,
    pub attributes: Vec<Attribute>,
    pub characteristics: Vec<Characteristic>,
    pub derived: Vec<(String, Expr)>,
    pub parameters: Vec<Parameter>,
    pub ratios: Vec<Ratio>,
    /// Data columns the family reads per situation beyond the utility's
    /// terms (a latent class model's membership columns), with the role
    /// messages name them by: loaded after the characteristics, so
    /// `Observations::characteristics[characteristics.len() + m]` is column m.
    pub family_columns: Vec<(String, String)>,
    pub holdout: Option<Holdout>,
    pub calibration: Option<Calibration>,
    pub restrictions: Vec<Restriction>,
    /// `[sampling]`: estimate on sampled choice sets (layout "tables").
    pub sampling: Option<Sampling>,
}

impl Spec {
    /// Reads and validates a spec file; `families` says which model families exist
    /// (the model room's registry, `model::read_spec`, is the usual caller).
    pub fn from_file(path: &Path, families: &dyn Catalog) -> Result<Spec> {
        if path.is_dir() {
            return Err(Error::spec(path, "is a directory, not a spec file"));
        }
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        Spec::from_str(&text, path, families)
    }

    /// Validates spec text; `path` names the file in messages and anchors relative paths.
    pub fn from_str(text: &str, path: &Path, families: &dyn Catalog) -> Result<Spec> {
        let raw: raw::RawSpec = toml::from_str(text).map_err(|e| {
            // Alternatives written as a list or a string (which then lands in
            // the table above it) leave none declared: say how they are written.
            let hint = if e.message().contains("missing field `alternatives`") {
                "; declare each alternative as a table of its own, such as [alternatives.bus] and [alternatives.rail] (a list or a string of names under another table does not declare them)"
            } else {
                ""
            };
            let at = crate::error::toml_message(text, &e);
            Error::spec(path, format!("not a valid spec: {at}{hint}"))
        })?;
        validate::validate(raw, path, families)
    }

    pub fn alternative_index(&self, name: &str) -> Option<usize> {
        self.alternatives.iter().position(|a| a.name == name)
    }

    pub fn parameter_index(&self, name: &str) -> Option<usize> {
        self.parameters.iter().position(|p| p.name == name)
    }

    pub fn alternative_names(&self) -> Vec<String> {
        self.alternatives.iter().map(|a| a.name.clone()).collect()
    }

    /// The base alternative's name when the spec names one.
    pub fn base_name(&self) -> Option<&str> {
        self.base_named
            .then(|| self.alternatives[self.base].name.as_str())
    }

    /// The alternatives' names for a sentence: all of them, or with many
    /// the first ten and how many there are.
    pub fn alternatives_listed(&self) -> String {
        let n = self.alternatives.len();
        let names = self.alternatives.iter().map(|a| a.name.as_str());
        if n > 12 {
            let first: Vec<&str> = names.take(10).collect();
            format!("{}, … ({n} in all)", first.join(", "))
        } else {
            names.collect::<Vec<_>>().join(", ")
        }
    }

    /// A readable label for the spec term a parameter comes from.
    pub fn term_label(&self, term: &Term) -> String {
        match term {
            Term::Constant => "constants".to_string(),
            Term::Attribute(a) => format!("attribute {}", self.attributes[*a].name),
            Term::Characteristic(c) => format!("characteristic {}", self.characteristics[*c].name),
            Term::Family(label) => label.clone(),
        }
    }

    /// Names of the derived columns.
    pub fn derived_names(&self) -> Vec<&str> {
        self.derived.iter().map(|d| d.0.as_str()).collect()
    }

    /// A copy restricted to constants only (the reference model for rho-squared);
    /// a family's own parameters stay, held at their starting values unless
    /// they belong to the reference model (cut-points).
    pub fn constants_only(&self) -> Spec {
        if self.parameters.iter().any(|p| p.class > 0) {
            return self.market_shares();
        }
        let mut s = self.clone();
        s.attributes.clear();
        s.characteristics.clear();
        s.parameters
            .retain(|p| matches!(p.term, Term::Constant | Term::Family(_)));
        for p in s.parameters.iter_mut() {
            if p.term == Term::Constant {
                p.fixed = None;
                p.start = 0.0;
            } else if !p.in_reference {
                p.fixed = Some(p.start);
            }
        }
        s.ratios.clear();
        s.restrictions.clear();
        // The reference model is the market-share model, the same in either
        // space; without the attributes, the price is gone.
        if let Some(toml::Value::Table(m)) = s.family_keys.get_mut("model") {
            m.remove("space");
            m.remove("price");
        }
        s
    }

    /// The reference model of a spec with one copy of the utility per
    /// latent class: the logit with the constants alone (one per
    /// alternative), the market-share model that every number of classes
    /// nests.
    fn market_shares(&self) -> Spec {
        let mut s = self.clone();
        s.attributes.clear();
        s.characteristics.clear();
        s.family_columns.clear();
        s.family = "logit".into();
        s.family_keys = toml::Table::new();
        s.parameters
            .retain(|p| p.term == Term::Constant && p.class <= 1);
        for p in s.parameters.iter_mut() {
            if p.class == 1 {
                if let Some(base) = p.name.strip_suffix("_class1") {
                    p.name = base.to_string();
                }
            }
            p.class = 0;
            p.fixed = None;
            p.start = 0.0;
        }
        s.ratios.clear();
        s.restrictions.clear();
        s
    }
}
