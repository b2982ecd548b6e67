//! How the walk is built from an `Analysis`: each variable's matrices (rows
//! the alternatives whose value changes, or the variable; columns the shares),
//! the diversion matrices, ratios with what they are for, random coefficients
//! told whether their location is the mean of a logarithm, derived figures
//! grouped and the tests in report order.

use super::estimates::MEAN_OF_LOG;
use super::{
    Axis, Cell, Group, Holds, Labelled, Matrix, Measure, Random, Ratio, Role, Simulated, Test,
    TestKind, Variable,
};
use std::collections::{HashMap, HashSet};

use crate::analysis::random::Figure;
use crate::analysis::Analysis;
use crate::estimate::Fit;
use crate::spec::Spec;

pub(super) fn labelled(label: &str, value: f64, std_error: f64) -> Labelled {
    Labelled {
        label: label.to_string(),
        figure: Figure { value, std_error },
    }
}

pub(super) fn shares(names: &[String]) -> Axis {
    Axis {
        holds: Holds::ShareOf,
        labels: names.to_vec(),
    }
}

fn one_row(name: &str) -> Axis {
    Axis {
        holds: Holds::Variable,
        labels: vec![name.to_string()],
    }
}

fn value(value: f64, std_error: f64) -> Cell {
    Cell::Value(Figure { value, std_error })
}

/// The rows of a variable: the alternatives whose value changes (in spec
/// order, those with a figure) for an attribute, the variable itself for a
/// characteristic.
fn rows_of(name: &str, role: Role, names: &[String], changed: &[Option<&str>]) -> Axis {
    let changed: HashSet<&str> = changed.iter().flatten().copied().collect();
    match role {
        Role::Attribute => Axis {
            holds: Holds::Changed(name.to_string()),
            labels: names
                .iter()
                .filter(|n| changed.contains(n.as_str()))
                .cloned()
                .collect(),
        },
        Role::Characteristic => one_row(name),
    }
}

/// Each variable with figures, attributes first, in spec order.
pub(super) fn variables(spec: &Spec, a: &Analysis, names: &[String]) -> Vec<Variable> {
    let attributes = spec.attributes.iter().map(|x| (&x.name, Role::Attribute));
    let characteristics = spec
        .characteristics
        .iter()
        .map(|x| (&x.name, Role::Characteristic));
    attributes
        .chain(characteristics)
        .filter_map(|(name, role)| variable(a, names, name, role))
        .collect()
}

/// Figures by (changed alternative, column): the first of each pair, as a
/// search in list order would find it (with many alternatives a search per
/// cell would take minutes).
type Index<'a, T> = HashMap<(Option<&'a str>, &'a str), &'a T>;

fn index<'a, T>(rows: &[&'a T], key: impl Fn(&'a T) -> (Option<&'a str>, &'a str)) -> Index<'a, T> {
    let mut out = HashMap::with_capacity(rows.len());
    for &r in rows {
        out.entry(key(r)).or_insert(r);
    }
    out
}

/// The figure of a row of a variable's matrix (the changed alternative for
/// an attribute, the variable itself for a characteristic) and a column.
fn at<'a, T>(ix: &Index<'a, T>, role: Role, row: &str, column: &str) -> Option<&'a T> {
    let changed = match role {
        Role::Attribute => Some(row),
        Role::Characteristic => None,
    };
    ix.get(&(changed, column)).copied()
}

fn variable(a: &Analysis, names: &[String], name: &str, role: Role) -> Option<Variable> {
    let el: Vec<_> = a
        .elasticities
        .iter()
        .filter(|e| e.variable == name)
        .collect();
    if el.is_empty() {
        return flag(a, names, name, role);
    }
    let changed: Vec<Option<&str>> = el.iter().map(|e| e.changed.as_deref()).collect();
    let rows = rows_of(name, role, names, &changed);
    let ix = index(&el, |e| (e.changed.as_deref(), e.affected.as_str()));
    let find = |r: &str, c: &str| at(&ix, role, r, c);
    let figures = Matrix::build(
        Measure::PointElasticity,
        rows.clone(),
        shares(names),
        |r, c| find(r, c).map_or(Cell::Missing, |e| value(e.value, e.std_error)),
    );
    let arc = Matrix::build(
        Measure::ArcElasticity {
            change: a.arc_change,
        },
        rows.clone(),
        shares(names),
        |r, c| find(r, c).map_or(Cell::Missing, |e| value(e.arc, f64::NAN)),
    );
    let me: Vec<_> = a
        .marginal_effects
        .iter()
        .filter(|e| e.variable == name)
        .collect();
    let ix = index(&me, |e| (e.changed.as_deref(), e.alternative.as_str()));
    let marginal = (!me.is_empty()).then(|| {
        Matrix::build(Measure::MarginalEffect, rows, shares(names), |r, c| {
            at(&ix, role, r, c).map_or(Cell::Missing, |e| value(e.value, e.std_error))
        })
    });
    Some(Variable {
        name: name.to_string(),
        role,
        flag: false,
        figures,
        arc: Some(arc),
        marginal,
    })
}

/// A 0/1 variable's switch from 0 to 1, if the analysis treated it as one.
fn flag(a: &Analysis, names: &[String], name: &str, role: Role) -> Option<Variable> {
    let rows: Vec<_> = a
        .flag_effects
        .iter()
        .filter(|f| f.variable == name)
        .collect();
    if rows.is_empty() {
        return None;
    }
    let changed: Vec<Option<&str>> = rows.iter().map(|f| f.changed.as_deref()).collect();
    let axis = rows_of(name, role, names, &changed);
    let ix = index(&rows, |f| (f.changed.as_deref(), f.affected.as_str()));
    let figures = Matrix::build(Measure::FlagSwitch, axis, shares(names), |r, c| {
        at(&ix, role, r, c).map_or(Cell::Missing, |f| value(f.change, f.std_error))
    });
    Some(Variable {
        name: name.to_string(),
        role,
        flag: true,
        figures,
        arc: None,
        marginal: None,
    })
}

/// A diversion matrix: the rows' alternatives (those with a figure, in spec
/// order) against where demand moves to; a dash on the diagonal.
fn diversion(
    measure: Measure,
    holds: Holds,
    names: &[String],
    rows: impl Fn(&str) -> bool,
    find: impl Fn(&str, &str) -> Option<f64>,
) -> Matrix {
    let rows = Axis {
        holds,
        labels: names.iter().filter(|n| rows(n)).cloned().collect(),
    };
    let to = Axis {
        holds: Holds::MovesTo,
        labels: names.to_vec(),
    };
    Matrix::build(measure, rows, to, |r, c| match find(r, c) {
        _ if r == c => Cell::Same,
        Some(v) => value(v, f64::NAN),
        None => Cell::Missing,
    })
}

/// Figures by (row, column) alternative, the first of each pair, and the rows.
fn pairs<'a, T>(
    d: &'a [T],
    key: impl Fn(&'a T) -> (&'a str, &'a str, f64),
) -> (HashMap<(&'a str, &'a str), f64>, HashSet<&'a str>) {
    let mut ix = HashMap::with_capacity(d.len());
    let mut rows = HashSet::new();
    for x in d {
        let (r, c, v) = key(x);
        ix.entry((r, c)).or_insert(v);
        rows.insert(r);
    }
    (ix, rows)
}

pub(super) fn withdrawal(a: &Analysis, names: &[String]) -> Option<Matrix> {
    let d = &a.diversion;
    let (ix, rows) = pairs(d, |x| (x.removed.as_str(), x.to.as_str(), x.share));
    (!d.is_empty()).then(|| {
        diversion(
            Measure::Withdrawal,
            Holds::Withdrawn,
            names,
            |n| rows.contains(n),
            |r, c| ix.get(&(r, c)).copied(),
        )
    })
}

pub(super) fn price_diversion(a: &Analysis, names: &[String]) -> Option<Matrix> {
    let d = &a.price_diversion;
    let first = d.first()?;
    let (ix, rows) = pairs(d, |x| (x.changed.as_str(), x.to.as_str(), x.ratio));
    Some(diversion(
        Measure::PriceDiversion,
        Holds::Changed(first.attribute.clone()),
        names,
        |n| rows.contains(n),
        |r, c| ix.get(&(r, c)).copied(),
    ))
}

/// "one unit more", "60 units less": what a ratio's willingness to pay is for.
fn per_units(scale: f64, per: &str) -> String {
    let way = per.strip_prefix("unit ").unwrap_or(per);
    if scale == 1.0 {
        format!("one unit {way}")
    } else {
        format!("{} units {way}", scale.abs())
    }
}

pub(super) fn ratio(r: &crate::analysis::RatioRow) -> Ratio {
    Ratio {
        name: r.name.clone(),
        value: Figure {
            value: r.value,
            std_error: r.std_error,
        },
        unit: r.unit.clone(),
        per: per_units(r.scale, &r.per),
        numerator: r.numerator.clone(),
        denominator: r.denominator.clone(),
        delta: (r.ci_low, r.ci_high),
        krinsky_robb: (r.draws > 0).then_some(Simulated {
            low: r.kr_low,
            high: r.kr_high,
            draws: r.draws,
            seed: r.seed,
        }),
        distribution: r.distribution.clone(),
        note: r.note.clone(),
    }
}

/// The analysis's random coefficients, each told whether its location is the
/// mean of its logarithm (asked of the family's random coefficients, in the
/// same order) and, in willingness-to-pay space, what it is.
pub(super) fn random(spec: &Spec, fit: &Fit, a: &Analysis) -> Vec<Random> {
    let terms = fit.family.random_coefficients();
    let space = super::Space::of(spec, fit);
    a.random_coefficients
        .iter()
        .enumerate()
        .map(|(k, row)| Random {
            row: row.clone(),
            location_label: match terms.get(k) {
                Some(t) if t.distribution.is_log() => MEAN_OF_LOG,
                _ => "location",
            },
            reads: terms
                .get(k)
                .zip(space.as_ref())
                .and_then(|(t, s)| s.reads(t.location)),
        })
        .collect()
}

/// The derived figures by group; the latent classes' shares are left to
/// the classes' own tables (`walk::classes`).
pub(super) fn derived(a: &Analysis) -> Vec<Group> {
    let mut groups: Vec<Group> = Vec::new();
    for r in a.derived.iter().filter(|r| r.group != crate::model::SHARES) {
        let row = labelled(&r.name, r.value, r.std_error);
        match groups.iter_mut().find(|g| g.name == r.group) {
            Some(g) => g.rows.push(row),
            None => groups.push(Group {
                name: r.group.clone(),
                rows: vec![row],
            }),
        }
    }
    groups
}

pub(super) fn tests(a: &Analysis) -> Vec<Test> {
    let mut out = Vec::new();
    if let Some(t) = &a.single_index {
        out.push(Test {
            name: t.name.clone(),
            statistic: t.statistic,
            df: t.df,
            p_value: t.p_value,
            kind: TestKind::SingleIndex {
                unordered_log_likelihood: t.unordered_log_likelihood,
                note: t.note.clone(),
            },
        });
    }
    for t in a.family_test.iter().chain(a.wald.iter()) {
        out.push(Test {
            name: t.name.clone(),
            statistic: t.statistic,
            df: t.df,
            p_value: t.p_value,
            kind: TestKind::Wald,
        });
    }
    if let Some(t) = &a.iia {
        out.push(Test {
            name: format!("IIA (Hausman-McFadden, `{}` dropped)", t.dropped),
            statistic: t.statistic,
            df: t.df,
            p_value: t.p_value,
            kind: TestKind::Iia {
                dropped: t.dropped.clone(),
                compared: t.compared.clone(),
                note: t.note.clone(),
            },
        });
    }
    out
}
