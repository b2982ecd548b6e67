//! Which part of a model each column plays in the draft: availability,
//! attributes grouped across alternatives, characteristics, the weight and the
//! group, or left out — each guess with the reason the draft writes beside it.

use super::layout::{Guess, Layout};
use super::profile::{constant_within, correlation, key, Profile};
use crate::data::table::Table;

const AVAILABILITY_WORDS: [&str; 11] = [
    "owner",
    "owns",
    "ok",
    "av",
    "avail",
    "available",
    "availability",
    "has",
    "can",
    "allowed",
    "offered",
];
const MONEY_WORDS: [&str; 8] = [
    "cost", "costs", "fare", "fares", "price", "prices", "toll", "fee",
];
const WEIGHT_WORDS: [&str; 7] = [
    "weight",
    "wt",
    "wgt",
    "weights",
    "expansion",
    "expfac",
    "factor",
];
const CATEGORY_WORDS: [&str; 16] = [
    "district", "region", "zone", "area", "branch", "store", "segment", "type", "class",
    "category", "code", "cluster", "city", "country", "state", "county",
];
const TIME_INDEX_WORDS: [&str; 9] = [
    "week", "month", "year", "day", "date", "period", "wave", "quarter", "season",
];
/// Names of a decision maker whose values repeat over their situations (a panel).
const PERSON_WORDS: [&str; 8] = [
    "respondent",
    "person",
    "household",
    "customer",
    "individual",
    "member",
    "traveller",
    "shopper",
];
/// Names of the position of a situation in a decision maker's sequence.
const SEQUENCE_WORDS: [&str; 5] = ["task", "occasion", "round", "trip", "card"];
/// Correlation above which a characteristic is left out beside an attribute column.
const COLLINEAR: f64 = 0.95;

#[derive(Clone, Debug)]
pub struct Attribute {
    pub name: String,
    /// Wide: (alternative, column) pairs; long: one entry with alternative `usize::MAX`.
    pub columns: Vec<(usize, String)>,
    pub notes: Vec<String>,
}

#[derive(Clone, Debug)]
pub struct Characteristic {
    pub name: String,
    pub column: String,
    /// Why it is left out (written commented out), or None when it is in the model.
    pub left_out: Option<String>,
}

#[derive(Clone, Debug, Default)]
pub struct Plan {
    /// (alternative, column, note).
    pub availability: Vec<(usize, String, String)>,
    pub attributes: Vec<Attribute>,
    pub characteristics: Vec<Characteristic>,
    pub weight: Option<(String, String)>,
    pub group: Option<(String, String)>,
    /// Columns the draft does not use, with the reason.
    pub left_out: Vec<(String, String)>,
}

fn words(name: &str) -> Vec<String> {
    name.to_lowercase()
        .split(['_', '.', '-', ' '])
        .filter(|t| !t.is_empty())
        .map(str::to_string)
        .collect()
}

fn has_word(name: &str, list: &[&str]) -> bool {
    words(name).iter().any(|w| list.contains(&w.as_str()))
}

/// A name the spec accepts: letters, digits and underscores.
pub fn ident(s: &str) -> String {
    let mut out: String = s
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '_'
            }
        })
        .collect();
    if out.is_empty() || out.starts_with(|c: char| c.is_ascii_digit()) {
        out.insert(0, 'x');
    }
    out
}

pub fn plan(t: &Table, p: &[Profile], g: &Guess) -> Plan {
    let mut plan = Plan::default();
    let taken: Vec<String> = match &g.layout {
        Layout::Wide { choice } => vec![choice.clone()],
        Layout::Long {
            situation,
            alternative,
            chosen,
        } => vec![situation.clone(), alternative.clone(), chosen.clone()],
    };
    if matches!(g.layout, Layout::Wide { .. }) {
        wide_attributes(t, p, g, &mut plan);
    }
    let mut situation_level = Vec::new();
    for c in p.iter().filter(|c| !taken.contains(&c.name)) {
        if g.bound.iter().any(|b| b.column == c.name) {
            continue;
        }
        let varies = t
            .column(&c.name)
            .is_some_and(|col| !constant_within(col, &g.situation, g.situations));
        if varies && alternative_code(t, &c.name, g) {
            plan.left_out.push((c.name.clone(), "one value per alternative in every situation (a code of the alternative): the constants already carry it".into()));
        } else if varies && c.numeric {
            let notes = (c.missing > 0)
                .then(|| format!("`{}` has {} missing values (first at row {}): allowed only on rows marked unavailable", c.name, c.missing, c.first_missing.unwrap_or(0)))
                .into_iter()
                .collect();
            plan.attributes.push(Attribute {
                name: ident(&c.name),
                columns: vec![(usize::MAX, c.name.clone())],
                notes,
            });
        } else if varies {
            plan.left_out.push((c.name.clone(), "holds text that varies between the rows of a situation: an attribute must be a number".into()));
        } else {
            situation_level.push(c);
        }
    }
    for c in situation_level {
        situation_role(t, c, g, &mut plan);
    }
    plan
}

/// Long layout: whether a column takes one value per alternative, the same in every situation.
fn alternative_code(t: &Table, column: &str, g: &Guess) -> bool {
    let Layout::Long { alternative, .. } = &g.layout else {
        return false;
    };
    let (Some(alt), Some(col)) = (t.column(alternative), t.column(column)) else {
        return false;
    };
    let (by_alt, n) = super::profile::groups(alt, t.nrows);
    constant_within(col, &by_alt, n)
}

/// Wide columns whose names carry an alternative: availability or attributes by stem.
fn wide_attributes(t: &Table, p: &[Profile], g: &Guess, plan: &mut Plan) {
    let mut stems: Vec<Attribute> = Vec::new();
    for b in &g.bound {
        let Some(c) = p.iter().find(|c| c.name == b.column) else {
            continue;
        };
        let alt = &g.alternatives[b.alt].name;
        if !c.numeric {
            plan.left_out.push((
                c.name.clone(),
                format!(
                    "carries `{alt}` in its name but holds text: an attribute must be a number"
                ),
            ));
            continue;
        }
        if c.binary && (has_word(&b.stem, &AVAILABILITY_WORDS) || b.stem.is_empty()) {
            match unavailable_choice(t, g, b.alt, &c.name) {
                None if !plan.availability.iter().any(|a| a.0 == b.alt) => {
                    plan.availability.push((b.alt, c.name.clone(), format!("guessed: `{}` is 0/1, its name says availability, and `{alt}` is never chosen where it is 0; check", c.name)));
                }
                None => plan.left_out.push((c.name.clone(), format!("another availability column for `{alt}`"))),
                Some(row) => plan.left_out.push((c.name.clone(), format!("looks like `{alt}`'s availability, but row {row} chooses `{alt}` where it is 0, so it is not used as one"))),
            }
            continue;
        }
        let name = ident(&b.stem);
        let mut note = Vec::new();
        if c.missing > 0 {
            note.push(format!("`{}` has {} missing values (first at row {}): allowed only where `{alt}` is unavailable", c.name, c.missing, c.first_missing.unwrap_or(0)));
        }
        match stems.iter_mut().find(|s| s.name == name) {
            Some(s) if s.columns.iter().any(|(a, _)| *a == b.alt) => {
                plan.left_out.push((
                    c.name.clone(),
                    format!("a second `{name}` column for `{alt}`"),
                ));
            }
            Some(s) => {
                s.columns.push((b.alt, c.name.clone()));
                s.notes.extend(note);
            }
            None => stems.push(Attribute {
                name,
                columns: vec![(b.alt, c.name.clone())],
                notes: note,
            }),
        }
    }
    plan.attributes.extend(merge_money(stems));
}

/// The first row (from 1) that chooses `alt` where `column` is 0.
fn unavailable_choice(t: &Table, g: &Guess, alt: usize, column: &str) -> Option<usize> {
    let Layout::Wide { choice } = &g.layout else {
        return None;
    };
    let (ch, av) = (t.column(choice)?, t.raw_numbers(column)?);
    let a = &g.alternatives[alt];
    let token = a
        .code
        .map(|c| c.to_string())
        .unwrap_or_else(|| a.name.clone());
    (0..t.nrows)
        .find(|&i| key(ch, i).is_some_and(|k| k.trim() == token) && av[i] == 0.0)
        .map(|i| i + 1)
}

/// Money stems (cost, fare, price, ...) over different alternatives become one attribute.
fn merge_money(stems: Vec<Attribute>) -> Vec<Attribute> {
    let (money, mut rest): (Vec<Attribute>, Vec<Attribute>) = stems
        .into_iter()
        .partition(|s| MONEY_WORDS.contains(&s.name.as_str()));
    let overlap = money.iter().enumerate().any(|(i, a)| {
        money[i + 1..].iter().any(|b| {
            b.columns
                .iter()
                .any(|(x, _)| a.columns.iter().any(|(y, _)| x == y))
        })
    });
    if money.len() < 2 || overlap {
        rest.splice(0..0, money);
        return rest;
    }
    let names: Vec<String> = money.iter().map(|m| m.name.clone()).collect();
    let name = if names.iter().any(|n| n == "cost") {
        "cost".to_string()
    } else {
        names[0].clone()
    };
    let mut merged = Attribute {
        name,
        columns: Vec::new(),
        notes: Vec::new(),
    };
    for m in money {
        merged.columns.extend(m.columns);
        merged.notes.extend(m.notes);
    }
    merged.columns.sort_by_key(|(a, _)| *a);
    merged.notes.insert(0, format!("guessed: {} are one money attribute with one coefficient; if they are in different units, split them", names.join(" and ")));
    rest.insert(0, merged);
    rest
}

/// The role of a column with one value per situation.
fn situation_role(t: &Table, c: &Profile, g: &Guess, plan: &mut Plan) {
    let name = c.name.clone();
    let id_like = words(&name).iter().any(|w| w == "id") || name.to_lowercase().ends_with("id");
    let distinct_situations = c.distinct;
    if id_like && distinct_situations >= g.situations {
        plan.left_out.push((
            name,
            "an identifier (a different value in each situation)".into(),
        ));
        return;
    }
    if counter(t, c, g.situations) {
        plan.left_out.push((
            name,
            "a counter (whole numbers, each once, without gaps): an identifier of the situation"
                .into(),
        ));
        return;
    }
    // A name that is only about the person (`respondent`, `customer_no`), not
    // a measure of them (`household_size`).
    let person = !words(&name).is_empty()
        && words(&name).iter().all(|w| {
            PERSON_WORDS.contains(&w.as_str()) || ["id", "no", "number"].contains(&w.as_str())
        })
        && c.distinct < g.situations;
    if has_word(&name, &SEQUENCE_WORDS) && c.integer && !person {
        plan.left_out.push((
            name,
            "looks like the number of a situation in a decision maker's sequence (a task or occasion number): as a number it would be a trend; use it with care".into(),
        ));
        return;
    }
    if id_like || person {
        if plan.group.is_none() {
            let per = g.situations as f64 / distinct_situations.max(1) as f64;
            plan.group = Some((name, format!("guessed: the decision maker, each value covering {per:.1} situations on average; errors are then clustered by it. Check that it identifies people or households, not places or days")));
        } else {
            plan.left_out
                .push((name, "another identifier whose values repeat".into()));
        }
        return;
    }
    if !c.numeric {
        let shown: Vec<&str> = c.values.iter().take(4).map(String::as_str).collect();
        plan.left_out.push((name, format!("holds text ({} values: {}{}): a characteristic must be a number; make 0/1 columns of its values to use it", c.distinct, shown.join(", "), if c.distinct > 4 { ", ..." } else { "" })));
        return;
    }
    if c.distinct <= 1 {
        plan.left_out.push((
            name,
            "the same value in every row: nothing to estimate".into(),
        ));
        return;
    }
    if has_word(&name, &WEIGHT_WORDS) && c.positive && c.missing == 0 && plan.weight.is_none() {
        plan.weight = Some((name, "guessed from its name: each situation counts by this weight and shares are reported weighted; check it is a sampling or expansion weight".into()));
        return;
    }
    let reason = left_out_reason(t, c, plan);
    plan.characteristics.push(Characteristic {
        name: ident(&name),
        column: name,
        left_out: reason,
    });
}

/// Whole numbers, a different one in each situation, from the smallest to the largest without gaps.
fn counter(t: &Table, c: &Profile, situations: usize) -> bool {
    if !(c.integer && c.missing == 0 && c.distinct == situations && situations > 2) {
        return false;
    }
    let Some(v) = t.raw_numbers(&c.name) else {
        return false;
    };
    let (lo, hi) = v
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), x| (a.min(*x), b.max(*x)));
    hi - lo + 1.0 == situations as f64
}

/// Why a numeric situation-level column stays out of the model, if it should.
fn left_out_reason(t: &Table, c: &Profile, plan: &Plan) -> Option<String> {
    if c.missing > 0 {
        return Some(format!(
            "{} missing values (first at row {}): a characteristic must be finite on every row",
            c.missing,
            c.first_missing.unwrap_or(0)
        ));
    }
    if has_word(&c.name, &CATEGORY_WORDS) && c.integer && c.distinct <= 30 {
        let shown: Vec<&str> = c.values.iter().take(6).map(String::as_str).collect();
        return Some(format!("looks like a category code ({} values: {}): as a number its coefficient would treat the codes as amounts; make 0/1 columns of its values to use it", c.distinct, shown.join(", ")));
    }
    if has_word(&c.name, &TIME_INDEX_WORDS) {
        return Some(
            "looks like a time index (its name): as a number it would be a trend; use it with care"
                .into(),
        );
    }
    let mine = t.raw_numbers(&c.name)?;
    for a in &plan.attributes {
        for (_, col) in &a.columns {
            let Some(other) = t.raw_numbers(col) else {
                continue;
            };
            let r = correlation(mine, other);
            if r.abs() >= COLLINEAR {
                return Some(format!("moves with `{col}` (correlation {r:.2}): both in one model are hard to tell apart; put it in if you mean it"));
            }
        }
    }
    None
}
