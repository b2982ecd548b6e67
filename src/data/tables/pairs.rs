//! The table of pairs: one row per (`from` key, alternative id), held as
//! dense arrays by key and alternative; a pair without a row is unavailable.

use std::collections::HashMap;

use super::AVAILABLE;
use crate::data::load;
use crate::data::table::check_finite;
use crate::error::{quote, Error, Result};
use crate::spec::PairsTable;

/// Values by key (a situation's `from` value) and alternative, `[o * J + j]`.
#[derive(Clone, Debug)]
pub struct Pairs {
    /// The keys in the order first seen.
    pub keys: Vec<String>,
    pub index: HashMap<String, u32>,
    /// The columns the attributes read, `[o * J + j]` (0 where no row).
    pub columns: Vec<Vec<f64>>,
    /// Whether the pair has a row whose `available` is not 0.
    pub present: Vec<bool>,
    pub alternatives: usize,
}

impl Pairs {
    /// Reads the table: `ids` are the alternatives' ids, `columns` those the
    /// attributes read here.
    pub fn load(spec: &PairsTable, ids: &[String], columns: &[String]) -> Result<Pairs> {
        let file = &spec.file;
        let names = load::column_names(file)?;
        let mut numeric = columns.to_vec();
        let marked = names.iter().any(|n| n == AVAILABLE) && spec.id != AVAILABLE;
        if marked {
            numeric.push(AVAILABLE.into());
        }
        let table = load::read(file, &numeric, &[spec.from.clone(), spec.id.clone()])?;
        let from = table.keys(&spec.from, "[data.pairs].from")?;
        let alt = table.keys(&spec.id, "[data.pairs].id")?;
        let (keys, index, row_of) = rows_by_pair(spec, ids, (&from, &alt))?;
        let nj = ids.len();
        let open = match marked {
            true => Some(table.numbers(AVAILABLE, "availability")?),
            false => None,
        };
        let present: Vec<bool> = row_of
            .iter()
            .map(|&r| r != u32::MAX && open.is_none_or(|v| v[r as usize] != 0.0))
            .collect();
        let mut out = Vec::with_capacity(columns.len());
        for c in columns {
            let v = table.numeric_column(c, "an attribute's column")?;
            let usable = |r: usize| open.is_none_or(|o| o[r] != 0.0);
            check_finite(file, 0, c, "an attribute's column", v, usable)?;
            let dense: Vec<f64> = row_of
                .iter()
                .map(|&r| if r == u32::MAX { 0.0 } else { v[r as usize] })
                .collect();
            out.push(dense);
        }
        Ok(Pairs {
            keys,
            index,
            columns: out,
            present,
            alternatives: nj,
        })
    }
}

/// The keys in the order first seen, their index, and each (key, alternative)
/// cell's row (`u32::MAX` where none); an unknown id or a pair written twice
/// is refused naming its rows.
#[allow(clippy::type_complexity)]
fn rows_by_pair(
    spec: &PairsTable,
    ids: &[String],
    (from, alt): (&[String], &[String]),
) -> Result<(Vec<String>, HashMap<String, u32>, Vec<u32>)> {
    let file = &spec.file;
    let j_of: HashMap<&str, u32> = ids
        .iter()
        .enumerate()
        .map(|(j, k)| (k.as_str(), j as u32))
        .collect();
    let nj = ids.len();
    let mut index: HashMap<String, u32> = HashMap::new();
    let mut keys = Vec::new();
    let mut row_of: Vec<u32> = Vec::new();
    for (r, (f, a)) in from.iter().zip(alt).enumerate() {
        let o = match index.get(f.as_str()) {
            Some(&o) => o as usize,
            None => {
                index.insert(f.clone(), keys.len() as u32);
                keys.push(f.clone());
                row_of.resize(keys.len() * nj, u32::MAX);
                keys.len() - 1
            }
        };
        let Some(&j) = j_of.get(a.as_str()) else {
            return Err(Error::data(
                    file,
                    format!(
                        "column `{}` ([data.pairs].id), row {}: `{}` is not an id of the table of alternatives",
                        spec.id,
                        r + 1,
                        quote(a)
                    ),
                ));
        };
        let cell = o * nj + j as usize;
        if row_of[cell] != u32::MAX {
            return Err(Error::data(
                    file,
                    format!(
                        "rows {} and {} are both the pair `{}` -> `{}` (columns `{}` and `{}`); each pair has one row",
                        row_of[cell] + 1,
                        r + 1,
                        quote(f),
                        quote(a),
                        spec.from,
                        spec.id
                    ),
                ));
        }
        row_of[cell] = r as u32;
    }
    Ok((keys, index, row_of))
}
