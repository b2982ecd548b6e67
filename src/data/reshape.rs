//! Wide (one row per situation) and long (one row per situation and
//! alternative) files into `Observations`, with row-level error messages.

use std::collections::HashMap;

use super::table::{check_finite, Column, Table};
use super::Observations;
use crate::error::{Error, Result};
use crate::spec::{Source, Spec};

mod long;
pub(super) use long::long;

/// Maps a choice or alternative value to an alternative index: by name first, then by code.
pub(super) fn alt_lookup(spec: &Spec) -> impl Fn(&str) -> Option<usize> + '_ {
    move |key: &str| {
        if let Some(j) = spec.alternative_index(key) {
            return Some(j);
        }
        let code: Option<i64> = key.trim().parse::<i64>().ok().or_else(|| {
            key.trim()
                .parse::<f64>()
                .ok()
                .filter(|x| x.fract() == 0.0)
                .map(|x| x as i64)
        });
        code.and_then(|c| spec.alternatives.iter().position(|a| a.code == Some(c)))
    }
}

fn declared(spec: &Spec) -> String {
    spec.alternatives
        .iter()
        .map(|a| match a.code {
            Some(c) => format!("{} (code {c})", a.name),
            None => a.name.clone(),
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// Weights of the situations, rescaled to average 1, and their total as written.
pub(crate) fn weights(spec: &Spec, table: &Table, rows: &[usize]) -> Result<(Vec<f64>, f64)> {
    let raw = raw_weights(spec, table, rows)?;
    let total = match &spec.data.weight {
        Some(w) => {
            let v = table.numbers(w, "[data].weight")?;
            rows.iter().map(|&r| v[r]).sum()
        }
        None => rows.len() as f64,
    };
    Ok((raw, total))
}

fn raw_weights(spec: &Spec, table: &Table, rows: &[usize]) -> Result<Vec<f64>> {
    match &spec.data.weight {
        None => Ok(vec![1.0; rows.len()]),
        Some(w) => {
            let v = table.numbers(w, "[data].weight")?;
            let out: Vec<f64> = rows.iter().map(|&r| v[r]).collect();
            if let Some(k) = out.iter().position(|x| *x <= 0.0) {
                return Err(Error::data(
                    &table.file,
                    format!(
                        "column `{w}` ([data].weight): weights must be positive; row {} has {}",
                        table.offset + rows[k] + 1,
                        out[k]
                    ),
                ));
            }
            // Rescaled to average 1: weights set relative importance, not the sample size.
            let mean = out.iter().sum::<f64>() / out.len().max(1) as f64;
            Ok(out.into_iter().map(|x| x / mean).collect())
        }
    }
}

pub(crate) fn groups(
    spec: &Spec,
    table: &Table,
    rows: &[usize],
) -> Result<(Option<Vec<u32>>, usize)> {
    let Some(g) = &spec.data.group else {
        return Ok((None, 0));
    };
    let keys = table.keys(g, "[data].group")?;
    let mut index: HashMap<&str, u32> = HashMap::new();
    let mut out = Vec::with_capacity(rows.len());
    for &r in rows {
        let n = index.len() as u32;
        out.push(*index.entry(keys[r].as_str()).or_insert(n));
    }
    same_within(spec, table, (&keys, g), rows, (&out, index.len()))?;
    Ok((Some(out), index.len()))
}

/// Refuses a family column (`Spec::family_columns`: they describe the
/// decision maker) that varies within a decision maker, naming them and two
/// of their rows.
fn same_within(
    spec: &Spec,
    table: &Table,
    (keys, g): (&[String], &str),
    rows: &[usize],
    (unit_of, units): (&[u32], usize),
) -> Result<()> {
    for (column, role) in &spec.family_columns {
        let v = table.numbers(column, role)?;
        let mut first = vec![usize::MAX; units];
        for (&r, &u) in rows.iter().zip(unit_of) {
            let f = &mut first[u as usize];
            if *f == usize::MAX {
                *f = r;
            } else if v[r] != v[*f] {
                return Err(Error::data(
                    &table.file,
                    format!(
                        "column `{column}` ({role}) varies within decision maker `{}` ([data].group `{g}`): rows {} and {} hold {} and {}; it describes the decision maker, so it must be the same in all of their situations",
                        keys[r],
                        table.offset + *f + 1,
                        table.offset + r + 1,
                        v[*f],
                        v[r]
                    ),
                ));
            }
        }
    }
    Ok(())
}

/// The chosen alternative of each row of a wide file. The few distinct values of
/// the choice column are looked up once each (a file has millions of rows but
/// a handful of alternatives); rows are read in place rather than copied.
fn wide_choices(spec: &Spec, table: &Table, choice: &str) -> Result<Vec<u32>> {
    let lookup = alt_lookup(spec);
    let unknown = |i: usize, k: &str| {
        Error::data(
            &table.file,
            format!(
                "column `{choice}` ([data].choice), row {}: `{k}` is not a declared alternative or code (declared: {})",
                table.offset + i + 1,
                declared(spec)
            ),
        )
    };
    let mut chosen = Vec::with_capacity(table.nrows);
    match table.column(choice) {
        Some(Column::Text(v)) if v.iter().all(|k| k.is_some()) => {
            let mut seen: Vec<(&str, u32)> = Vec::new();
            for (i, k) in v.iter().enumerate() {
                let k = k.as_deref().unwrap_or_default();
                let j = match seen.iter().find(|s| s.0 == k) {
                    Some(s) => s.1,
                    None => {
                        let j = lookup(k).ok_or_else(|| unknown(i, k))? as u32;
                        if seen.len() < 64 {
                            seen.push((k, j));
                        }
                        j
                    }
                };
                chosen.push(j);
            }
        }
        Some(Column::Num(v)) if v.iter().all(|x| !x.is_nan()) => {
            let mut seen: Vec<(u64, u32)> = Vec::new();
            for (i, x) in v.iter().enumerate() {
                let bits = x.to_bits();
                let j = match seen.iter().find(|s| s.0 == bits) {
                    Some(s) => s.1,
                    None => {
                        let k = super::table::number_key(*x);
                        let j = lookup(&k).ok_or_else(|| unknown(i, &k))? as u32;
                        if seen.len() < 64 {
                            seen.push((bits, j));
                        }
                        j
                    }
                };
                chosen.push(j);
            }
        }
        // Missing values or no such column: the keys' own errors.
        _ => {
            for (i, k) in table.keys(choice, "[data].choice")?.iter().enumerate() {
                chosen.push(lookup(k).ok_or_else(|| unknown(i, k))? as u32);
            }
        }
    }
    Ok(chosen)
}

pub(super) fn wide(spec: &Spec, table: &Table, choice: &str) -> Result<Observations> {
    let n = table.nrows;
    let nalt = spec.alternatives.len();
    let file = &table.file;
    let chosen = wide_choices(spec, table, choice)?;
    let mut available = vec![true; n * nalt];
    for (j, alt) in spec.alternatives.iter().enumerate() {
        if let Some(c) = &alt.available {
            let role = format!("[alternatives.{}].available", alt.name);
            let v = table.numbers(c, &role)?;
            for i in 0..n {
                available[i * nalt + j] = v[i] != 0.0;
            }
        }
    }
    for i in 0..n {
        let j = chosen[i] as usize;
        if !available[i * nalt + j] {
            return Err(Error::data(
                file,
                format!(
                    "row {}: the chosen alternative `{}` is unavailable there (column `{}` is 0)",
                    table.offset + i + 1,
                    spec.alternatives[j].name,
                    spec.alternatives[j].available.as_deref().unwrap_or("?")
                ),
            ));
        }
    }
    let mut attributes = Vec::with_capacity(spec.attributes.len());
    for a in &spec.attributes {
        let mut x = vec![0.0; n * nalt];
        for (j, src) in a.sources.iter().enumerate() {
            match src {
                None => {}
                Some(Source::Value(v)) => {
                    for i in 0..n {
                        if available[i * nalt + j] {
                            x[i * nalt + j] = *v;
                        }
                    }
                }
                Some(Source::Column(c)) => {
                    let role = format!("attribute {} of {}", a.name, spec.alternatives[j].name);
                    let v = table.numeric_column(c, &role)?;
                    check_finite(file, table.offset, c, &role, v, |i| available[i * nalt + j])?;
                    for i in 0..n {
                        if available[i * nalt + j] {
                            x[i * nalt + j] = v[i];
                        }
                    }
                }
            }
        }
        attributes.push(x);
    }
    let mut characteristics = Vec::with_capacity(spec.characteristics.len());
    for (column, role) in situation_columns(spec) {
        characteristics.push(table.numbers(&column, &role)?.to_vec());
    }
    let rows: Vec<usize> = (0..n).collect();
    let (weight, weight_total) = weights(spec, table, &rows)?;
    let (group, ngroups) = groups(spec, table, &rows)?;
    Ok(Observations {
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
        first_row: rows.iter().map(|r| table.offset + r + 1).collect(),
    })
}

/// The columns read once per situation, with their roles for messages: the
/// characteristics, then the family's own columns.
pub(crate) fn situation_columns(spec: &Spec) -> Vec<(String, String)> {
    spec.characteristics
        .iter()
        .map(|c| (c.column.clone(), format!("characteristic {}", c.name)))
        .chain(spec.family_columns.iter().cloned())
        .collect()
}
