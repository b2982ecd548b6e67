//! Turns a scenario into changes of the design's numbers: per changed
//! attribute and alternative the difference in its value, per changed
//! characteristic the difference in the decision maker's value, and the
//! values of new alternatives. Utilities at any parameter vector then follow
//! without copying the design.

use super::file::{NewAlternative, NewValue, Scenario, Target};
use crate::analysis::TermMap;
use crate::data::{Column, Table};
use crate::design::Design;
use crate::error::{Error, Result};
use crate::estimate::Fit;
use crate::model::{Added, Family, WhatIf};
use crate::spec::{Expr, Spec, Term};

/// A new alternative ready to simulate.
#[derive(Clone, Debug)]
pub struct PreparedNew {
    pub name: String,
    pub like: usize,
    /// Constant override (else `like`'s constant at the parameter vector used).
    pub constant: Option<f64>,
    pub available: Vec<bool>,
    /// Per attribute entering `like`: (parameter, values per situation).
    pub attributes: Vec<(usize, Vec<f64>)>,
}

#[derive(Clone, Debug)]
pub struct Prepared {
    /// Alternatives of the scenario: the spec's, then the new ones.
    pub names: Vec<String>,
    /// Value changes of attributes: (attribute, parameter, alternative, change per situation).
    pub attribute_deltas: Vec<(usize, usize, usize, Vec<f64>)>,
    /// (characteristic, value change per situation).
    pub characteristic_deltas: Vec<(usize, Vec<f64>)>,
    pub removed: Vec<bool>,
    pub new: Vec<PreparedNew>,
    /// Characteristic parameters per alternative (for characteristic changes and new alternatives).
    pub map: TermMap,
    /// The constant's parameter of each spec alternative.
    pub constant_param: Vec<Option<usize>>,
    /// In willingness-to-pay space, the price scale's parameter: a new
    /// alternative's `constant` is then a value in price units, which enters
    /// utility times the scale (minus the point's price coefficient).
    pub price_param: Option<usize>,
    /// The family over the scenario's alternatives, when new ones change it.
    pub family: Option<crate::model::FamilyRef>,
}

/// Evaluates a scenario expression over the table's rows: numeric columns,
/// and text columns where it compares them with `==` or `!=`.
fn eval(table: &Table, key: &str, text: &str, e: &Expr, spec: &Spec) -> Result<Vec<f64>> {
    read_as_numbers(table, key, text, e, spec)?;
    let numbers = |c: &str| table.raw_numbers(c);
    let texts = |c: &str| match table.column(c) {
        Some(Column::Text(v)) => Some(v.as_slice()),
        _ => None,
    };
    let v = e.eval_with_text(&numbers, &texts, table.nrows).map_err(|m| {
        Error::spec(&spec.path, format!("{key} `{text}`: {m} (the data file's columns and the spec's [derived] names can be used)"))
    })?;
    if let Some(r) = v.iter().position(|x| !x.is_finite()) {
        return Err(Error::data(
            &table.file,
            format!(
                "{key} `{text}` is not a finite number at row {} (missing values in its columns?)",
                table.offset + r + 1
            ),
        ));
    }
    Ok(v)
}

/// Refuses a column read as numbers that holds nothing but text (every
/// value missing, text in its cells): a comparison with it would be false
/// everywhere without saying so. The message shows how to compare text.
fn read_as_numbers(table: &Table, key: &str, text: &str, e: &Expr, spec: &Spec) -> Result<()> {
    for c in e.columns() {
        let Some(values) = table.raw_numbers(&c) else {
            continue;
        };
        let Some((row, example)) = table.text_cells(&c).first() else {
            continue;
        };
        if values.iter().all(|x| x.is_nan()) {
            return Err(Error::spec(
                &spec.path,
                format!(
                    "{key} `{text}`: column `{c}` holds text (`{}` at row {} of {}), but is read as numbers here: a text column is compared with `==` or `!=` to a text value in quotes, as in `{c} == 'east'`, and is read as text unless the spec reads it as numbers",
                    crate::error::quote(example),
                    table.offset + row + 1,
                    table.file.display()
                ),
            ));
        }
    }
    Ok(())
}

pub fn prepare(spec: &Spec, fit: &Fit, table: &Table, s: &Scenario) -> Result<Prepared> {
    let d = &fit.design;
    let n = d.situations();
    let j = d.alternatives();
    let map = TermMap::new(spec, d);
    if table.nrows != n {
        return Err(Error::Usage(
            "the scenario's data table does not match the design".into(),
        ));
    }
    let (current, chars) = changed_values(spec, d, table, s)?;
    let mut attribute_deltas = Vec::new();
    for ((a, k), x) in current {
        let Some(param) = map.attribute[a][k] else {
            continue;
        };
        let delta: Vec<f64> = (0..n)
            .map(|i| x[i] - d.obs.attributes[a][i * j + k])
            .collect();
        attribute_deltas.push((a, param, k, delta));
    }
    let characteristic_deltas = chars
        .into_iter()
        .map(|(c, z)| {
            let delta = z
                .iter()
                .zip(&d.obs.characteristics[c])
                .map(|(a, b)| a - b)
                .collect();
            (c, delta)
        })
        .collect();
    let mut removed = vec![false; j];
    for &k in &s.remove {
        removed[k] = true;
    }
    let constant_param: Vec<Option<usize>> = (0..j)
        .map(|k| {
            spec.parameters
                .iter()
                .position(|p| p.term == Term::Constant && p.alternative == Some(k))
        })
        .collect();
    let mut new = Vec::new();
    for na in &s.new_alternatives {
        new.push(new_alternative(spec, d, &map, table, na)?);
    }
    let mut names = spec.alternative_names();
    names.extend(new.iter().map(|x| x.name.clone()));
    Ok(Prepared {
        names,
        attribute_deltas,
        characteristic_deltas,
        removed,
        new,
        map,
        constant_param,
        price_param: fit.family.willingness().map(|w| w.price),
        family: added_family(spec, fit, s)?,
    })
}

/// Changed attribute values per (attribute, alternative) and changed
/// characteristic values, in the order first changed.
type Changed = (Vec<((usize, usize), Vec<f64>)>, Vec<(usize, Vec<f64>)>);

/// The values after every change, applied in turn so that successive changes compound.
fn changed_values(spec: &Spec, d: &Design, table: &Table, s: &Scenario) -> Result<Changed> {
    let (n, j) = (d.situations(), d.alternatives());
    let mut current: Vec<((usize, usize), Vec<f64>)> = Vec::new();
    let mut chars: Vec<(usize, Vec<f64>)> = Vec::new();
    for (ci, ch) in s.changes.iter().enumerate() {
        let mask = match &ch.filter {
            Some((text, e)) => Some(eval(
                table,
                &format!("[[change]] #{} where", ci + 1),
                text,
                e,
                spec,
            )?),
            None => None,
        };
        let keep = |i: usize| mask.as_ref().is_none_or(|m| m[i] != 0.0);
        match ch.target {
            Target::Attribute {
                attribute,
                alternative,
            } => {
                let pos = match current.iter().position(|c| c.0 == (attribute, alternative)) {
                    Some(p) => p,
                    None => {
                        let x = (0..n)
                            .map(|i| d.obs.attributes[attribute][i * j + alternative])
                            .collect();
                        current.push(((attribute, alternative), x));
                        current.len() - 1
                    }
                };
                for (i, xi) in current[pos].1.iter_mut().enumerate() {
                    if keep(i) && d.available(i, alternative) {
                        *xi = ch.op.apply(*xi);
                    }
                }
            }
            Target::Characteristic { characteristic } => {
                let pos = match chars.iter().position(|c| c.0 == characteristic) {
                    Some(p) => p,
                    None => {
                        let z = d.obs.characteristics[characteristic].clone();
                        chars.push((characteristic, z));
                        chars.len() - 1
                    }
                };
                for (i, zi) in chars[pos].1.iter_mut().enumerate() {
                    if keep(i) {
                        *zi = ch.op.apply(*zi);
                    }
                }
            }
        }
    }
    Ok((current, chars))
}

/// A new alternative's availability and attribute values in every situation.
fn new_alternative(
    spec: &Spec,
    d: &Design,
    map: &TermMap,
    table: &Table,
    na: &NewAlternative,
) -> Result<PreparedNew> {
    let (n, j) = (d.situations(), d.alternatives());
    let available = match &na.available {
        Some(c) => {
            let v = table.numbers(c, &format!("[[new_alternative]] {}.available", na.name))?;
            v.iter().map(|x| *x != 0.0).collect()
        }
        None => (0..n).map(|i| d.available(i, na.like)).collect(),
    };
    let mut attributes = Vec::new();
    for (a, attr) in spec.attributes.iter().enumerate() {
        let Some(param) = map.attribute[a][na.like] else {
            continue;
        };
        let values = match na.attributes.iter().find(|x| x.0 == a) {
            Some((_, NewValue::Number(v))) => vec![*v; n],
            Some((_, NewValue::Expression(text, e))) => eval(
                table,
                &format!("[[new_alternative]] {}.attributes.{}", na.name, attr.name),
                text,
                e,
                spec,
            )?,
            None => (0..n)
                .map(|i| d.obs.attributes[a][i * j + na.like])
                .collect(),
        };
        attributes.push((param, values));
    }
    Ok(PreparedNew {
        name: na.name.clone(),
        like: na.like,
        constant: na.constant,
        available,
        attributes,
    })
}

/// The family over the scenario's alternatives when it adds any.
fn added_family(spec: &Spec, fit: &Fit, s: &Scenario) -> Result<Option<crate::model::FamilyRef>> {
    let added: Vec<Added> = s
        .new_alternatives
        .iter()
        .map(|na| Added {
            name: na.name.clone(),
            like: na.like,
            group: na.nest.clone(),
        })
        .collect();
    if added.is_empty() {
        return Ok(None);
    }
    fit.family
        .with_added(spec, &added)
        .map_err(|m| Error::Usage(format!("scenario `{}`: {m}", s.name)))
}

impl Prepared {
    pub fn alternatives(&self) -> usize {
        self.names.len()
    }

    /// Situations the scenario leaves with no available alternative (every one
    /// they had is withdrawn and no new one is open to them): their count and weight.
    pub fn stranded(&self, d: &Design) -> (usize, f64) {
        let j = d.alternatives();
        let (mut count, mut weight) = (0, 0.0);
        for i in 0..d.situations() {
            let open = (0..j).any(|k| d.obs.available[i * j + k] && !self.removed[k])
                || self.new.iter().any(|na| na.available[i]);
            if !open {
                count += 1;
                weight += d.obs.weight[i];
            }
        }
        (count, weight)
    }

    /// Scenario utilities of situation `i` at `beta` into `out` (length of `names`),
    /// given its base utilities `base` (length J, -inf = unavailable).
    #[inline]
    pub fn utilities(&self, d: &Design, beta: &[f64], i: usize, base: &[f64], out: &mut [f64]) {
        let j = base.len();
        out[..j].copy_from_slice(base);
        for (_, param, k, delta) in &self.attribute_deltas {
            if out[*k].is_finite() {
                out[*k] += beta[*param] * delta[i];
            }
        }
        for (c, delta) in &self.characteristic_deltas {
            for (l, p) in self.map.characteristic[*c].iter().enumerate() {
                if let (Some(p), true) = (p, out[l].is_finite()) {
                    out[l] += beta[*p] * delta[i];
                }
            }
        }
        for (k, r) in self.removed.iter().enumerate() {
            if *r {
                out[k] = f64::NEG_INFINITY;
            }
        }
        for (m, na) in self.new.iter().enumerate() {
            let slot = &mut out[j + m];
            if !na.available[i] {
                *slot = f64::NEG_INFINITY;
                continue;
            }
            let mut v = match (na.constant, self.constant_param[na.like]) {
                (Some(c), _) => match self.price_param {
                    Some(p) => -beta[p] * c,
                    None => c,
                },
                (None, Some(p)) => beta[p],
                (None, None) => 0.0,
            };
            for (param, values) in &na.attributes {
                v += beta[*param] * values[i];
            }
            for (c, params) in self.map.characteristic.iter().enumerate() {
                if let Some(p) = params[na.like] {
                    let mut z = d.obs.characteristics[c][i];
                    if let Some((_, delta)) = self.characteristic_deltas.iter().find(|x| x.0 == c) {
                        z += delta[i];
                    }
                    v += beta[p] * z;
                }
            }
            *slot = v;
        }
    }
}

impl WhatIf for Prepared {
    fn alternatives(&self, _j: usize) -> usize {
        self.names.len()
    }
    fn utilities(&self, d: &Design, beta: &[f64], i: usize, v0: &[f64], v1: &mut [f64]) {
        Prepared::utilities(self, d, beta, i, v0, v1)
    }
    fn utilities_of_points(
        &self,
        d: &Design,
        coefs: &[f64],
        (i, points): (usize, usize),
        v0: &[f64],
        v1: &mut [f64],
    ) -> bool {
        super::rows::utilities_of_points(self, d, coefs, (i, points), v0, v1);
        true
    }
    fn family(&self) -> Option<&dyn Family> {
        self.family.as_deref()
    }
}
