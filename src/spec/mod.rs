//! The model spec: the validated form of a TOML spec file, and the list of
//! parameters it implies. `raw` holds the serde types, `validate` the checks.

pub mod expr;
pub mod raw;
mod restriction;
mod validate;

use std::path::{Path, PathBuf};

pub use expr::Expr;
pub use restriction::parse_restriction;
pub use validate::parse_targets;

use crate::error::{Error, Result};

#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Family {
    Logit,
    Probit,
}

impl Family {
    pub fn name(self) -> &'static str {
        match self {
            Family::Logit => "logit",
            Family::Probit => "probit",
        }
    }
}

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
}

#[derive(Clone, Debug)]
pub struct Characteristic {
    pub name: String,
    pub column: String,
    /// Indices of the alternatives the characteristic enters.
    pub alternatives: Vec<usize>,
}

/// Which spec term a parameter comes from.
#[derive(Clone, Debug, PartialEq)]
pub enum Term {
    Constant,
    Attribute(usize),
    Characteristic(usize),
}

#[derive(Clone, Debug)]
pub struct Parameter {
    pub name: String,
    pub term: Term,
    /// The alternative the parameter belongs to, if it is alternative-specific.
    pub alternative: Option<usize>,
    pub start: f64,
    pub fixed: Option<f64>,
}

#[derive(Clone, Debug)]
pub struct Ratio {
    pub name: String,
    pub numerator: usize,
    pub denominator: usize,
    pub scale: f64,
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
    pub data: DataSpec,
    pub family: Family,
    pub base: usize,
    pub constants: bool,
    pub alternatives: Vec<Alternative>,
    pub attributes: Vec<Attribute>,
    pub characteristics: Vec<Characteristic>,
    pub derived: Vec<(String, Expr)>,
    pub parameters: Vec<Parameter>,
    pub ratios: Vec<Ratio>,
    pub holdout: Option<Holdout>,
    pub calibration: Option<Calibration>,
    pub restrictions: Vec<Restriction>,
}

impl Spec {
    /// Reads and validates a spec file.
    pub fn from_file(path: &Path) -> Result<Spec> {
        if path.is_dir() {
            return Err(Error::spec(path, "is a directory, not a spec file"));
        }
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        Spec::from_str(&text, path)
    }

    /// Validates spec text; `path` names the file in messages and anchors relative paths.
    pub fn from_str(text: &str, path: &Path) -> Result<Spec> {
        let raw: raw::RawSpec = toml::from_str(text).map_err(|e| {
            Error::spec(
                path,
                format!("not a valid spec: {}", e.to_string().trim_end()),
            )
        })?;
        validate::validate(raw, path)
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

    /// A readable label for the spec term a parameter comes from.
    pub fn term_label(&self, term: &Term) -> String {
        match term {
            Term::Constant => "constants".to_string(),
            Term::Attribute(a) => format!("attribute {}", self.attributes[*a].name),
            Term::Characteristic(c) => format!("characteristic {}", self.characteristics[*c].name),
        }
    }

    /// Names of the derived columns.
    pub fn derived_names(&self) -> Vec<&str> {
        self.derived.iter().map(|d| d.0.as_str()).collect()
    }

    /// A copy restricted to constants only (the reference model for rho-squared).
    pub fn constants_only(&self) -> Spec {
        let mut s = self.clone();
        s.attributes.clear();
        s.characteristics.clear();
        s.parameters.retain(|p| p.term == Term::Constant);
        for p in s.parameters.iter_mut() {
            p.fixed = None;
            p.start = 0.0;
        }
        s.ratios.clear();
        s.restrictions.clear();
        s
    }
}
