//! Data: loads the file a spec names, evaluates `[derived]` columns, checks
//! values, and reshapes wide or long layouts into one situation-level form,
//! `Observations`, that the design room turns into model arrays.

mod csvcheck;
pub mod load;
mod placeholder;
mod reshape;
pub mod stream;
pub mod table;
pub mod tables;
pub mod write;

use std::sync::Arc;

pub use table::{Column, Table};
pub use tables::Tables;

use crate::error::{Error, Result};
use crate::spec::{Layout, Source, Spec};

/// Choice situations in one canonical form, whatever the file's layout.
/// Arrays indexed `[i * alternatives + j]` are situation-major.
#[derive(Clone, Debug, PartialEq)]
pub struct Observations {
    pub situations: usize,
    pub alternatives: usize,
    /// Index of the chosen alternative in each situation.
    pub chosen: Vec<u32>,
    pub available: Vec<bool>,
    /// Situation weights rescaled to average 1 (all 1 without `[data].weight`).
    pub weight: Vec<f64>,
    /// Sum of the weights as written in the file (demand units for volumes).
    pub weight_total: f64,
    /// Decision-maker index of each situation, when `[data].group` is set.
    pub group: Option<Vec<u32>>,
    pub groups: usize,
    /// One array per spec attribute, `[i * J + j]`; 0 where absent or unavailable.
    pub attributes: Vec<Vec<f64>>,
    /// One array per spec characteristic, one value per situation, then
    /// one per family column (`Spec::family_columns`).
    pub characteristics: Vec<Vec<f64>>,
    /// The file row (from 1) where each situation starts.
    pub first_row: Vec<usize>,
    /// Added to each utility, `[i * J + j]`: the correction of sampled
    /// choice sets drawn with unequal probabilities (`tables::sample`).
    pub offset: Option<Vec<f64>>,
    /// Layout "tables": the tables the full sets were built from (the
    /// alternatives are theirs, in order).
    pub tables: Option<Arc<Tables>>,
}

/// Observations plus the situation-level columns that scenarios and
/// segment reports read (`where` filters, `--by`).
#[derive(Clone, Debug)]
pub struct Dataset {
    pub obs: Observations,
    pub table: Table,
}

/// What else to load besides what the spec needs.
#[derive(Clone, Debug, Default)]
pub struct Extra {
    pub numeric: Vec<String>,
    pub text: Vec<String>,
}

/// Loads the spec's data file.
pub fn load(spec: &Spec, extra: &Extra) -> Result<Dataset> {
    let tables = tables_of(spec)?;
    let (numeric, text) = needed_columns(spec, extra);
    let table = load::read(&spec.data.file, &numeric, &text)?;
    from_table(spec, table, true, tables)
}

/// The data of a fit that no analysis follows (`fit --no-analysis`): as
/// `load`, except that a spec estimated on sampled sets whose full sets
/// would pass `tables::lean::LEAN_CELLS` gets its sampled sets drawn
/// straight from the tables (the `Dataset`'s observations are then those
/// sets: one slot per sampled alternative, no full sets).
pub fn load_for_fit(spec: &Spec, extra: &Extra) -> Result<Dataset> {
    let (Some(s), Some(tables)) = (&spec.sampling, tables_of(spec)?) else {
        return load(spec, extra);
    };
    let (numeric, text) = needed_columns(spec, extra);
    let mut table = load::read(&spec.data.file, &numeric, &text)?;
    if table.nrows.saturating_mul(tables.alternatives()) <= tables::lean::LEAN_CELLS {
        return from_table(spec, table, true, Some(tables));
    }
    add_derived(spec, &mut table)?;
    let obs = tables::lean::observations(spec, &tables, &table, s)?;
    Ok(Dataset { obs, table })
}

/// Layout "tables": the spec's tables, loaded once for all the situations.
pub(crate) fn tables_of(spec: &Spec) -> Result<Option<Arc<Tables>>> {
    Ok(match spec.data.layout {
        Layout::Tables { .. } => Some(Arc::new(Tables::load(spec)?)),
        _ => None,
    })
}

/// Loads another file with the same columns (e.g. `simulate --data`); the
/// file may lack the observed choices (see `population_columns`).
pub fn load_file(spec: &Spec, file: &std::path::Path, extra: &Extra) -> Result<Dataset> {
    let tables = tables_of(spec)?;
    let (numeric, text, choices) = population_columns(spec, file, extra)?;
    let table = load::read(file, &numeric, &text)?;
    from_table(spec, table, choices, tables)
}

/// The columns to read of a population file (one to forecast over, not to
/// fit): those of `needed_columns`, less the observed choices' column
/// (`[data].choice`, or `[data].chosen` in the long layout) when the file
/// has none, for a forecast reads no observed choice. The third value says
/// whether the file has them.
pub(crate) fn population_columns(
    spec: &Spec,
    file: &std::path::Path,
    extra: &Extra,
) -> Result<(Vec<String>, Vec<String>, bool)> {
    let column = match &spec.data.layout {
        Layout::Wide { choice } | Layout::Tables { choice, .. } => choice,
        Layout::Long { chosen, .. } => chosen,
    };
    let choices = spec.derived_names().contains(&column.as_str())
        || load::column_names(file)?.contains(column);
    let (numeric, text) = columns(spec, extra, choices);
    Ok((numeric, text, choices))
}

/// The `Dataset` of the needed columns of a file (or of a chunk of its rows):
/// `[derived]` columns added, then reshaped. Without observed `choices`,
/// placeholders stand in for them (`placeholder::choices`).
fn from_table(
    spec: &Spec,
    mut table: Table,
    choices: bool,
    tables: Option<Arc<Tables>>,
) -> Result<Dataset> {
    add_derived(spec, &mut table)?;
    if let Some(t) = &tables {
        if !choices {
            tables::stand_in(spec, t, &mut table)?;
        }
        let mut obs = tables::observations(spec, t, &table)?;
        obs.tables = Some(t.clone());
        return Ok(Dataset { obs, table });
    }
    if !choices {
        placeholder::choices(spec, &mut table)?;
    }
    let (obs, situation_table) = match &spec.data.layout {
        Layout::Wide { choice } => {
            let obs = reshape::wide(spec, &table, choice)?;
            (obs, table)
        }
        Layout::Long {
            situation,
            alternative,
            chosen,
        } => reshape::long(spec, &table, situation, alternative, chosen)?,
        Layout::Tables { .. } => {
            return Err(Error::spec(
                &spec.path,
                "[data]: layout \"tables\" needs its tables loaded",
            ))
        }
    };
    Ok(Dataset {
        obs,
        table: situation_table,
    })
}

/// File columns the spec reads: (numeric, text). Derived names are excluded;
/// the columns their expressions read are included.
pub fn needed_columns(spec: &Spec, extra: &Extra) -> (Vec<String>, Vec<String>) {
    columns(spec, extra, true)
}

/// `needed_columns`, with or without the observed choices' column (it is
/// still read when something else needs it).
fn columns(spec: &Spec, extra: &Extra, choices: bool) -> (Vec<String>, Vec<String>) {
    let derived = spec.derived_names();
    let mut numeric: Vec<String> = Vec::new();
    let mut text: Vec<String> = Vec::new();
    let add = |list: &mut Vec<String>, c: &str| {
        if !derived.contains(&c) && !list.iter().any(|x| x == c) {
            list.push(c.to_string());
        }
    };
    match &spec.data.layout {
        Layout::Wide { choice } => {
            if choices {
                add(&mut text, choice);
            }
        }
        Layout::Long {
            situation,
            alternative,
            chosen,
        } => {
            add(&mut text, situation);
            add(&mut text, alternative);
            if choices {
                add(&mut numeric, chosen);
            }
        }
        Layout::Tables { choice, pairs, .. } => {
            if choices {
                add(&mut text, choice);
            }
            if let Some(p) = pairs {
                add(&mut text, &p.from);
            }
        }
    }
    let tables = matches!(spec.data.layout, Layout::Tables { .. });
    if let Some(g) = &spec.data.group {
        add(&mut text, g);
    }
    for t in &extra.text {
        add(&mut text, t);
    }
    if let Some(w) = &spec.data.weight {
        add(&mut numeric, w);
    }
    for a in &spec.alternatives {
        if let Some(c) = &a.available {
            add(&mut numeric, c);
        }
    }
    for a in &spec.attributes {
        // In layout "tables" the values are in the tables; `times` is here.
        if let Some(t) = &a.times {
            add(&mut numeric, t);
        }
        for s in a.sources.iter().flatten() {
            if let (Source::Column(c), false) = (s, tables) {
                add(&mut numeric, c);
            }
        }
    }
    for c in &spec.characteristics {
        add(&mut numeric, &c.column);
    }
    for (c, _) in &spec.family_columns {
        add(&mut numeric, c);
    }
    if let Some(crate::spec::Holdout::Column(c)) = &spec.holdout {
        add(&mut numeric, c);
    }
    for (_, e) in &spec.derived {
        for c in e.columns() {
            add(&mut numeric, &c);
        }
    }
    for c in &extra.numeric {
        add(&mut numeric, c);
    }
    (numeric, text)
}

/// The first cell of column `c` that holds text rather than a number (a
/// missing-value marker such as `NA` aside): its row (from 0) and text.
fn first_text(table: &Table, c: &str) -> Option<(usize, String)> {
    match table.column(c)? {
        Column::Text(v) => v
            .iter()
            .enumerate()
            .find_map(|(i, x)| {
                let x = x.as_deref()?;
                x.trim().parse::<f64>().is_err().then(|| (i, x.to_string()))
            })
            .or(Some((0, String::new()))),
        Column::Num(_) => table.text_cells(c).first().cloned(),
    }
}

/// Evaluates `[derived]` columns in order; each may use earlier ones.
fn add_derived(spec: &Spec, table: &mut Table) -> Result<()> {
    for (name, e) in &spec.derived {
        let n = table.nrows;
        for c in e.columns() {
            if let Some((i, example)) = first_text(table, &c) {
                let row = table.offset + i + 1;
                let example = crate::error::quote(&example);
                return Err(Error::spec(
                    &spec.path,
                    format!(
                        "[derived].{name} reads column `{c}`, which holds text (`{example}` at row {row} of {}), not numbers",
                        table.file.display()
                    ),
                ));
            }
        }
        let values = {
            let lookup = |c: &str| table.raw_numbers(c);
            e.eval(&lookup, n)
                .map_err(|m| Error::spec(&spec.path, format!("[derived].{name}: {m}")))?
        };
        table.insert(name, Column::Num(values));
    }
    Ok(())
}

impl Observations {
    /// In how many situations alternative `j` is available.
    pub fn available_count(&self, j: usize) -> usize {
        let m = self.alternatives;
        (0..self.situations)
            .filter(|&i| self.available[i * m + j])
            .count()
    }

    /// How many situations chose alternative `j`.
    pub fn chosen_count(&self, j: usize) -> usize {
        self.chosen.iter().filter(|&&c| c as usize == j).count()
    }

    /// The situations where `keep[i]` is true, with groups renumbered.
    pub fn subset(&self, keep: &[bool]) -> Observations {
        let j = self.alternatives;
        let idx: Vec<usize> = (0..self.situations).filter(|&i| keep[i]).collect();
        let mut group_map = std::collections::HashMap::new();
        let group = self.group.as_ref().map(|g| {
            idx.iter()
                .map(|&i| {
                    let n = group_map.len() as u32;
                    *group_map.entry(g[i]).or_insert(n)
                })
                .collect::<Vec<u32>>()
        });
        let raw_per_unit = self.weight_total / self.weight.iter().sum::<f64>().max(1e-300);
        let weight: Vec<f64> = idx.iter().map(|&i| self.weight[i]).collect();
        let weight_total = weight.iter().sum::<f64>() * raw_per_unit;
        Observations {
            offset: self.offset.as_ref().map(|o| {
                idx.iter()
                    .flat_map(|&i| o[i * j..(i + 1) * j].to_vec())
                    .collect()
            }),
            tables: self.tables.clone(),
            situations: idx.len(),
            alternatives: j,
            chosen: idx.iter().map(|&i| self.chosen[i]).collect(),
            available: idx
                .iter()
                .flat_map(|&i| self.available[i * j..(i + 1) * j].to_vec())
                .collect(),
            weight,
            weight_total,
            groups: group_map.len(),
            group,
            attributes: self
                .attributes
                .iter()
                .map(|x| {
                    idx.iter()
                        .flat_map(|&i| x[i * j..(i + 1) * j].to_vec())
                        .collect()
                })
                .collect(),
            characteristics: self
                .characteristics
                .iter()
                .map(|z| idx.iter().map(|&i| z[i]).collect())
                .collect(),
            first_row: idx.iter().map(|&i| self.first_row[i]).collect(),
        }
    }
}
