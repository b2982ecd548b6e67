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
    pub names: Vec<String>,
    columns: HashMap<String, Column>,
}

impl Table {
    pub fn new(file: &Path, nrows: usize) -> Self {
        Table {
            file: file.to_path_buf(),
            nrows,
            names: Vec::new(),
            columns: HashMap::new(),
        }
    }

    pub fn insert(&mut self, name: &str, col: Column) {
        if !self.columns.contains_key(name) {
            self.names.push(name.to_string());
        }
        self.columns.insert(name.to_string(), col);
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
        check_finite(&self.file, name, role, v, |_| true)?;
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
            let first = out.iter().position(|v| v.is_none()).unwrap_or(0) + 1;
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
        let keys = self.keys(name, role)?;
        let mut first: HashMap<&str, u32> = HashMap::new();
        let mut labels: Vec<&str> = Vec::new();
        for k in &keys {
            if !first.contains_key(k.as_str()) {
                first.insert(k, labels.len() as u32);
                labels.push(k);
                if labels.len() > MAX_SEGMENTS {
                    return Err(Error::data(
                        &self.file,
                        format!(
                            "column `{name}` ({role}) has more than {MAX_SEGMENTS} distinct values; segments are reported for at most {MAX_SEGMENTS} (is it an identifier? group its values into a coarser column with [derived])"
                        ),
                    ));
                }
            }
        }
        let mut order: Vec<usize> = (0..labels.len()).collect();
        order.sort_by(
            |&a, &b| match (labels[a].parse::<f64>(), labels[b].parse::<f64>()) {
                (Ok(x), Ok(y)) => x.total_cmp(&y),
                (Ok(_), Err(_)) => std::cmp::Ordering::Less,
                (Err(_), Ok(_)) => std::cmp::Ordering::Greater,
                _ => labels[a].cmp(labels[b]),
            },
        );
        let mut rank = vec![0u32; labels.len()];
        for (r, &o) in order.iter().enumerate() {
            rank[o] = r as u32;
        }
        let index = keys
            .iter()
            .map(|k| rank[first[k.as_str()] as usize])
            .collect();
        let sorted = order.iter().map(|&o| labels[o].to_string()).collect();
        Ok((index, sorted))
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

/// The most segments a `--by` column may have.
pub const MAX_SEGMENTS: usize = 1000;

/// Integers print without a decimal point so that `1.0` and `1` are the same key.
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
                    i + 1
                ),
            ))
        }
    }
}
