//! What each column of a data file looks like: numbers or text, how many
//! distinct values, whether it is 0/1, whole numbers, missing values, and the
//! row keys the layout guesses compare.

use std::collections::{HashMap, HashSet};

use crate::data::table::{number_key, Column, Table};

/// The most distinct values listed for a column; beyond it, only the count.
pub const LISTED: usize = 64;

/// One column's profile.
#[derive(Clone, Debug)]
pub struct Profile {
    pub name: String,
    pub numeric: bool,
    /// The first `LISTED` distinct values in order of first appearance (numbers in their shortest form).
    pub values: Vec<String>,
    /// The number of distinct non-missing values.
    pub distinct: usize,
    pub missing: usize,
    /// The first row (from 1) with a missing value.
    pub first_missing: Option<usize>,
    /// Numbers that are all 0 or 1.
    pub binary: bool,
    /// Numbers that are all whole.
    pub integer: bool,
    /// Numbers that are all above zero.
    pub positive: bool,
}

/// The row's key of a column: text as written, numbers in their shortest form; None when missing.
pub fn key(col: &Column, i: usize) -> Option<String> {
    match col {
        Column::Num(v) => v.get(i).filter(|x| !x.is_nan()).map(|x| number_key(*x)),
        Column::Text(v) => v.get(i).cloned().flatten().filter(|t| !t.trim().is_empty()),
    }
}

/// Profiles every column of the table, in file order.
pub fn profiles(t: &Table) -> Vec<Profile> {
    t.names
        .iter()
        .filter_map(|n| t.column(n).map(|c| profile(n, c, t.nrows)))
        .collect()
}

fn profile(name: &str, col: &Column, rows: usize) -> Profile {
    let mut seen: HashSet<String> = HashSet::new();
    let mut values = Vec::new();
    let mut missing = 0;
    let mut first_missing = None;
    for i in 0..rows {
        match key(col, i) {
            None => {
                missing += 1;
                first_missing.get_or_insert(i + 1);
            }
            Some(k) => {
                if !seen.contains(&k) {
                    if values.len() < LISTED {
                        values.push(k.clone());
                    }
                    seen.insert(k);
                }
            }
        }
    }
    let nums: &[f64] = match col {
        Column::Num(v) => v,
        Column::Text(_) => &[],
    };
    let finite = || nums.iter().filter(|x| !x.is_nan());
    let numeric = matches!(col, Column::Num(_)) && finite().count() > 0;
    Profile {
        name: name.to_string(),
        numeric,
        distinct: seen.len(),
        values,
        missing,
        first_missing,
        binary: numeric && finite().all(|x| *x == 0.0 || *x == 1.0),
        integer: numeric && finite().all(|x| x.fract() == 0.0),
        positive: numeric && finite().all(|x| *x > 0.0),
    }
}

/// Groups rows by the key of `col`: each row's group number (None when missing) and the number of groups.
pub fn groups(col: &Column, rows: usize) -> (Vec<Option<usize>>, usize) {
    let mut ids: HashMap<String, usize> = HashMap::new();
    let out = (0..rows)
        .map(|i| {
            key(col, i).map(|k| {
                let n = ids.len();
                *ids.entry(k).or_insert(n)
            })
        })
        .collect();
    (out, ids.len())
}

/// Whether `col` holds one value within each group (missing values count as a value).
pub fn constant_within(col: &Column, group: &[Option<usize>], groups: usize) -> bool {
    let mut first: Vec<Option<Option<String>>> = vec![None; groups];
    for (i, g) in group.iter().enumerate() {
        let Some(g) = g else { continue };
        let k = key(col, i);
        match &first[*g] {
            None => first[*g] = Some(k),
            Some(f) if *f != k => return false,
            Some(_) => {}
        }
    }
    true
}

/// Pearson correlation of two numeric columns over rows where both are finite.
pub fn correlation(a: &[f64], b: &[f64]) -> f64 {
    let pairs = || {
        a.iter()
            .zip(b)
            .filter(|(x, y)| x.is_finite() && y.is_finite())
    };
    let n = pairs().count() as f64;
    if n < 3.0 {
        return f64::NAN;
    }
    let (ma, mb) = pairs().fold((0.0, 0.0), |(s, t), (x, y)| (s + x, t + y));
    let (ma, mb) = (ma / n, mb / n);
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in pairs() {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    if saa == 0.0 || sbb == 0.0 {
        return f64::NAN;
    }
    sab / (saa * sbb).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn profile_tells_binary_whole_and_missing() {
        let c = Column::Num(vec![0.0, 1.0, f64::NAN, 1.0]);
        let p = profile("x", &c, 4);
        assert!(p.binary && p.integer && p.numeric);
        assert_eq!((p.distinct, p.missing, p.first_missing), (2, 1, Some(3)));
    }

    #[test]
    fn correlation_of_a_line_is_one() {
        // Fact: an exact linear relation has correlation ±1.
        let a = [1.0, 2.0, 3.0, 4.0];
        let b = [3.0, 5.0, 7.0, 9.0];
        assert!((correlation(&a, &b) - 1.0).abs() < 1e-12);
    }
}
