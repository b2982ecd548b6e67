//! Layout "tables": the table of alternatives (one row per alternative, its
//! ids naming them) and the optional table of pairs (values by the
//! situation's `from` key and the alternative), loaded once into lookups
//! (`Tables`); situations become full-set `Observations` through them
//! (`full`), or sampled ones for estimation (`sample`).

mod full;
pub mod lean;
mod pairs;
pub mod sample;

use std::collections::HashMap;
use std::path::Path;

use super::load;
use super::table::{check_finite, Table};
use crate::error::{Error, Result};
use crate::spec::{Layout, Scheme, Spec};

pub(super) use full::{observations, stand_in};
pub use pairs::Pairs;

/// The column of either table that marks an alternative (or a pair) unavailable when 0.
pub const AVAILABLE: &str = "available";

/// Where an attribute's values come from.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Origin {
    /// Column `c` of the table of alternatives (one value per alternative).
    Alternatives(usize),
    /// Column `c` of the table of pairs (one value per key and alternative).
    Pairs(usize),
}

/// The tables of a spec in layout "tables", as lookups.
#[derive(Clone, Debug)]
pub struct Tables {
    /// The alternatives' ids, in file order (the spec's alternatives).
    pub ids: Vec<String>,
    /// The table of alternatives with every column read (text columns as
    /// text): scenarios' `where` and reports by a column read it.
    pub table: Table,
    /// Whether each alternative is available (its `available` column, else all).
    pub available: Vec<bool>,
    /// The numeric columns of the table of alternatives the attributes read.
    pub columns: Vec<Vec<f64>>,
    pub pairs: Option<Pairs>,
    /// Per spec attribute, where its values come from.
    pub sources: Vec<Origin>,
    /// The weights of `[sampling]`'s scheme "weighted", per alternative.
    pub sampling_weight: Option<Vec<f64>>,
}

/// The ids in column `id` of a table of alternatives, in file order; a
/// missing or repeated id is refused naming its rows.
pub fn ids(file: &Path, id: &str) -> Result<Vec<String>> {
    let table = load::read(file, &[], &[id.to_string()])?;
    let ids = table.keys(id, "[data.alternatives].id")?;
    let mut seen: HashMap<&str, usize> = HashMap::with_capacity(ids.len());
    for (r, k) in ids.iter().enumerate() {
        if let Some(first) = seen.insert(k.as_str(), r) {
            return Err(Error::data(
                file,
                format!(
                    "column `{id}` ([data.alternatives].id): `{}` is on rows {} and {}; each alternative has one row",
                    crate::error::quote(k),
                    first + 1,
                    r + 1
                ),
            ));
        }
    }
    Ok(ids)
}

/// Tables are equal when their alternatives, availability and the values
/// the attributes read are (the tables as read are not compared).
impl PartialEq for Tables {
    fn eq(&self, other: &Self) -> bool {
        self.ids == other.ids
            && self.available == other.available
            && self.columns == other.columns
            && self.sources == other.sources
            && self.sampling_weight == other.sampling_weight
            && self.pairs.as_ref().map(|p| (&p.columns, &p.present))
                == other.pairs.as_ref().map(|p| (&p.columns, &p.present))
    }
}

impl Tables {
    /// Reads the spec's tables: every column of the table of alternatives,
    /// and of the pairs the columns the attributes read there.
    pub fn load(spec: &Spec) -> Result<Tables> {
        let Layout::Tables {
            alternatives,
            pairs,
            ..
        } = &spec.data.layout
        else {
            return Err(Error::spec(&spec.path, "[data]: not layout \"tables\""));
        };
        let pair_names = match pairs {
            Some(p) => load::column_names(&p.file)?,
            None => Vec::new(),
        };
        let names = load::column_names(&alternatives.file)?;
        let (sources, alt_cols, pair_cols) = sources(spec, &pair_names, &names)?;
        let table = read_all(&alternatives.file, &names)?;
        let ids = spec.alternative_names();
        let available = match table.raw_numbers(AVAILABLE) {
            Some(v) if alternatives.id != AVAILABLE => {
                check_finite(&table.file, 0, AVAILABLE, "availability", v, |_| true)?;
                v.iter().map(|x| *x != 0.0).collect()
            }
            _ => vec![true; ids.len()],
        };
        let mut columns = Vec::with_capacity(alt_cols.len());
        for c in &alt_cols {
            let v = table.numeric_column(c, "an attribute's column")?;
            check_finite(&table.file, 0, c, "an attribute's column", v, |j| {
                available[j]
            })?;
            columns.push(v.to_vec());
        }
        let pairs = match pairs {
            Some(p) => Some(Pairs::load(p, &ids, &pair_cols)?),
            None => None,
        };
        let sampling_weight = sampling_weight(spec, &table, &available)?;
        Ok(Tables {
            ids,
            table,
            available,
            columns,
            pairs,
            sources,
            sampling_weight,
        })
    }

    pub fn alternatives(&self) -> usize {
        self.ids.len()
    }
}

/// Every column of a table: numbers as numbers where every cell is one,
/// the rest as text.
fn read_all(file: &Path, names: &[String]) -> Result<Table> {
    load::read(file, names, names)
}

/// Where each attribute's column is: the pairs first, then the alternatives.
/// Returns the sources and the columns to read from each table.
fn sources(
    spec: &Spec,
    pair_names: &[String],
    alt_names: &[String],
) -> Result<(Vec<Origin>, Vec<String>, Vec<String>)> {
    let (mut alt_cols, mut pair_cols): (Vec<String>, Vec<String>) = (Vec::new(), Vec::new());
    let mut out = Vec::with_capacity(spec.attributes.len());
    let at = |cols: &mut Vec<String>, c: &str| match cols.iter().position(|x| x == c) {
        Some(k) => k,
        None => {
            cols.push(c.to_string());
            cols.len() - 1
        }
    };
    for a in &spec.attributes {
        let Some(crate::spec::Source::Column(c)) = a.sources.iter().flatten().next() else {
            return Err(Error::spec(
                &spec.path,
                format!("[[attribute]] {}: layout \"tables\" needs `column`", a.name),
            ));
        };
        if pair_names.contains(c) {
            out.push(Origin::Pairs(at(&mut pair_cols, c)));
        } else if alt_names.contains(c) {
            out.push(Origin::Alternatives(at(&mut alt_cols, c)));
        } else {
            return Err(Error::spec(
                &spec.path,
                format!(
                    "[[attribute]] {}: column `{c}` is in neither the table of pairs nor the table of alternatives ({})",
                    a.name,
                    tables_named(spec)
                ),
            ));
        }
    }
    Ok((out, alt_cols, pair_cols))
}

fn tables_named(spec: &Spec) -> String {
    match &spec.data.layout {
        Layout::Tables {
            alternatives,
            pairs: Some(p),
            ..
        } => format!("{} and {}", p.file_written, alternatives.file_written),
        Layout::Tables { alternatives, .. } => {
            format!("{}; no [data.pairs]", alternatives.file_written)
        }
        _ => String::new(),
    }
}

/// `[sampling]`'s weights (scheme "weighted"): positive for every available alternative.
fn sampling_weight(spec: &Spec, table: &Table, available: &[bool]) -> Result<Option<Vec<f64>>> {
    let Some(Scheme::Weighted(w)) = spec.sampling.as_ref().map(|s| &s.scheme) else {
        return Ok(None);
    };
    let v = table.numeric_column(w, "[sampling].weight")?;
    check_finite(&table.file, 0, w, "[sampling].weight", v, |j| available[j])?;
    if let Some(j) = (0..v.len()).find(|&j| available[j] && v[j] <= 0.0) {
        return Err(Error::data(
            &table.file,
            format!(
                "column `{w}` ([sampling].weight), row {}: {} is not positive; every available alternative needs a chance to be drawn",
                j + 1,
                v[j]
            ),
        ));
    }
    Ok(Some(v.to_vec()))
}
