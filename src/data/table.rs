//! A loaded data file as plain columns: numbers (missing as NaN) or text
//! (missing as None), with accessors whose errors name the column and row.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use crate::error::{Error, Result};

#[derive(Clone, Debug, PartialEq)]
pub enum Column {
    Num(Vec<f64>),
    Text(Vec<Option<String>>),
}

/// Columns of one data file, all of length `nrows`. Rows count from 1 in messages.
#[derive(Clone, Debug, Default)]
pub struct Table {
    pub file: PathBuf,
    pub nrows: usize,
    /// Rows of the file before this table's first row (a chunk of a larger
    /// file): messages name file rows `offset + i + 1`.
    pub offset: usize,
    pub names: Vec<String>,
    columns: HashMap<String, Column>,
    /// Cells of numeric columns that held text other than a missing-value
    /// marker (read as NaN): per column, such rows (from 0) in order with
    /// their text; the first ones of each read, so the first is always there.
    text: HashMap<String, Vec<(usize, String)>>,
}

impl Table {
    pub fn new(file: &Path, nrows: usize) -> Self {
        Table {
            file: file.to_path_buf(),
            nrows,
            offset: 0,
            names: Vec::new(),
            columns: HashMap::new(),
            text: HashMap::new(),
        }
    }

    pub fn insert(&mut self, name: &str, col: Column) {
        if !self.columns.contains_key(name) {
            self.names.push(name.to_string());
        }
        self.text.remove(name);
        self.columns.insert(name.to_string(), col);
    }

    /// Records the cells of numeric column `name` that held text (rows from 0).
    pub fn note_text(&mut self, name: &str, cells: Vec<(usize, String)>) {
        if !cells.is_empty() {
            self.text.insert(name.to_string(), cells);
        }
    }

    /// The cells of numeric column `name` that held text: (row from 0, text).
    pub fn text_cells(&self, name: &str) -> &[(usize, String)] {
        self.text.get(name).map_or(&[], |v| v.as_slice())
    }

    pub fn has(&self, name: &str) -> bool {
        self.columns.contains_key(name)
    }

    pub fn column(&self, name: &str) -> Option<&Column> {
        self.columns.get(name)
    }

    /// Numbers of a column as stored (missing or unparsable values are NaN).
    pub fn raw_numbers(&self, name: &str) -> Option<&[f64]> {
        match self.columns.get(name) {
            Some(Column::Num(v)) => Some(v),
            _ => None,
        }
    }

    /// Numbers of a column, every one finite; the error says how many are not and the first row.
    pub fn numbers(&self, name: &str, role: &str) -> Result<&[f64]> {
        let v = self.numeric_column(name, role)?;
        check_finite(&self.file, self.offset, name, role, v, |_| true)?;
        Ok(v)
    }

    /// The numeric column without the finiteness check (callers check the rows that matter).
    pub fn numeric_column(&self, name: &str, role: &str) -> Result<&[f64]> {
        match self.columns.get(name) {
            Some(Column::Num(v)) => Ok(v),
            Some(Column::Text(_)) => Err(Error::data(
                &self.file,
                format!("column `{name}` ({role}) holds text, not numbers"),
            )),
            None => Err(self.unknown(name, role)),
        }
    }

    /// Text keys of a column (numbers are written in their shortest form).
    pub fn keys(&self, name: &str, role: &str) -> Result<Vec<String>> {
        let out: Vec<Option<String>> = match self.columns.get(name) {
            Some(Column::Text(v)) => v.clone(),
            Some(Column::Num(v)) => v
                .iter()
                .map(|x| {
                    if x.is_nan() {
                        None
                    } else {
                        Some(number_key(*x))
                    }
                })
                .collect(),
            None => return Err(self.unknown(name, role)),
        };
        let missing = out.iter().filter(|v| v.is_none()).count();
        if missing > 0 {
            let first = self.offset + out.iter().position(|v| v.is_none()).unwrap_or(0) + 1;
            return Err(Error::data(
                &self.file,
                format!(
                    "column `{name}` ({role}) has {missing} missing value(s), first at row {first}"
                ),
            ));
        }
        Ok(out.into_iter().map(|v| v.unwrap_or_default()).collect())
    }

    /// Segments of a situation-level column: the segment of every row and the
    /// labels (numbers in numeric order, then text), in one pass with a hash map.
    /// More than `MAX_SEGMENTS` distinct values is refused: a report by an
    /// identifier column would be as long as the data and say nothing.
    pub fn segments(&self, name: &str, role: &str) -> Result<(Vec<u32>, Vec<String>)> {
        let mut labels: Vec<String> = Vec::new();
        let too_many = |n: usize| n > MAX_SEGMENTS;
        let ids: Vec<u32> = match self.columns.get(name) {
            // Numbers are told apart by their bits and written out once each.
            Some(Column::Num(v)) if !v.iter().any(|x| x.is_nan()) => {
                let mut first: HashMap<u64, u32> = HashMap::new();
                let mut ids = Vec::with_capacity(v.len());
                for x in v {
                    let id = match first.get(&x.to_bits()) {
                        Some(&id) => id,
                        None => {
                            first.insert(x.to_bits(), labels.len() as u32);
                            labels.push(number_key(*x));
                            if too_many(labels.len()) {
                                return Err(too_many_segments(&self.file, name, role));
                            }
                            labels.len() as u32 - 1
                        }
                    };
                    ids.push(id);
                }
                ids
            }
            // Text without missing cells is read in place, without copies.
            Some(Column::Text(v)) if v.iter().all(Option::is_some) => {
                let keys = v.iter().flatten().map(String::as_str);
                index_keys(keys, &mut labels)
                    .ok_or_else(|| too_many_segments(&self.file, name, role))?
            }
            _ => {
                let keys = self.keys(name, role)?;
                index_keys(keys.iter().map(String::as_str), &mut labels)
                    .ok_or_else(|| too_many_segments(&self.file, name, role))?
            }
        };
        let mut order: Vec<usize> = (0..labels.len()).collect();
        order.sort_by(|&a, &b| label_order(&labels[a], &labels[b]));
        let mut rank = vec![0u32; labels.len()];
        for (r, &o) in order.iter().enumerate() {
            rank[o] = r as u32;
        }
        let index = ids.iter().map(|&id| rank[id as usize]).collect();
        let sorted = order.iter().map(|&o| labels[o].clone()).collect();
        Ok((index, sorted))
    }

    /// Rows `from..` as a table of their own (its `offset` moved on), leaving
    /// rows `..from` here.
    pub fn split_off(&mut self, from: usize) -> Table {
        let mut tail = Table::new(&self.file, self.nrows - from);
        tail.offset = self.offset + from;
        for name in &self.names {
            let col = match self.columns.get_mut(name) {
                Some(Column::Num(v)) => Column::Num(v.split_off(from)),
                Some(Column::Text(v)) => Column::Text(v.split_off(from)),
                None => continue,
            };
            tail.insert(name, col);
        }
        for (name, cells) in self.text.iter_mut() {
            let at = cells.partition_point(|c| c.0 < from);
            let moved = cells.split_off(at);
            tail.note_text(
                name,
                moved.into_iter().map(|(r, t)| (r - from, t)).collect(),
            );
        }
        self.text.retain(|_, cells| !cells.is_empty());
        self.nrows = from;
        tail
    }

    /// Appends the rows of `more` (the same columns; a column numeric in one
    /// and text in the other becomes text).
    pub fn append(&mut self, more: Table) {
        let Table {
            nrows,
            mut columns,
            text: more_text,
            ..
        } = more;
        for (name, cells) in more_text {
            let shifted = cells.into_iter().map(|(r, t)| (r + self.nrows, t));
            self.text.entry(name).or_default().extend(shifted);
        }
        for name in &self.names {
            let (Some(mine), Some(theirs)) = (self.columns.get_mut(name), columns.remove(name))
            else {
                continue;
            };
            let text = |c: Column| match c {
                Column::Text(v) => v,
                Column::Num(v) => v
                    .into_iter()
                    .map(|x| (!x.is_nan()).then(|| number_key(x)))
                    .collect(),
            };
            match (mine, theirs) {
                (Column::Num(a), Column::Num(b)) => a.extend(b),
                (Column::Text(a), b) => a.extend(text(b)),
                (mine, Column::Text(b)) => {
                    let mut a = text(std::mem::replace(mine, Column::Num(Vec::new())));
                    a.extend(b);
                    *mine = Column::Text(a);
                }
            }
        }
        self.nrows += nrows;
    }

    /// Where the last run of equal values of column `name` starts (the rows
    /// of the last situation or decision maker); 0 when the column is missing.
    pub fn last_run(&self, name: &str) -> usize {
        let n = self.nrows;
        match self.columns.get(name) {
            Some(Column::Num(v)) if n > 0 => {
                let last = v[n - 1].to_bits();
                (0..n)
                    .rev()
                    .find(|&i| v[i].to_bits() != last)
                    .map_or(0, |i| i + 1)
            }
            Some(Column::Text(v)) if n > 0 => {
                let last = &v[n - 1];
                (0..n).rev().find(|&i| &v[i] != last).map_or(0, |i| i + 1)
            }
            _ => 0,
        }
    }

    pub fn unknown(&self, name: &str, role: &str) -> Error {
        let mut shown: Vec<&str> = self.names.iter().map(|s| s.as_str()).take(30).collect();
        if self.names.len() > 30 {
            shown.push("...");
        }
        Error::data(
            &self.file,
            format!(
                "no column `{name}` ({role}); the file has: {}",
                shown.join(", ")
            ),
        )
    }
}

/// The order of segment labels: numbers in numeric order, then text.
pub fn label_order(a: &str, b: &str) -> std::cmp::Ordering {
    match (a.parse::<f64>(), b.parse::<f64>()) {
        (Ok(x), Ok(y)) => x.total_cmp(&y),
        (Ok(_), Err(_)) => std::cmp::Ordering::Less,
        (Err(_), Ok(_)) => std::cmp::Ordering::Greater,
        _ => a.cmp(b),
    }
}

/// The refusal of a segment column with too many values.
pub fn too_many_segments(file: &Path, name: &str, role: &str) -> Error {
    Error::data(
        file,
        format!(
            "column `{name}` ({role}) has more than {MAX_SEGMENTS} distinct values; segments are reported for at most {MAX_SEGMENTS} (is it an identifier? group its values into a coarser column with [derived])"
        ),
    )
}

/// The most segments a `--by` column may have.
pub const MAX_SEGMENTS: usize = 1000;

/// Integers print without a decimal point so that `1.0` and `1` are the same key.
/// Each key's segment in first-seen order, the labels pushed as they are
/// first seen; `None` past `MAX_SEGMENTS` labels.
fn index_keys<'a>(
    keys: impl Iterator<Item = &'a str>,
    labels: &mut Vec<String>,
) -> Option<Vec<u32>> {
    let mut first: HashMap<&str, u32> = HashMap::new();
    let mut ids = Vec::with_capacity(keys.size_hint().0);
    for k in keys {
        let id = match first.get(k) {
            Some(&id) => id,
            None => {
                first.insert(k, labels.len() as u32);
                labels.push(k.to_string());
                if labels.len() > MAX_SEGMENTS {
                    return None;
                }
                labels.len() as u32 - 1
            }
        };
        ids.push(id);
    }
    Some(ids)
}

pub fn number_key(x: f64) -> String {
    if x.fract() == 0.0 && x.abs() < 1e15 {
        format!("{}", x as i64)
    } else {
        format!("{x}")
    }
}

/// Largest magnitude a model variable may take: beyond it utilities lose all precision.
pub const MAX_MAGNITUDE: f64 = 1e15;

/// Finite and not absurdly large.
pub fn usable(x: f64) -> bool {
    x.is_finite() && x.abs() <= MAX_MAGNITUDE
}

/// Errors on the first non-finite (or absurdly large) value among the rows `keep` selects.
pub fn check_finite(
    file: &Path,
    offset: usize,
    name: &str,
    role: &str,
    v: &[f64],
    keep: impl Fn(usize) -> bool,
) -> Result<()> {
    let mut count = 0usize;
    let mut first = None;
    for (i, x) in v.iter().enumerate() {
        if !usable(*x) && keep(i) {
            count += 1;
            first.get_or_insert((i, *x));
        }
    }
    match first {
        None => Ok(()),
        Some((i, x)) => {
            let what = if x.is_nan() {
                "missing or not a number"
            } else {
                "infinite"
            };
            Err(Error::data(
                file,
                format!(
                    "column `{name}` ({role}): {count} row(s) missing, non-numeric, infinite or too large; first at row {} ({what})",
                    offset + i + 1
                ),
            ))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_cells_follow_their_rows_through_a_split_and_an_append() {
        let mut t = Table::new(Path::new("d.csv"), 5);
        t.insert("x", Column::Num(vec![1.0, f64::NAN, 3.0, f64::NAN, 5.0]));
        t.note_text("x", vec![(1, "late".into()), (3, "soon".into())]);
        let tail = t.split_off(2);
        assert_eq!(t.text_cells("x"), &[(1, "late".to_string())]);
        assert_eq!(tail.text_cells("x"), &[(1, "soon".to_string())]);
        assert_eq!(tail.offset, 2);
        let mut head = t;
        head.append(tail);
        assert_eq!(
            head.text_cells("x"),
            &[(1, "late".to_string()), (3, "soon".to_string())]
        );
        // A column replaced loses the cells of the one it replaces.
        head.insert("x", Column::Num(vec![0.0; 5]));
        assert!(head.text_cells("x").is_empty());
    }
}
