//! Guessing the layout of a choice file: long (a 0/1 column with exactly one
//! 1 per situation, a situation id and an alternative column) or wide (a
//! column of chosen alternatives, names or codes, that other columns' names
//! carry), with the alternatives in a sensible order and how often each was chosen.

use std::collections::HashSet;

use super::profile::{groups, key, Profile, LISTED};
use crate::data::table::Table;

/// Words that suggest a column records the choice.
const CHOICE_WORDS: [&str; 16] = [
    "choice",
    "chosen",
    "choose",
    "chose",
    "mode",
    "option",
    "alternative",
    "alt",
    "brand",
    "product",
    "rating",
    "score",
    "grade",
    "stars",
    "response",
    "outcome",
];
/// Words that suggest an ordered rating.
pub const RATING_WORDS: [&str; 7] = [
    "rating",
    "score",
    "grade",
    "stars",
    "satisfaction",
    "level",
    "rank",
];
/// Words that suggest a 0/1 chosen column in the long layout.
const CHOSEN_WORDS: [&str; 6] = ["chosen", "choice", "chose", "selected", "bought", "picked"];
/// Words that suggest a column names the alternative of a row (long layout).
const ALTERNATIVE_WORDS: [&str; 8] = [
    "alternative",
    "alt",
    "option",
    "brand",
    "product",
    "mode",
    "item",
    "choice",
];

#[derive(Clone, Debug, PartialEq)]
pub enum Layout {
    Wide {
        choice: String,
    },
    Long {
        situation: String,
        alternative: String,
        chosen: String,
    },
}

/// One alternative: its name in the spec, its code when the file uses numbers, and how often it was chosen.
#[derive(Clone, Debug)]
pub struct Alt {
    pub name: String,
    pub code: Option<i64>,
    pub chosen: usize,
}

/// A wide column whose name carries an alternative: the column, the alternative and the rest of the name.
#[derive(Clone, Debug)]
pub struct Bound {
    pub column: String,
    pub alt: usize,
    pub stem: String,
}

/// What the layout guess found.
#[derive(Clone, Debug)]
pub struct Guess {
    pub layout: Layout,
    pub alternatives: Vec<Alt>,
    /// Situation of each row (wide: the row itself).
    pub situation: Vec<Option<usize>>,
    pub situations: usize,
    /// Wide: columns whose names carry an alternative.
    pub bound: Vec<Bound>,
    /// Why this layout and these columns (comments for the draft).
    pub why: Vec<String>,
}

fn has_word(name: &str, words: &[&str]) -> bool {
    let lower = name.to_lowercase();
    lower
        .split(['_', '.', '-', ' '])
        .any(|t| words.contains(&t))
}

/// Tokens of a name, lower case, split at `_ . -` and spaces.
fn tokens(s: &str) -> Vec<String> {
    s.to_lowercase()
        .split(['_', '.', '-', ' '])
        .filter(|t| !t.is_empty())
        .map(str::to_string)
        .collect()
}

/// If column name `c` carries alternative `a` as whole tokens: the rest of the name (the stem).
pub fn carries(c: &str, a: &str) -> Option<String> {
    let (ct, at) = (tokens(c), tokens(a));
    if at.is_empty() || ct.len() <= at.len() {
        return None;
    }
    let at_pos = (0..=ct.len() - at.len()).find(|&p| ct[p..p + at.len()] == at[..])?;
    let rest: Vec<String> = ct[..at_pos]
        .iter()
        .chain(&ct[at_pos + at.len()..])
        .cloned()
        .collect();
    Some(rest.join("_"))
}

/// Tries the long layout, then the wide one; the error says why neither fits.
pub fn guess(t: &Table, p: &[Profile]) -> Result<Guess, String> {
    if let Some(g) = long(t, p) {
        return Ok(g);
    }
    wide(t, p)
}

fn long(t: &Table, p: &[Profile]) -> Option<Guess> {
    let mut chosen: Vec<&Profile> = p
        .iter()
        .filter(|c| c.binary && c.missing == 0 && c.distinct == 2)
        .collect();
    chosen.sort_by_key(|c| !has_word(&c.name, &CHOSEN_WORDS));
    let mut ids: Vec<&Profile> = p
        .iter()
        .filter(|c| !c.binary && c.missing == 0 && c.distinct >= 2 && c.distinct < t.nrows)
        .collect();
    ids.sort_by_key(|c| !c.name.to_lowercase().contains("id"));
    for c in &chosen {
        let ones = t.raw_numbers(&c.name)?;
        for s in &ids {
            let col = t.column(&s.name)?;
            let (g, n) = groups(col, t.nrows);
            let mut count = vec![0usize; n];
            for (i, gi) in g.iter().enumerate() {
                if let Some(gi) = gi {
                    count[*gi] += (ones[i] == 1.0) as usize;
                }
            }
            if count.iter().all(|k| *k == 1) {
                let alt = alternative_column(t, p, &[&c.name, &s.name], &g)?;
                return Some(long_guess(t, &c.name, &s.name, alt, g, n));
            }
        }
    }
    None
}

/// The column naming each row's alternative: no repeat within a situation, a few values.
fn alternative_column<'a>(
    t: &Table,
    p: &'a [Profile],
    taken: &[&str],
    g: &[Option<usize>],
) -> Option<&'a Profile> {
    let mut cands: Vec<&Profile> = p
        .iter()
        .filter(|c| !taken.contains(&c.name.as_str()) && c.missing == 0)
        .filter(|c| (2..=LISTED).contains(&c.distinct) && (!c.numeric || c.integer))
        .filter(|c| {
            let Some(col) = t.column(&c.name) else {
                return false;
            };
            let mut seen = HashSet::new();
            g.iter()
                .enumerate()
                .all(|(i, gi)| seen.insert((*gi, key(col, i))))
        })
        .collect();
    cands.sort_by_key(|c| (c.numeric, !has_word(&c.name, &ALTERNATIVE_WORDS)));
    cands.first().copied()
}

fn long_guess(
    t: &Table,
    chosen: &str,
    situation: &str,
    alt: &Profile,
    g: Vec<Option<usize>>,
    n: usize,
) -> Guess {
    let mut alternatives = alternatives_of(alt);
    if let (Some(col), Some(ones)) = (t.column(&alt.name), t.raw_numbers(chosen)) {
        for (i, _) in ones.iter().enumerate().filter(|(_, v)| **v == 1.0) {
            if let Some(k) = key(col, i).and_then(|k| alt_index(&alternatives, alt, &k)) {
                alternatives[k].chosen += 1;
            }
        }
    }
    Guess {
        layout: Layout::Long {
            situation: situation.to_string(),
            alternative: alt.name.clone(),
            chosen: chosen.to_string(),
        },
        alternatives,
        situation: g,
        situations: n,
        bound: Vec::new(),
        why: vec![format!(
            "long layout: `{chosen}` is 0/1 with exactly one 1 in each of the {n} situations of `{situation}`; `{}` names each row's alternative",
            alt.name
        )],
    }
}

/// The alternatives a column's values make: text as written, numbers as codes (`NAME_CODE`) in numeric order.
fn alternatives_of(c: &Profile) -> Vec<Alt> {
    if c.numeric {
        let mut codes: Vec<i64> = c
            .values
            .iter()
            .filter_map(|v| v.parse::<f64>().ok())
            .map(|x| x as i64)
            .collect();
        codes.sort_unstable();
        let prefix = tokens(&c.name).join("_");
        codes
            .into_iter()
            .map(|k| Alt {
                name: format!("{prefix}_{k}").replace('-', "minus_"),
                code: Some(k),
                chosen: 0,
            })
            .collect()
    } else {
        c.values
            .iter()
            .map(|v| Alt {
                name: v.trim().to_string(),
                code: None,
                chosen: 0,
            })
            .collect()
    }
}

/// The alternative a row's key names.
fn alt_index(alts: &[Alt], c: &Profile, k: &str) -> Option<usize> {
    if c.numeric {
        let code = k.parse::<f64>().ok()? as i64;
        alts.iter().position(|a| a.code == Some(code))
    } else {
        alts.iter().position(|a| a.name == k.trim())
    }
}

/// The alternative token a column name carries (for codes, the code itself), longest match first.
fn bound_of(column: &str, alts: &[Alt]) -> Option<(usize, String)> {
    let mut best: Option<(usize, String, usize)> = None;
    for (k, a) in alts.iter().enumerate() {
        let token = a
            .code
            .map(|c| c.to_string())
            .unwrap_or_else(|| a.name.clone());
        if let Some(stem) = carries(column, &token) {
            let len = tokens(&token).len();
            if best.as_ref().is_none_or(|b| len > b.2) {
                best = Some((k, stem, len));
            }
        }
    }
    best.map(|(k, s, _)| (k, s))
}

fn wide(t: &Table, p: &[Profile]) -> Result<Guess, String> {
    if p.len() < 2 {
        return Err(format!(
            "it has {} column{}: a choice file needs a column saying what was chosen and at least one column it may depend on",
            p.len(),
            if p.len() == 1 { "" } else { "s" }
        ));
    }
    let cands: Vec<&Profile> = p
        .iter()
        .filter(|c| {
            c.missing == 0 && (2..=LISTED).contains(&c.distinct) && (!c.numeric || c.integer)
        })
        .collect();
    let scored: Vec<(usize, &Profile)> = cands
        .iter()
        .filter(|c| !c.binary)
        .map(|c| {
            let alts = alternatives_of(c);
            let n = p
                .iter()
                .filter(|o| o.name != c.name && bound_of(&o.name, &alts).is_some())
                .count();
            (n, *c)
        })
        .collect();
    let best = scored
        .iter()
        .filter(|(n, _)| *n > 0)
        .max_by_key(|(n, c)| (*n, has_word(&c.name, &CHOICE_WORDS)));
    let (choice, why) = match best {
        Some((n, c)) => (*c, format!("wide layout: `{}` holds the chosen alternative ({} values); {n} other columns' names carry them", c.name, c.distinct)),
        None => match cands.iter().find(|c| has_word(&c.name, &CHOICE_WORDS)) {
            Some(c) => (*c, format!("wide layout: `{}` holds the chosen alternative ({} values; its name says so, and no other column's name carries them)", c.name, c.distinct)),
            None => return Err(no_choice_column(p)),
        },
    };
    Ok(wide_guess(t, p, choice, why))
}

fn no_choice_column(p: &[Profile]) -> String {
    // A column named like a choice that fails for a reason of its own says so.
    for c in p.iter().filter(|c| has_word(&c.name, &CHOICE_WORDS)) {
        if let Some(row) = c.first_missing {
            return format!(
                "`{}` looks like the chosen alternative but is missing in {} row{} (first at row {row}): every situation needs its choice",
                c.name,
                c.missing,
                if c.missing == 1 { "" } else { "s" }
            );
        }
        if c.distinct > LISTED {
            return format!(
                "`{}` is named like the chosen alternative but holds {} distinct values, more than the {LISTED} alternatives a draft takes (is it an identifier or a measurement? a choice column holds a few names or whole-number codes)",
                c.name, c.distinct
            );
        }
        if c.numeric && !c.integer {
            let example = c
                .values
                .iter()
                .find(|v| v.contains('.'))
                .map_or("", String::as_str);
            return format!(
                "`{}` is named like the chosen alternative but holds numbers that are not whole (`{example}`); a choice column holds names or whole-number codes",
                c.name
            );
        }
        if c.distinct < 2 {
            let only = c.values.first().map(String::as_str).unwrap_or("");
            return format!(
                "`{}` looks like the chosen alternative but holds one value only (`{only}`): a model needs at least two alternatives that were chosen",
                c.name
            );
        }
    }
    let names: Vec<String> = p
        .iter()
        .map(|c| crate::error::quote(&c.name))
        .take(12)
        .collect();
    format!(
        "no column looks like the chosen alternative: none holds a few names or whole-number codes (at most {LISTED}) that other columns' names carry (bus_time, time_bus, bus.time) or is named like a choice (choice, mode, rating, ...), and no 0/1 column has exactly one 1 per situation of an id column (columns: {})",
        names.join(", ")
    )
}

fn wide_guess(t: &Table, p: &[Profile], choice: &Profile, why: String) -> Guess {
    let mut alternatives = alternatives_of(choice);
    let mut bound = Vec::new();
    for c in p.iter().filter(|c| c.name != choice.name) {
        if let Some((alt, stem)) = bound_of(&c.name, &alternatives) {
            bound.push(Bound {
                column: c.name.clone(),
                alt,
                stem,
            });
        }
    }
    if let Some(col) = t.column(&choice.name) {
        for i in 0..t.nrows {
            if let Some(k) = key(col, i).and_then(|k| alt_index(&alternatives, choice, &k)) {
                alternatives[k].chosen += 1;
            }
        }
    }
    // Text alternatives in the order the columns name them, then the rest.
    if !choice.numeric {
        let mut order: Vec<usize> = Vec::new();
        for b in &bound {
            if !order.contains(&b.alt) {
                order.push(b.alt);
            }
        }
        let rest: Vec<usize> = (0..alternatives.len())
            .filter(|k| !order.contains(k))
            .collect();
        order.extend(rest);
        let remap: Vec<usize> = (0..alternatives.len())
            .map(|old| order.iter().position(|o| *o == old).unwrap_or(old))
            .collect();
        alternatives = order.iter().map(|k| alternatives[*k].clone()).collect();
        for b in &mut bound {
            b.alt = remap[b.alt];
        }
    }
    Guess {
        layout: Layout::Wide {
            choice: choice.name.clone(),
        },
        alternatives,
        situation: (0..t.nrows).map(Some).collect(),
        situations: t.nrows,
        bound,
        why: vec![why],
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_carry_alternatives_before_after_or_inside() {
        assert_eq!(carries("bus_time", "bus").as_deref(), Some("time"));
        assert_eq!(carries("time_bus", "bus").as_deref(), Some("time"));
        assert_eq!(carries("bus.time", "bus").as_deref(), Some("time"));
        assert_eq!(
            carries("rail_access_km", "rail").as_deref(),
            Some("access_km")
        );
        assert_eq!(
            carries("own_label_price", "own_label").as_deref(),
            Some("price")
        );
        assert_eq!(carries("business", "bus"), None);
        assert_eq!(carries("bus", "bus"), None);
    }
}
