//! The design file of `sharecast design`: its serde form and the checks that
//! turn it into a `Plan`, each error naming the file and the key (an
//! attribute's own keys and priors in `attributes.rs`).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::error::{Error, Result};
use crate::spec::expr::Expr;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFile {
    title: Option<String>,
    design: RawDesign,
    #[serde(default)]
    attribute: Vec<RawAttribute>,
    #[serde(default)]
    forbid: Vec<RawForbid>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawDesign {
    alternatives: Vec<String>,
    tasks: i64,
    blocks: Option<i64>,
    seed: Option<i64>,
    draws: Option<i64>,
    starts: Option<i64>,
    #[serde(default)]
    constants: BTreeMap<String, toml::Value>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawAttribute {
    pub(super) name: String,
    pub(super) levels: toml::Value,
    pub(super) prior: Option<toml::Value>,
    pub(super) alternatives: Option<Vec<String>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawForbid {
    when: String,
}

/// A prior on one coefficient: fixed when `sd` is 0, else normal.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct Prior {
    pub mean: f64,
    pub sd: f64,
}

/// One attribute of the tasks: the alternatives it enters and its levels in each.
#[derive(Clone, Debug)]
pub struct Attribute {
    pub name: String,
    pub prior: Prior,
    /// Indices into `Plan::alternatives`, in their order.
    pub enters: Vec<usize>,
    /// The levels in each alternative of `enters` (the same list unless the
    /// file gave a table of lists by alternative).
    pub levels: Vec<Vec<f64>>,
}

/// An alternative-specific constant of a labelled design.
#[derive(Clone, Debug)]
pub struct Constant {
    pub alternative: usize,
    pub prior: Prior,
}

/// A `[[forbid]]` rule: tasks where `when` is non-zero are refused.
#[derive(Clone, Debug)]
pub struct Forbid {
    pub when: String,
    pub expr: Expr,
    /// The design columns it reads, as indices into `Plan::columns`.
    pub reads: Vec<usize>,
}

/// One column of the design: an attribute's levels in one alternative.
#[derive(Clone, Debug)]
pub struct Column {
    /// `<attribute>_<alternative>`.
    pub name: String,
    pub attribute: usize,
    pub alternative: usize,
    pub levels: Vec<f64>,
}

/// A checked design file.
#[derive(Clone, Debug)]
pub struct Plan {
    pub path: PathBuf,
    pub title: Option<String>,
    pub alternatives: Vec<String>,
    pub tasks: usize,
    pub blocks: usize,
    pub seed: u64,
    /// Prior draws for the Bayesian criterion (used when a prior has an sd).
    pub draws: usize,
    /// Random level-balanced starts of the search.
    pub starts: usize,
    pub attributes: Vec<Attribute>,
    pub constants: Vec<Constant>,
    pub forbids: Vec<Forbid>,
    /// Attribute-major, then alternative: the output's columns after `task`, `block`.
    pub columns: Vec<Column>,
}

/// The most tasks, levels of one attribute, alternatives and starts accepted.
pub const MAX_TASKS: usize = 2_000;
pub const MAX_LEVELS: usize = 64;
pub const MAX_ALTERNATIVES: usize = 20;
pub const MAX_STARTS: usize = 1_000;
/// Defaults of the optional `[design]` keys.
pub const DEFAULT_DRAWS: usize = 1_000;
pub const DEFAULT_STARTS: usize = 8;
pub const DEFAULT_SEED: u64 = 1;
/// The most memory the search's per-task information may take.
/// (Two starts run at once, each with its own copy.)
const MAX_INFO_BYTES: usize = 512 << 20;

impl Plan {
    /// The parameters: one per attribute, then `asc_<alternative>` per constant.
    pub fn parameters(&self) -> Vec<String> {
        let mut out: Vec<String> = self.attributes.iter().map(|a| a.name.clone()).collect();
        out.extend(
            self.constants
                .iter()
                .map(|c| format!("asc_{}", self.alternatives[c.alternative])),
        );
        out
    }

    /// The priors in the order of `parameters`.
    pub fn priors(&self) -> Vec<Prior> {
        let mut out: Vec<Prior> = self.attributes.iter().map(|a| a.prior).collect();
        out.extend(self.constants.iter().map(|c| c.prior));
        out
    }

    /// Whether any prior has a spread (the Bayesian D-error is then used).
    pub fn bayesian(&self) -> bool {
        self.priors().iter().any(|p| p.sd > 0.0)
    }

    /// Tasks in each block.
    pub fn per_block(&self) -> usize {
        self.tasks / self.blocks
    }

    /// Whether the alternatives differ beyond their attributes' levels
    /// (constants, or an attribute missing from some): then tasks that only
    /// list the same profiles in another order are not repeats.
    pub fn labelled(&self) -> bool {
        let j = self.alternatives.len();
        !self.constants.is_empty()
            || self
                .attributes
                .iter()
                .any(|a| a.enters.len() != j || a.levels.iter().any(|l| *l != a.levels[0]))
    }

    /// The column of attribute `a` in alternative `j`, if it enters it.
    pub fn column_of(&self, a: usize, j: usize) -> Option<usize> {
        self.columns
            .iter()
            .position(|c| c.attribute == a && c.alternative == j)
    }

    pub(super) fn err(&self, message: impl Into<String>) -> Error {
        Error::spec(&self.path, message)
    }
}

/// Whether a TOML file is a design file (it has a `[design]` table) rather
/// than a model's spec.
pub fn is_design_file(path: &Path) -> bool {
    std::fs::read_to_string(path)
        .ok()
        .and_then(|t| t.parse::<toml::Table>().ok())
        .is_some_and(|t| t.contains_key("design"))
}

/// Reads and checks a design file.
pub fn read(path: &Path) -> Result<Plan> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
    let raw: RawFile = toml::from_str(&text)
        .map_err(|e| Error::spec(path, crate::error::toml_message(&text, &e)))?;
    let mut plan = Plan {
        path: path.to_path_buf(),
        title: raw.title,
        alternatives: Vec::new(),
        tasks: 0,
        blocks: 1,
        seed: DEFAULT_SEED,
        draws: DEFAULT_DRAWS,
        starts: DEFAULT_STARTS,
        attributes: Vec::new(),
        constants: Vec::new(),
        forbids: Vec::new(),
        columns: Vec::new(),
    };
    design_keys(&mut plan, &raw.design)?;
    for (i, a) in raw.attribute.iter().enumerate() {
        let attribute = attribute(&plan, i, a)?;
        plan.attributes.push(attribute);
    }
    constants(&mut plan, &raw.design.constants)?;
    plan.columns = columns(&plan);
    for (i, f) in raw.forbid.iter().enumerate() {
        let forbid = forbid(&plan, i, f)?;
        plan.forbids.push(forbid);
    }
    whole(&plan)?;
    Ok(plan)
}

/// A count key: an integer within `low..=high`.
fn count(plan: &Plan, key: &str, v: i64, low: usize, high: usize) -> Result<usize> {
    if v < low as i64 || v > high as i64 {
        return Err(plan.err(format!(
            "{key}: {v} is outside the accepted {low} to {high}"
        )));
    }
    Ok(v as usize)
}

fn design_keys(plan: &mut Plan, d: &RawDesign) -> Result<()> {
    if d.alternatives.len() < 2 || d.alternatives.len() > MAX_ALTERNATIVES {
        return Err(plan.err(format!(
            "[design].alternatives: a task needs 2 to {MAX_ALTERNATIVES} alternatives, not {}",
            d.alternatives.len()
        )));
    }
    for (i, name) in d.alternatives.iter().enumerate() {
        name_ok(plan, "[design].alternatives", name)?;
        if d.alternatives[..i].contains(name) {
            return Err(plan.err(format!("[design].alternatives: \"{name}\" is listed twice")));
        }
    }
    plan.alternatives = d.alternatives.clone();
    plan.tasks = count(plan, "[design].tasks", d.tasks, 1, MAX_TASKS)?;
    plan.blocks = count(
        plan,
        "[design].blocks",
        d.blocks.unwrap_or(1),
        1,
        plan.tasks,
    )?;
    if !plan.tasks.is_multiple_of(plan.blocks) {
        return Err(plan.err(format!(
            "[design].blocks: {} blocks do not divide {} tasks into blocks of equal size",
            plan.blocks, plan.tasks
        )));
    }
    let draws = d.draws.unwrap_or(DEFAULT_DRAWS as i64);
    plan.draws = count(
        plan,
        "[design].draws",
        draws,
        1,
        crate::model::draws::MAX_DRAWS,
    )?;
    let starts = d.starts.unwrap_or(DEFAULT_STARTS as i64);
    plan.starts = count(plan, "[design].starts", starts, 1, MAX_STARTS)?;
    if let Some(seed) = d.seed {
        if seed < 0 {
            return Err(plan.err(format!("[design].seed: {seed} is negative")));
        }
        plan.seed = seed as u64;
    }
    Ok(())
}

use super::attributes::{attribute, prior};

/// A name that makes a column name and an expression's identifier.
pub(super) fn name_ok(plan: &Plan, key: &str, name: &str) -> Result<()> {
    let mut chars = name.chars();
    let first_ok = chars
        .next()
        .is_some_and(|c| c.is_ascii_alphabetic() || c == '_');
    if !first_ok || !name.chars().all(|c| c.is_ascii_alphanumeric() || c == '_') {
        return Err(plan.err(format!(
            "{key}: \"{}\" is not a plain name (letters, digits and `_`, not starting with a digit)",
            crate::error::quote(name)
        )));
    }
    Ok(())
}

fn constants(plan: &mut Plan, raw: &BTreeMap<String, toml::Value>) -> Result<()> {
    for name in raw.keys() {
        if !plan.alternatives.contains(name) {
            return Err(plan.err(format!(
                "[design.constants]: \"{}\" is not in [design].alternatives ({})",
                crate::error::quote(name),
                plan.alternatives.join(", ")
            )));
        }
    }
    for (j, name) in plan.alternatives.clone().iter().enumerate() {
        if let Some(v) = raw.get(name) {
            let prior = prior(plan, &format!("[design.constants].{name}"), Some(v))?;
            plan.constants.push(Constant {
                alternative: j,
                prior,
            });
        }
    }
    if plan.constants.len() == plan.alternatives.len() {
        return Err(plan.err(
            "[design.constants]: every alternative has a constant; leave one without (the reference), as only differences of utility matter",
        ));
    }
    if plan
        .attributes
        .iter()
        .any(|a| plan.parameters().iter().filter(|p| **p == a.name).count() > 1)
    {
        return Err(plan.err("[[attribute]]: a name equals a constant's `asc_<alternative>`"));
    }
    Ok(())
}

fn columns(plan: &Plan) -> Vec<Column> {
    let mut out = Vec::new();
    for (a, attr) in plan.attributes.iter().enumerate() {
        for (&j, levels) in attr.enters.iter().zip(&attr.levels) {
            out.push(Column {
                name: format!("{}_{}", attr.name, plan.alternatives[j]),
                attribute: a,
                alternative: j,
                levels: levels.clone(),
            });
        }
    }
    out
}

fn forbid(plan: &Plan, i: usize, f: &RawForbid) -> Result<Forbid> {
    let key = format!("[[forbid]] {}: when", i + 1);
    let expr = Expr::parse(&f.when).map_err(|e| plan.err(format!("{key}: {e}")))?;
    if !expr.text_columns().is_empty() {
        return Err(plan.err(format!(
            "{key}: levels are numbers; compare them with numbers"
        )));
    }
    let mut reads = Vec::new();
    for c in expr.columns() {
        let at = plan.columns.iter().position(|x| x.name == c).ok_or_else(|| {
            plan.err(format!(
                "{key}: `{}` is not a column of the design (columns are <attribute>_<alternative>: {})",
                crate::error::quote(&c),
                crate::error::quote(
                    &plan
                        .columns
                        .iter()
                        .map(|x| x.name.as_str())
                        .collect::<Vec<_>>()
                        .join(", ")
                )
            ))
        })?;
        reads.push(at);
    }
    Ok(Forbid {
        when: f.when.clone(),
        expr,
        reads,
    })
}

/// Checks across keys: something varies, enough tasks, memory.
fn whole(plan: &Plan) -> Result<()> {
    if plan.attributes.is_empty() {
        return Err(plan.err(
            "[[attribute]]: no attribute varies; a design needs at least one attribute with its levels",
        ));
    }
    let k = plan.parameters().len();
    if plan.tasks < k {
        return Err(plan.err(format!(
            "[design].tasks: {} tasks are fewer than the {k} parameters ({}); the information matrix would be singular",
            plan.tasks,
            plan.parameters().join(", ")
        )));
    }
    let draws = if plan.bayesian() { plan.draws } else { 1 };
    let bytes = plan.tasks * draws * k * (k + 1) / 2 * 8;
    if bytes > MAX_INFO_BYTES {
        return Err(plan.err(format!(
            "[design].draws: {draws} prior draws over {} tasks and {k} parameters need {} during the search, more than the {} allowed; use fewer draws",
            plan.tasks,
            crate::error::human_bytes(bytes as f64),
            crate::error::human_bytes(MAX_INFO_BYTES as f64)
        )));
    }
    Ok(())
}
