//! Scenario files: the TOML a what-if is written in, checked against the
//! spec (attribute, alternative and expression errors name the key), and
//! written back out (the workbench saves its what-ifs this way).

use std::path::Path;

use serde::Deserialize;

use crate::error::{Error, Result};
use crate::spec::{parse_targets, Expr, Spec};

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawScenario {
    name: Option<String>,
    #[serde(default)]
    change: Vec<RawChange>,
    #[serde(default)]
    remove: Vec<String>,
    #[serde(default)]
    new_alternative: Vec<RawNew>,
    calibration: Option<RawCalibration>,
    price: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawChange {
    attribute: String,
    alternative: Option<String>,
    multiply: Option<f64>,
    add: Option<f64>,
    set: Option<f64>,
    #[serde(rename = "where")]
    filter: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawNew {
    name: String,
    like: String,
    nest: Option<String>,
    constant: Option<f64>,
    available: Option<String>,
    #[serde(default)]
    attributes: toml::Table,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCalibration {
    targets: toml::Table,
}

#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Op {
    Multiply(f64),
    Add(f64),
    Set(f64),
}

impl Op {
    pub fn apply(self, x: f64) -> f64 {
        match self {
            Op::Multiply(m) => x * m,
            Op::Add(a) => x + a,
            Op::Set(s) => s,
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub enum Target {
    /// Attribute index and the alternative whose value changes.
    Attribute {
        attribute: usize,
        alternative: usize,
    },
    Characteristic {
        characteristic: usize,
    },
}

#[derive(Clone, Debug, PartialEq)]
pub struct Change {
    pub target: Target,
    pub op: Op,
    /// Only situations where this evaluates to non-zero.
    pub filter: Option<(String, Expr)>,
}

#[derive(Clone, Debug, PartialEq)]
pub enum NewValue {
    Number(f64),
    Expression(String, Expr),
}

#[derive(Clone, Debug, PartialEq)]
pub struct NewAlternative {
    pub name: String,
    pub like: usize,
    /// The nest it joins (nested family), instead of `like`'s.
    pub nest: Option<String>,
    pub constant: Option<f64>,
    /// A 0/1 availability column; default: wherever `like` is available.
    pub available: Option<String>,
    /// (attribute index, value); attributes not listed take `like`'s values.
    pub attributes: Vec<(usize, NewValue)>,
}

#[derive(Clone, Debug, Default, PartialEq)]
pub struct Scenario {
    pub name: String,
    pub changes: Vec<Change>,
    pub remove: Vec<usize>,
    pub new_alternatives: Vec<NewAlternative>,
    /// Share targets for constant calibration (overrides the spec's).
    pub calibration: Option<Vec<(usize, f64)>>,
    /// The attribute that is a price, for revenue.
    pub price: Option<usize>,
}

/// A number a scenario sets, adds or multiplies by: finite and of a usable
/// magnitude, as the spec requires of its own numbers.
fn finite_value(key: &str, v: f64) -> std::result::Result<(), String> {
    if v.is_nan() {
        Err(format!("{key}: `nan` is not a number a scenario can use"))
    } else if !crate::data::table::usable(v) {
        Err(format!(
            "{key}: {v} is infinite or too large (at most {:e} in magnitude)",
            crate::data::table::MAX_MAGNITUDE
        ))
    } else {
        Ok(())
    }
}

impl Scenario {
    pub fn from_file(path: &Path, spec: &Spec) -> Result<Scenario> {
        if path.is_dir() {
            return Err(Error::spec(path, "is a directory, not a scenario file"));
        }
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        Scenario::from_str(&text, path, spec)
    }

    pub fn from_str(text: &str, path: &Path, spec: &Spec) -> Result<Scenario> {
        let r = Reader { spec, path };
        let raw: RawScenario = toml::from_str(text).map_err(|e| {
            r.fail(format!(
                "not a valid scenario: {}",
                crate::error::toml_message(text, &e)
            ))
        })?;
        let mut changes = Vec::new();
        for (n, c) in raw.change.iter().enumerate() {
            changes.extend(r.changes(n, c)?);
        }
        let mut remove = Vec::new();
        for name in &raw.remove {
            let k = r.alt("remove", name)?;
            if !remove.contains(&k) {
                remove.push(k);
            }
        }
        if remove.len() >= spec.alternatives.len() && raw.new_alternative.is_empty() {
            return Err(
                r.fail("remove: withdrawing every alternative leaves nothing to choose".into())
            );
        }
        let mut new_alternatives = Vec::new();
        for n in &raw.new_alternative {
            let na = r.new_alternative(n, &new_alternatives)?;
            new_alternatives.push(na);
        }
        let calibration = match &raw.calibration {
            Some(c) => Some(
                parse_targets(
                    &c.targets,
                    &spec.alternatives,
                    spec.base,
                    spec.constants,
                    "[calibration].targets",
                )
                .map_err(|m| r.fail(m))?,
            ),
            None => None,
        };
        let price = match &raw.price {
            Some(p) => Some(
                spec.attributes
                    .iter()
                    .position(|a| &a.name == p)
                    .ok_or_else(|| {
                        r.fail(format!("price: `{p}` is not an attribute of the spec"))
                    })?,
            ),
            None => None,
        };
        Ok(Scenario {
            name: raw.name.unwrap_or_else(|| {
                path.file_stem()
                    .map(|s| s.to_string_lossy().to_string())
                    .unwrap_or_default()
            }),
            changes,
            remove,
            new_alternatives,
            calibration,
            price,
        })
    }

    /// The scenario's expressions: `where` filters, then new alternatives' values.
    fn expressions(&self) -> impl Iterator<Item = &Expr> {
        let filters = self.changes.iter().filter_map(|c| c.filter.as_ref());
        let values = self
            .new_alternatives
            .iter()
            .flat_map(|n| n.attributes.iter())
            .filter_map(|(_, v)| match v {
                NewValue::Expression(_, e) => Some(e),
                NewValue::Number(_) => None,
            });
        filters.map(|(_, e)| e).chain(values)
    }

    /// Columns of the data that the scenario's expressions read.
    pub fn columns(&self) -> Vec<String> {
        let mut out: Vec<String> = Vec::new();
        let read = self.expressions().flat_map(|e| e.columns());
        let available = self
            .new_alternatives
            .iter()
            .filter_map(|n| n.available.clone());
        for c in read.chain(available) {
            if !out.contains(&c) {
                out.push(c);
            }
        }
        out
    }

    /// Columns the scenario's expressions compare with a text value in
    /// quotes, less those the spec reads as numbers (where the text value is
    /// read as a number): a loader reads these as text.
    pub fn text_columns(&self, spec: &Spec) -> Vec<String> {
        let (numeric, _) = crate::data::needed_columns(spec, &crate::data::Extra::default());
        let mut out: Vec<String> = Vec::new();
        for c in self.expressions().flat_map(|e| e.text_columns()) {
            if !numeric.contains(&c) && !out.contains(&c) {
                out.push(c);
            }
        }
        out
    }

    /// The columns a loader reads for the scenario beside the spec's own:
    /// `text_columns` as text, the rest of `columns` as numbers.
    pub fn extra(&self, spec: &Spec) -> crate::data::Extra {
        let text = self.text_columns(spec);
        let numeric = self
            .columns()
            .into_iter()
            .filter(|c| !text.contains(c))
            .collect();
        crate::data::Extra { numeric, text }
    }
}

/// Reads a scenario's parts against the spec; errors name the scenario file.
struct Reader<'a> {
    spec: &'a Spec,
    path: &'a Path,
}

impl Reader<'_> {
    fn fail(&self, message: String) -> Error {
        Error::spec(self.path, message)
    }

    /// The alternative `name` given at `key`.
    fn alt(&self, key: &str, name: &str) -> Result<usize> {
        self.spec.alternative_index(name).ok_or_else(|| {
            let names = self.spec.alternative_names();
            let listed = if names.len() > 12 {
                format!("{}, … ({} in all)", names[..10].join(", "), names.len())
            } else {
                names.join(", ")
            };
            self.fail(format!(
                "{key}: `{name}` is not an alternative of the spec ({listed})"
            ))
        })
    }

    fn expr(&self, key: &str, text: &str) -> Result<Expr> {
        Expr::parse(text).map_err(|e| self.fail(format!("{key}: {e}")))
    }

    /// The `n`-th `[[change]]` (from 0): one change, or in layout "tables"
    /// an attribute's change without `alternative` whose `where` picks the
    /// alternatives from their table (one change per alternative picked).
    fn changes(&self, n: usize, c: &RawChange) -> Result<Vec<Change>> {
        let attribute = self
            .spec
            .attributes
            .iter()
            .position(|x| x.name == c.attribute);
        if let (Some(a), None, Some(text)) = (attribute, &c.alternative, &c.filter) {
            let key = format!("[[change]] #{} ({}).where", n + 1, c.attribute);
            let e = self.expr(&key, text)?;
            if let Some(picked) = super::pick::alternatives_where(self.spec, (self.path, &key), &e)?
            {
                let op = self.op(&format!("[[change]] #{} ({})", n + 1, c.attribute), c)?;
                return Ok(picked
                    .into_iter()
                    .filter(|&k| self.spec.attributes[a].sources[k].is_some())
                    .map(|k| Change {
                        target: Target::Attribute {
                            attribute: a,
                            alternative: k,
                        },
                        op,
                        filter: None,
                    })
                    .collect());
            }
        }
        Ok(vec![self.change(n, c)?])
    }

    /// The `n`-th `[[change]]` (from 0).
    fn change(&self, n: usize, c: &RawChange) -> Result<Change> {
        let key = format!("[[change]] #{} ({})", n + 1, c.attribute);
        let op = self.op(&key, c)?;
        let target = self.target(&key, c)?;
        let filter = match &c.filter {
            Some(t) => Some((t.clone(), self.expr(&format!("{key}.where"), t)?)),
            None => None,
        };
        Ok(Change { target, op, filter })
    }

    /// A change's operation: exactly one of `multiply`, `add` or `set`, finite.
    fn op(&self, key: &str, c: &RawChange) -> Result<Op> {
        let ops = [
            c.multiply.map(Op::Multiply),
            c.add.map(Op::Add),
            c.set.map(Op::Set),
        ];
        let given: Vec<Op> = ops.iter().flatten().copied().collect();
        if given.len() != 1 {
            return Err(self.fail(format!(
                "{key}: give exactly one of `multiply`, `add` or `set` (found {})",
                given.len()
            )));
        }
        let op = given[0];
        let (word, v) = match op {
            Op::Multiply(v) => ("multiply", v),
            Op::Add(v) => ("add", v),
            Op::Set(v) => ("set", v),
        };
        finite_value(&format!("{key}.{word}"), v).map_err(|m| self.fail(m))?;
        Ok(op)
    }

    /// What a `[[change]]` changes: an attribute of an alternative, or a characteristic.
    fn target(&self, key: &str, c: &RawChange) -> Result<Target> {
        let spec = self.spec;
        if let Some(a) = spec.attributes.iter().position(|x| x.name == c.attribute) {
            let name = c.alternative.as_deref().ok_or_else(|| {
                self.fail(format!(
                    "{key}: `{}` is an attribute, so name the `alternative` whose value changes",
                    c.attribute
                ))
            })?;
            let k = self.alt(&format!("{key}.alternative"), name)?;
            if spec.attributes[a].sources[k].is_none() {
                return Err(self.fail(format!(
                    "{key}: attribute `{}` does not enter alternative `{name}`",
                    c.attribute
                )));
            }
            return Ok(Target::Attribute {
                attribute: a,
                alternative: k,
            });
        }
        if let Some(ci) = spec
            .characteristics
            .iter()
            .position(|x| x.name == c.attribute)
        {
            if c.alternative.is_some() {
                return Err(self.fail(format!(
                    "{key}: `{}` is a characteristic of the decision maker; leave out `alternative`",
                    c.attribute
                )));
            }
            return Ok(Target::Characteristic { characteristic: ci });
        }
        let known: Vec<&str> = spec
            .attributes
            .iter()
            .map(|a| a.name.as_str())
            .chain(spec.characteristics.iter().map(|c| c.name.as_str()))
            .collect();
        Err(self.fail(format!(
            "{key}.attribute: `{}` is not an attribute or characteristic of the spec ({})",
            c.attribute,
            known.join(", ")
        )))
    }

    /// A `[[new_alternative]]`, after the `earlier` ones.
    fn new_alternative(&self, n: &RawNew, earlier: &[NewAlternative]) -> Result<NewAlternative> {
        let key = format!("[[new_alternative]] {}", n.name);
        if self.spec.alternative_index(&n.name).is_some()
            || earlier.iter().any(|x| x.name == n.name)
        {
            return Err(self.fail(format!("{key}: the name is taken")));
        }
        let like = self.alt(&format!("{key}.like"), &n.like)?;
        let mut attributes = Vec::new();
        for (name, v) in n.attributes.iter() {
            attributes.push(self.new_value(&key, n, like, name, v)?);
        }
        if let Some(c) = n.constant {
            finite_value(&format!("{key}.constant"), c).map_err(|m| self.fail(m))?;
        }
        for (a, v) in &attributes {
            if let NewValue::Number(x) = v {
                let name = &self.spec.attributes[*a].name;
                finite_value(&format!("{key}.attributes.{name}"), *x).map_err(|m| self.fail(m))?;
            }
        }
        Ok(NewAlternative {
            name: n.name.clone(),
            like,
            nest: n.nest.clone(),
            constant: n.constant,
            available: n.available.clone(),
            attributes,
        })
    }

    /// One entry `name = v` of a new alternative's `attributes`.
    fn new_value(
        &self,
        key: &str,
        n: &RawNew,
        like: usize,
        name: &str,
        v: &toml::Value,
    ) -> Result<(usize, NewValue)> {
        let spec = self.spec;
        let a = spec
            .attributes
            .iter()
            .position(|x| x.name == name)
            .ok_or_else(|| {
                self.fail(format!(
                    "{key}.attributes.{name}: `{name}` is not an attribute of the spec"
                ))
            })?;
        if spec.attributes[a].sources[like].is_none() {
            return Err(self.fail(format!(
                "{key}.attributes.{name}: `{name}` does not enter `{}`, so the new alternative has no coefficient for it",
                n.like
            )));
        }
        let value = match v {
            toml::Value::Integer(i) => NewValue::Number(*i as f64),
            toml::Value::Float(f) => NewValue::Number(*f),
            toml::Value::String(s) => NewValue::Expression(
                s.clone(),
                self.expr(&format!("{key}.attributes.{name}"), s)?,
            ),
            _ => {
                return Err(self.fail(format!(
                    "{key}.attributes.{name}: give a number or an expression string"
                )))
            }
        };
        Ok((a, value))
    }
}
