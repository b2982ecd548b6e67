//! Stand-ins for the observed choices of a population file that has none: a
//! forecast (`simulate --data`) reads no observed choice, but a `Dataset`
//! holds one per situation, so each situation gets one of its available
//! alternatives, never read. Fitting always reads the file's own choices.

use std::collections::HashMap;

use super::table::{Column, Table};
use crate::error::{Error, Result};
use crate::spec::{Layout, Spec};

/// Adds the observed choices' column (`[data].choice`, or `[data].chosen` in
/// the long layout) with stand-ins. They are spread over the available
/// alternatives in turn rather than all put on one, so that a check of the
/// data that counts choices per alternative (an ordered model's every
/// category observed) is not failed by stand-ins. A situation with no
/// available alternative is refused, as it is in a file with choices.
pub(super) fn choices(spec: &Spec, table: &mut Table) -> Result<()> {
    match &spec.data.layout {
        Layout::Wide { choice } => wide(spec, table, choice),
        Layout::Long {
            situation,
            alternative,
            chosen,
        } => long(spec, table, situation, alternative, chosen),
        // Its stand-ins need the tables (`tables::stand_in`).
        Layout::Tables { .. } => Ok(()),
    }
}

/// Each alternative's availability column (`None`: always available, or a
/// column the reshaping refuses in its own words).
fn availability<'a>(spec: &Spec, table: &'a Table) -> Vec<Option<&'a [f64]>> {
    spec.alternatives
        .iter()
        .map(|a| a.available.as_deref().and_then(|c| table.raw_numbers(c)))
        .collect()
}

fn nothing_available(table: &Table, row: usize, what: &str) -> Error {
    Error::data(
        &table.file,
        format!(
            "{what}row {}: no alternative is available there (every availability column is 0), so there is no choice to forecast",
            table.offset + row + 1
        ),
    )
}

fn wide(spec: &Spec, table: &mut Table, choice: &str) -> Result<()> {
    let avail = availability(spec, table);
    let open = |i: usize, j: usize| avail[j].is_none_or(|v| v[i] != 0.0);
    let nalt = spec.alternatives.len();
    let mut names = Vec::with_capacity(table.nrows);
    for i in 0..table.nrows {
        let count = (0..nalt).filter(|&j| open(i, j)).count();
        if count == 0 {
            return Err(nothing_available(table, i, ""));
        }
        let k = (table.offset + i) % count;
        let j = (0..nalt).filter(|&j| open(i, j)).nth(k).unwrap_or(0);
        names.push(Some(spec.alternatives[j].name.clone()));
    }
    table.insert(choice, Column::Text(names));
    Ok(())
}

fn long(
    spec: &Spec,
    table: &mut Table,
    situation: &str,
    alternative: &str,
    chosen: &str,
) -> Result<()> {
    let sit = table.keys(situation, "[data].situation")?;
    let alt = table.keys(alternative, "[data].alternative")?;
    let lookup = super::reshape::alt_lookup(spec);
    let avail = availability(spec, table);
    // Each situation's rows whose alternative is available, in file order;
    // an undeclared alternative is left for the reshaping to name.
    let mut index: HashMap<&str, usize> = HashMap::new();
    let mut open: Vec<(usize, Vec<usize>)> = Vec::new();
    for r in 0..table.nrows {
        let next = index.len();
        let s = *index.entry(sit[r].as_str()).or_insert(next);
        if s == open.len() {
            open.push((r, Vec::new()));
        }
        let available = lookup(&alt[r]).is_none_or(|j| avail[j].is_none_or(|v| v[r] != 0.0));
        if available {
            open[s].1.push(r);
        }
    }
    let mut v = vec![0.0; table.nrows];
    for (s, (first, rows)) in open.iter().enumerate() {
        if rows.is_empty() {
            let what = format!("situation `{}`, ", crate::error::quote(&sit[*first]));
            return Err(nothing_available(table, *first, &what));
        }
        v[rows[s % rows.len()]] = 1.0;
    }
    table.insert(chosen, Column::Num(v));
    Ok(())
}
