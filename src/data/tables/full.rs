//! The situations of a file in layout "tables" as full-set `Observations`:
//! every alternative of the table, available where its `available` and its
//! pair (if there is a table of pairs) say so.

use std::collections::HashMap;

use super::{Origin, Tables};
use crate::data::reshape::{groups, situation_columns, weights};
use crate::data::table::Table;
use crate::data::Observations;
use crate::error::{quote, Error, Result};
use crate::spec::{Layout, Spec};

/// Per situation: the chosen alternative and the row of the pairs it reads.
pub(crate) struct Keys {
    pub chosen: Vec<u32>,
    /// Index into `Pairs::keys` (0 without a table of pairs).
    pub from: Vec<u32>,
}

/// The chosen alternatives and the pair keys of the situations in `table`,
/// refusing unknown ids, unknown keys and unavailable choices by row.
pub(crate) fn keys(spec: &Spec, tables: &Tables, table: &Table) -> Result<Keys> {
    let Layout::Tables { choice, pairs, .. } = &spec.data.layout else {
        return Err(Error::spec(&spec.path, "[data]: not layout \"tables\""));
    };
    let row = |i: usize| table.offset + i + 1;
    let ids = table.keys(choice, "[data].choice")?;
    let j_of: HashMap<&str, u32> = tables
        .ids
        .iter()
        .enumerate()
        .map(|(j, k)| (k.as_str(), j as u32))
        .collect();
    let mut chosen = Vec::with_capacity(ids.len());
    for (i, k) in ids.iter().enumerate() {
        let j = *j_of.get(k.as_str()).ok_or_else(|| {
            Error::data(
                &table.file,
                format!(
                    "column `{choice}` ([data].choice), row {}: `{}` is not an id of the table of alternatives",
                    row(i),
                    quote(k)
                ),
            )
        })?;
        chosen.push(j);
    }
    let from = match (pairs, &tables.pairs) {
        (Some(p), Some(pairs)) => {
            let keys = table.keys(&p.from, "[data.pairs].from")?;
            let mut out = Vec::with_capacity(keys.len());
            for (i, k) in keys.iter().enumerate() {
                out.push(*pairs.index.get(k.as_str()).ok_or_else(|| {
                    Error::data(
                        &table.file,
                        format!(
                            "column `{}` ([data.pairs].from), row {}: `{}` has no rows in the table of pairs ({})",
                            p.from,
                            row(i),
                            quote(k),
                            p.file_written
                        ),
                    )
                })?);
            }
            out
        }
        _ => vec![0; chosen.len()],
    };
    for i in 0..chosen.len() {
        let j = chosen[i] as usize;
        if !tables.open(from[i] as usize, j) {
            return Err(Error::data(
                &table.file,
                format!(
                    "column `{choice}` ([data].choice), row {}: the chosen alternative `{}` is unavailable there ({})",
                    row(i),
                    quote(&tables.ids[j]),
                    tables.why_closed(from[i] as usize, j)
                ),
            ));
        }
    }
    Ok(Keys { chosen, from })
}

impl Tables {
    /// Whether alternative `j` is available from pair key `o`.
    #[inline]
    pub fn open(&self, o: usize, j: usize) -> bool {
        self.available[j]
            && self
                .pairs
                .as_ref()
                .is_none_or(|p| p.present[o * p.alternatives + j])
    }

    fn why_closed(&self, o: usize, j: usize) -> String {
        if !self.available[j] {
            return format!(
                "its `{}` is 0 in the table of alternatives",
                super::AVAILABLE
            );
        }
        match &self.pairs {
            Some(p) => format!(
                "the table of pairs has no row for `{}` -> `{}`, or its `{}` is 0",
                quote(&p.keys[o]),
                quote(&self.ids[j]),
                super::AVAILABLE
            ),
            None => String::new(),
        }
    }

    /// Attribute `a`'s value for pair key `o` and alternative `j`, before `times`.
    #[inline]
    pub fn value(&self, a: usize, o: usize, j: usize) -> f64 {
        match self.sources[a] {
            Origin::Alternatives(c) => self.columns[c][j],
            Origin::Pairs(c) => match &self.pairs {
                Some(p) => p.columns[c][o * p.alternatives + j],
                None => 0.0,
            },
        }
    }
}

/// Each attribute's `times` column over the situations of `table` (None: 1).
pub(crate) fn multipliers<'t>(spec: &Spec, table: &'t Table) -> Result<Vec<Option<&'t [f64]>>> {
    let mut out = Vec::with_capacity(spec.attributes.len());
    for a in &spec.attributes {
        out.push(match &a.times {
            Some(c) => {
                let role = format!("[[attribute]] {}: times", a.name);
                Some(table.numbers(c, &role)?)
            }
            None => None,
        });
    }
    Ok(out)
}

/// The full-set `Observations` of the situations in `table`.
pub(crate) fn observations(spec: &Spec, tables: &Tables, table: &Table) -> Result<Observations> {
    let n = table.nrows;
    let nj = tables.alternatives();
    let k = keys(spec, tables, table)?;
    let mut available = vec![false; n * nj];
    for i in 0..n {
        let o = k.from[i] as usize;
        for (j, cell) in available[i * nj..(i + 1) * nj].iter_mut().enumerate() {
            *cell = tables.open(o, j);
        }
    }
    let times = multipliers(spec, table)?;
    let mut attributes = Vec::with_capacity(spec.attributes.len());
    for (a, attr) in spec.attributes.iter().enumerate() {
        let mut x = vec![0.0; n * nj];
        for i in 0..n {
            let o = k.from[i] as usize;
            let m = times[a].map_or(1.0, |t| t[i]);
            for (j, entered) in attr.sources.iter().enumerate() {
                if entered.is_some() && available[i * nj + j] {
                    x[i * nj + j] = tables.value(a, o, j) * m;
                }
            }
        }
        attributes.push(x);
    }
    let arrays = Arrays {
        alternatives: nj,
        chosen: k.chosen,
        available,
        attributes,
        offset: None,
    };
    assemble(spec, table, arrays)
}

/// The per-slot arrays of some situations' observations (full or sampled sets).
pub(crate) struct Arrays {
    pub alternatives: usize,
    pub chosen: Vec<u32>,
    pub available: Vec<bool>,
    pub attributes: Vec<Vec<f64>>,
    pub offset: Option<Vec<f64>>,
}

/// `Observations` of the situations in `table` from their arrays, with the
/// situation-level columns (characteristics, weights, groups) read here.
pub(crate) fn assemble(spec: &Spec, table: &Table, a: Arrays) -> Result<Observations> {
    let n = table.nrows;
    let mut characteristics = Vec::new();
    for (column, role) in situation_columns(spec) {
        characteristics.push(table.numbers(&column, &role)?.to_vec());
    }
    let rows: Vec<usize> = (0..n).collect();
    let (weight, weight_total) = weights(spec, table, &rows)?;
    let (group, groups) = groups(spec, table, &rows)?;
    Ok(Observations {
        situations: n,
        alternatives: a.alternatives,
        chosen: a.chosen,
        available: a.available,
        weight,
        weight_total,
        group,
        groups,
        attributes: a.attributes,
        characteristics,
        first_row: rows.iter().map(|r| table.offset + r + 1).collect(),
        offset: a.offset,
        tables: None,
    })
}

/// Stand-ins for the choices of a population file without them (a forecast
/// reads none): each situation gets one of its available alternatives, in
/// turn, so that no check that counts choices is failed by them.
pub(crate) fn stand_in(spec: &Spec, tables: &Tables, table: &mut Table) -> Result<()> {
    let Layout::Tables { choice, pairs, .. } = &spec.data.layout else {
        return Ok(());
    };
    let from: Vec<usize> = match (pairs, &tables.pairs) {
        (Some(p), Some(t)) => {
            let keys = table.keys(&p.from, "[data.pairs].from")?;
            let mut out = Vec::with_capacity(keys.len());
            for (i, k) in keys.iter().enumerate() {
                match t.index.get(k.as_str()) {
                    Some(&o) => out.push(o as usize),
                    None => {
                        return Err(Error::data(
                            &table.file,
                            format!(
                                "column `{}` ([data.pairs].from), row {}: `{}` has no rows in the table of pairs ({})",
                                p.from,
                                table.offset + i + 1,
                                quote(k),
                                p.file_written
                            ),
                        ))
                    }
                }
            }
            out
        }
        _ => vec![0; table.nrows],
    };
    let nj = tables.alternatives();
    let mut names = Vec::with_capacity(table.nrows);
    for (i, &o) in from.iter().enumerate() {
        let count = (0..nj).filter(|&j| tables.open(o, j)).count();
        if count == 0 {
            return Err(Error::data(
                &table.file,
                format!(
                    "row {}: no alternative is available there, so there is no choice to forecast",
                    table.offset + i + 1
                ),
            ));
        }
        let k = (table.offset + i) % count;
        let j = (0..nj).filter(|&j| tables.open(o, j)).nth(k).unwrap_or(0);
        names.push(Some(tables.ids[j].clone()));
    }
    table.insert(choice, crate::data::table::Column::Text(names));
    Ok(())
}
