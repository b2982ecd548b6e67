//! A long file (one row per situation and alternative) into `Observations`:
//! rows grouped by situation, availability, the chosen alternative, attributes
//! per row and the values that must be constant within a situation.

use std::collections::HashMap;

use super::{alt_lookup, declared, groups, weights};
use crate::data::table::{usable, Column, Table};
use crate::data::Observations;
use crate::error::{Error, Result};
use crate::spec::{Source, Spec};

/// A long file's rows grouped by situation, in order of first appearance.
struct Situations {
    /// The situation column's value of each situation.
    keys: Vec<String>,
    /// The rows of each situation.
    members: Vec<Vec<usize>>,
    /// The alternative of each row.
    row_alt: Vec<usize>,
    /// The row of each (situation, alternative), situation-major.
    cell: Vec<Option<usize>>,
}

pub(crate) fn long(
    spec: &Spec,
    table: &Table,
    situation: &str,
    alternative: &str,
    chosen_col: &str,
) -> Result<(Observations, Table)> {
    let nalt = spec.alternatives.len();
    let file = &table.file;
    let sit_keys_row = table.keys(situation, "[data].situation")?;
    let alt_keys = table.keys(alternative, "[data].alternative")?;
    let chosen_v = table.numbers(chosen_col, "[data].chosen")?;
    let sits = group_rows(spec, table, alternative, &sit_keys_row, &alt_keys)?;
    let n = sits.members.len();
    for (r, v) in chosen_v.iter().enumerate() {
        if *v != 0.0 && *v != 1.0 {
            return Err(Error::data(
                file,
                format!(
                    "column `{chosen_col}` ([data].chosen), row {}: {v} is not 0 or 1",
                    table.offset + r + 1
                ),
            ));
        }
    }
    let available = availability(spec, table, &sits)?;
    let chosen = chosen(spec, table, &sits, chosen_v, chosen_col, &available)?;
    let attributes = attributes(spec, table, &sits, &available)?;
    let first: Vec<usize> = sits.members.iter().map(|m| m[0]).collect();
    let characteristics = per_situation(spec, table, &sits, &first)?;
    let (weight, weight_total) = weights(spec, table, &first)?;
    let (group, ngroups) = groups(spec, table, &first)?;
    Ok((
        Observations {
            offset: None,
            tables: None,
            situations: n,
            alternatives: nalt,
            chosen,
            available,
            weight,
            weight_total,
            group,
            groups: ngroups,
            attributes,
            characteristics,
            first_row: first.iter().map(|r| table.offset + r + 1).collect(),
        },
        situation_table(table, &first),
    ))
}

/// Groups the rows by situation; each row's alternative must be declared and
/// appear once per situation.
fn group_rows(
    spec: &Spec,
    table: &Table,
    alternative: &str,
    sit_keys_row: &[String],
    alt_keys: &[String],
) -> Result<Situations> {
    let nalt = spec.alternatives.len();
    let file = &table.file;
    let lookup = alt_lookup(spec);
    let mut index: HashMap<&str, usize> = HashMap::new();
    let mut sits = Situations {
        keys: Vec::new(),
        members: Vec::new(),
        row_alt: Vec::with_capacity(table.nrows),
        cell: Vec::new(),
    };
    for r in 0..table.nrows {
        let j = lookup(&alt_keys[r]).ok_or_else(|| {
            Error::data(
                file,
                format!(
                    "column `{alternative}` ([data].alternative), row {}: `{}` is not a declared alternative or code (declared: {})",
                    table.offset + r + 1,
                    alt_keys[r],
                    declared(spec)
                ),
            )
        })?;
        sits.row_alt.push(j);
        let next = index.len();
        let s = *index.entry(sit_keys_row[r].as_str()).or_insert(next);
        if s == sits.members.len() {
            sits.members.push(Vec::new());
            sits.keys.push(sit_keys_row[r].clone());
            sits.cell.extend(std::iter::repeat_n(None, nalt));
        }
        if let Some(prev) = sits.cell[s * nalt + j] {
            return Err(Error::data(
                file,
                format!(
                    "situation `{}` has two rows for alternative `{}` (rows {} and {})",
                    sit_keys_row[r],
                    spec.alternatives[j].name,
                    table.offset + prev + 1,
                    table.offset + r + 1
                ),
            ));
        }
        sits.cell[s * nalt + j] = Some(r);
        sits.members[s].push(r);
    }
    Ok(sits)
}

/// An alternative is available where it has a row (and its availability
/// column, if any, is not 0 there).
fn availability(spec: &Spec, table: &Table, sits: &Situations) -> Result<Vec<bool>> {
    let nalt = spec.alternatives.len();
    let n = sits.members.len();
    let cell = &sits.cell;
    let mut available = vec![false; n * nalt];
    for s in 0..n {
        for j in 0..nalt {
            available[s * nalt + j] = cell[s * nalt + j].is_some();
        }
    }
    for (j, alt) in spec.alternatives.iter().enumerate() {
        if let Some(c) = &alt.available {
            let role = format!("[alternatives.{}].available", alt.name);
            let v = table.numeric_column(c, &role)?;
            for s in 0..n {
                if let Some(r) = cell[s * nalt + j] {
                    if !usable(v[r]) {
                        return Err(Error::data(
                            &table.file,
                            format!(
                                "column `{c}` ({role}), row {}: missing or not a number",
                                table.offset + r + 1
                            ),
                        ));
                    }
                    available[s * nalt + j] = v[r] != 0.0;
                }
            }
        }
    }
    Ok(available)
}

/// Each situation's chosen alternative: exactly one row chosen, and available.
fn chosen(
    spec: &Spec,
    table: &Table,
    sits: &Situations,
    chosen_v: &[f64],
    chosen_col: &str,
    available: &[bool],
) -> Result<Vec<u32>> {
    let nalt = spec.alternatives.len();
    let file = &table.file;
    let n = sits.members.len();
    let mut chosen = Vec::with_capacity(n);
    for s in 0..n {
        let picked: Vec<usize> = sits.members[s]
            .iter()
            .copied()
            .filter(|&r| chosen_v[r] == 1.0)
            .collect();
        if picked.len() != 1 {
            let rows = sits.members[s]
                .iter()
                .map(|r| (table.offset + r + 1).to_string())
                .collect::<Vec<_>>()
                .join(", ");
            return Err(Error::data(
                file,
                format!(
                    "situation `{}` has {} chosen rows (column `{chosen_col}`, rows {rows}); exactly one must be 1",
                    sits.keys[s],
                    picked.len()
                ),
            ));
        }
        let j = sits.row_alt[picked[0]];
        if !available[s * nalt + j] {
            return Err(Error::data(
                file,
                format!(
                    "situation `{}`, row {}: the chosen alternative `{}` is marked unavailable",
                    sits.keys[s],
                    table.offset + picked[0] + 1,
                    spec.alternatives[j].name
                ),
            ));
        }
        chosen.push(j as u32);
    }
    Ok(chosen)
}

/// The attributes per situation and alternative, read from each available row.
fn attributes(
    spec: &Spec,
    table: &Table,
    sits: &Situations,
    available: &[bool],
) -> Result<Vec<Vec<f64>>> {
    let nalt = spec.alternatives.len();
    let n = sits.members.len();
    let mut attributes = Vec::with_capacity(spec.attributes.len());
    for a in &spec.attributes {
        let mut x = vec![0.0; n * nalt];
        for (j, src) in a.sources.iter().enumerate() {
            let Some(src) = src else { continue };
            for s in 0..n {
                let Some(r) = sits.cell[s * nalt + j] else {
                    continue;
                };
                if !available[s * nalt + j] {
                    continue;
                }
                x[s * nalt + j] = match src {
                    Source::Value(v) => *v,
                    Source::Column(c) => {
                        let role = format!("attribute {}", a.name);
                        let v = table.numeric_column(c, &role)?[r];
                        if !usable(v) {
                            return Err(Error::data(
                                &table.file,
                                format!("column `{c}` ({role}), row {}: missing, non-numeric, infinite or too large", table.offset + r + 1),
                            ));
                        }
                        v
                    }
                };
            }
        }
        attributes.push(x);
    }
    Ok(attributes)
}

/// The characteristics (from each situation's first row), after checking that
/// they, the weight and the group are constant within each situation.
fn per_situation(
    spec: &Spec,
    table: &Table,
    sits: &Situations,
    first: &[usize],
) -> Result<Vec<Vec<f64>>> {
    let (members, sit_keys) = (&sits.members, &sits.keys);
    let mut characteristics = Vec::with_capacity(spec.characteristics.len());
    for (column, role) in super::situation_columns(spec) {
        let v = table.numbers(&column, &role)?;
        let what = format!("column `{column}` ({role})");
        constant_within(table, v, members, sit_keys, &what)?;
        characteristics.push(first.iter().map(|&r| v[r]).collect());
    }
    if let Some(w) = &spec.data.weight {
        let v = table.numbers(w, "[data].weight")?;
        let what = format!("column `{w}` ([data].weight)");
        constant_within(table, v, members, sit_keys, &what)?;
    }
    if let Some(g) = &spec.data.group {
        let keys = table.keys(g, "[data].group")?;
        for (s, rows) in members.iter().enumerate() {
            if let Some(&r) = rows.iter().find(|&&r| keys[r] != keys[rows[0]]) {
                return Err(Error::data(
                    &table.file,
                    format!(
                        "column `{g}` ([data].group) varies within situation `{}` (rows {} and {})",
                        sit_keys[s],
                        table.offset + rows[0] + 1,
                        table.offset + r + 1
                    ),
                ));
            }
        }
    }
    Ok(characteristics)
}

/// The situation-level table: each column's value on the situation's first row.
fn situation_table(table: &Table, first: &[usize]) -> Table {
    let mut st = Table::new(&table.file, first.len());
    for name in table.names.clone() {
        match table.column(&name) {
            Some(Column::Num(v)) => {
                st.insert(&name, Column::Num(first.iter().map(|&r| v[r]).collect()))
            }
            Some(Column::Text(v)) => st.insert(
                &name,
                Column::Text(first.iter().map(|&r| v[r].clone()).collect()),
            ),
            None => {}
        }
    }
    st
}

/// Errors when a per-situation value differs between a situation's rows.
fn constant_within(
    table: &Table,
    values: &[f64],
    members: &[Vec<usize>],
    sit_keys: &[String],
    what: &str,
) -> Result<()> {
    for (s, rows) in members.iter().enumerate() {
        let first = values[rows[0]];
        for &r in &rows[1..] {
            let v = values[r];
            if v != first && !(v.is_nan() && first.is_nan()) {
                return Err(Error::data(
                    &table.file,
                    format!(
                        "{what} varies within situation `{}` (rows {} and {}: {} vs {}); it must be constant within a situation",
                        sit_keys[s],
                        table.offset + rows[0] + 1,
                        table.offset + r + 1,
                        first,
                        v
                    ),
                ));
            }
        }
    }
    Ok(())
}
