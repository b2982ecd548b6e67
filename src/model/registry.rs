//! The registry: one entry per model family, mapping the spec's
//! `[model].family` name to its spec rules and its constructor. Adding a family
//! is one line here.

use std::path::Path;
use std::sync::Arc;

use super::{classes, logit, mixed, mnp, nested, ordered, probit, FamilyRef};
use crate::error::{Error, Result};
use crate::spec::{Catalog, FamilyRules, Spec};

/// One registered family.
pub struct Entry {
    pub name: &'static str,
    pub rules: &'static dyn FamilyRules,
    pub build: fn(&Spec) -> Result<FamilyRef>,
    /// For the shared family test suite: how many alternatives its example
    /// model has, and spec lines it adds to the example (its own sections).
    pub example_alternatives: usize,
    pub example_spec: &'static str,
    /// Lines added inside the example's attribute table (`random = ...`).
    pub example_attribute: &'static str,
    /// Lines added inside the example's `[model]` table.
    pub example_model: &'static str,
    /// Generating values of the family's own parameters in the example (the
    /// others default to their starting values).
    pub example_truth: &'static [(&'static str, f64)],
}

/// Every family, in the order the documentation lists them.
pub static FAMILIES: &[Entry] = &[
    Entry {
        name: "logit",
        rules: &logit::Rules,
        build: logit::build,
        example_alternatives: 4,
        example_spec: "",
        example_attribute: "",
        example_model: "",
        example_truth: &[],
    },
    // The logit written in willingness-to-pay space, `x` the price.
    Entry {
        name: "logit",
        rules: &logit::Rules,
        build: logit::build,
        example_alternatives: 4,
        example_spec: "",
        example_attribute: "",
        example_model: "space = \"willingness\"\nprice = \"x\"\n",
        example_truth: &[("x", 0.8)],
    },
    Entry {
        name: "probit",
        rules: &mnp::Rules,
        build: build_probit,
        example_alternatives: 2,
        example_spec: "",
        example_attribute: "",
        example_model: "",
        example_truth: &[],
    },
    // The same family with three or more alternatives (the multinomial
    // probit), listed again so the shared suite checks that case too.
    Entry {
        name: "probit",
        rules: &mnp::Rules,
        build: build_probit,
        example_alternatives: 4,
        example_spec: "[errors]\nstructure = \"full\"\n[simulation]\ndraws = 200\n",
        example_attribute: "",
        example_model: "",
        example_truth: &[("chol_a2_a1", 0.2), ("chol_a2_a2", 0.9)],
    },
    Entry {
        name: "nested",
        rules: &nested::Rules,
        build: |spec| Ok(Arc::new(nested::Nested::new(spec)?)),
        example_alternatives: 5,
        example_attribute: "",
        example_model: "",
        example_spec: "[[nest]]\nname = \"near\"\nalternatives = [\"a1\", \"a2\"]\n[[nest]]\nname = \"far\"\nalternatives = [\"a3\", \"a4\"]\n",
        example_truth: &[("lambda_near", 0.5), ("lambda_far", 0.7)],
    },
    Entry {
        name: "ordered-logit",
        rules: &ordered::Rules { probit: false },
        build: |spec| Ok(Arc::new(ordered::Ordered::new(spec, false))),
        example_alternatives: 4,
        example_spec: "",
        example_attribute: "",
        example_model: "",
        example_truth: &[("cut_a0", -1.0), ("cut_a1", 0.0), ("cut_a2", 1.2)],
    },
    Entry {
        name: "ordered-probit",
        rules: &ordered::Rules { probit: true },
        build: |spec| Ok(Arc::new(ordered::Ordered::new(spec, true))),
        example_alternatives: 4,
        example_spec: "",
        example_attribute: "",
        example_model: "",
        example_truth: &[("cut_a0", -0.7), ("cut_a1", 0.0), ("cut_a2", 0.8)],
    },
    Entry {
        name: "mixed",
        rules: &mixed::Rules,
        build: |spec| Ok(Arc::new(mixed::Mixed::new(spec)?)),
        example_alternatives: 4,
        example_spec: "[simulation]\ndraws = 200\n",
        example_attribute: "random = \"normal\"\n",
        example_model: "",
        example_truth: &[("x_spread", 0.7)],
    },
    // Correlated: a random constant and x jointly normal.
    Entry {
        name: "mixed",
        rules: &mixed::Rules,
        build: |spec| Ok(Arc::new(mixed::Mixed::new(spec)?)),
        example_alternatives: 4,
        example_spec: "[simulation]\ndraws = 200\n",
        example_attribute: "random = \"normal\"\n",
        example_model: "random_constants = [\"a1\"]\ncorrelated = [\"x\", \"asc_a1\"]\n",
        example_truth: &[("x_spread", 0.6), ("asc_a1_spread", 0.8), ("chol_asc_a1_x", 0.5)],
    },
    // In willingness-to-pay space: a lognormal price scale `x` correlated
    // with a random constant (a value).
    Entry {
        name: "mixed",
        rules: &mixed::Rules,
        build: |spec| Ok(Arc::new(mixed::Mixed::new(spec)?)),
        example_alternatives: 4,
        example_spec: "[simulation]\ndraws = 200\n",
        example_attribute: "random = \"lognormal\"\n",
        example_model: "space = \"willingness\"\nprice = \"x\"\nrandom_constants = [\"a1\"]\ncorrelated = [\"x\", \"asc_a1\"]\n",
        example_truth: &[
            ("x", -0.2),
            ("x_spread", 0.4),
            ("asc_a1_spread", 1.0),
            ("chol_asc_a1_x", 0.6),
        ],
    },
    // Two latent classes, shares constant, apart in x's coefficient alone,
    // the constants and the characteristic's coefficients common to both (a
    // cross-section identifies the classes only from the shape of the
    // choice probabilities).
    Entry {
        name: "latent-class",
        rules: &classes::Rules,
        build: |spec| Ok(Arc::new(classes::LatentClass::new(spec)?)),
        example_alternatives: 4,
        example_spec: "",
        example_attribute: "",
        example_model: "classes = 2\nstarts = 4\ncommon = [\"asc_a1\", \"asc_a2\", \"asc_a3\", \"z_a1\", \"z_a2\", \"z_a3\"]\n",
        example_truth: &[("x_class2", -2.5), ("member_class2", -0.3)],
    },
];

/// The probit: binary and exact with two alternatives, else multinomial (GHK).
fn build_probit(spec: &Spec) -> Result<FamilyRef> {
    if spec.alternatives.len() == 2 {
        Ok(Arc::new(probit::Probit { base: spec.base }))
    } else {
        Ok(Arc::new(mnp::Mnp::new(spec)?))
    }
}

/// The registry as the spec room sees it.
pub struct Registry;

impl Catalog for Registry {
    fn table_ids(&self, file: &Path, id: &str) -> Result<Vec<String>> {
        crate::data::tables::ids(file, id)
    }
    fn rules(&self, name: &str) -> Option<&dyn FamilyRules> {
        FAMILIES.iter().find(|e| e.name == name).map(|e| e.rules)
    }
    fn names(&self) -> Vec<&'static str> {
        let mut names: Vec<&'static str> = FAMILIES.iter().map(|e| e.name).collect();
        names.dedup();
        names
    }
    fn owners_of(&self, section: &str) -> Vec<&'static str> {
        let mut names: Vec<&'static str> = FAMILIES
            .iter()
            .filter(|e| e.rules.sections().contains(&section))
            .map(|e| e.name)
            .collect();
        names.dedup();
        names
    }
    fn model_key_owners(&self, key: &str) -> Vec<&'static str> {
        let mut names: Vec<&'static str> = FAMILIES
            .iter()
            .filter(|e| e.rules.model_keys().contains(&key))
            .map(|e| e.name)
            .collect();
        names.dedup();
        names
    }
}

/// Reads and validates a spec file against the registered families.
pub fn read_spec(path: &Path) -> Result<Spec> {
    Spec::from_file(path, &Registry)
}

/// Validates spec text against the registered families.
pub fn parse_spec(text: &str, path: &Path) -> Result<Spec> {
    Spec::from_str(text, path, &Registry)
}

/// The family a validated spec names, built for it.
pub fn for_spec(spec: &Spec) -> Result<FamilyRef> {
    let entry = FAMILIES
        .iter()
        .find(|e| e.name == spec.family)
        .ok_or_else(|| {
            Error::spec(
                &spec.path,
                format!("[model].family: \"{}\" is not a family", spec.family),
            )
        })?;
    (entry.build)(spec)
}

/// The starting values the spec's parameters have without `[parameters]`:
/// 0 for the linear utility's, the family's own default for its parameters
/// (a fit restarts from them when the search from given starts fails).
pub fn default_starts(spec: &Spec) -> Vec<f64> {
    let linear: Vec<crate::spec::Parameter> = spec
        .parameters
        .iter()
        .filter(|p| !matches!(p.term, crate::spec::Term::Family(_)))
        .cloned()
        .collect();
    let view = crate::spec::SpecView {
        layout: &spec.data.layout,
        alternatives: &spec.alternatives,
        base: spec.base,
        constants: spec.constants,
        attributes: &spec.attributes,
        characteristics: &spec.characteristics,
        parameters: &linear,
        keys: &spec.family_keys,
    };
    let own = FAMILIES
        .iter()
        .find(|e| e.name == spec.family)
        .and_then(|e| e.rules.check(&view).ok())
        .unwrap_or_default();
    let mut own = own.into_iter();
    spec.parameters
        .iter()
        .map(|p| match p.term {
            crate::spec::Term::Family(_) => own.next().map(|f| f.start).unwrap_or(p.start),
            _ => 0.0,
        })
        .collect()
}
