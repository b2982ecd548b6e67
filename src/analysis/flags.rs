//! 0/1 variables (a promotion flag, eye-level shelving): a "1% change" means
//! nothing for them, so instead of elasticities and marginal effects the
//! analysis reports the change in every share when the flag switches from 0 to
//! 1 for the changed alternative (an attribute) or every decision maker (a
//! characteristic) in every situation, by sample enumeration, with
//! delta-method standard errors.

use serde::Serialize;

use super::delta::delta_se_with;
use super::sensitivity::TermMap;
use super::simulate::shares_with;
use crate::design::Design;
use crate::estimate::Fit;
use crate::model::Family;
use crate::spec::Spec;

/// One share's change when a flag switches from 0 to 1 (JSON `flag_effects`).
#[derive(Clone, Debug, Serialize)]
pub struct FlagRow {
    pub variable: String,
    /// For attributes, the alternative whose flag switches; null for characteristics.
    pub changed: Option<String>,
    pub affected: String,
    /// The share with the flag at 0, and at 1, in every situation.
    pub share_at_0: f64,
    pub share_at_1: f64,
    /// share_at_1 - share_at_0 (a difference of shares, not a percentage).
    pub change: f64,
    pub std_error: f64,
}

/// Whether every value is 0 or 1.
fn is_flag(values: impl Iterator<Item = f64>) -> bool {
    let mut any = false;
    for v in values {
        if v != 0.0 && v != 1.0 {
            return false;
        }
        any = true;
    }
    any
}

/// Attributes whose every value (where the alternative is available) is 0 or 1.
pub fn flag_attributes(d: &Design, map: &TermMap) -> Vec<bool> {
    let j = d.alternatives();
    (0..map.attribute.len())
        .map(|a| {
            let values = (0..j)
                .filter(|&k| map.attribute[a][k].is_some())
                .flat_map(|k| {
                    (0..d.situations())
                        .filter(move |&i| d.available(i, k))
                        .map(move |i| d.obs.attributes[a][i * j + k])
                });
            is_flag(values)
        })
        .collect()
}

/// Characteristics whose every value is 0 or 1.
pub fn flag_characteristics(d: &Design) -> Vec<bool> {
    d.obs
        .characteristics
        .iter()
        .map(|z| is_flag(z.iter().copied()))
        .collect()
}

/// What switches: attribute `a` of alternative `k`, or characteristic `c`.
#[derive(Clone, Copy)]
enum Switch {
    Attribute(usize, usize),
    Characteristic(usize),
}

/// Shares with the flag at `to` in every situation.
fn shares_at(
    family: &dyn Family,
    d: &Design,
    map: &TermMap,
    beta: &[f64],
    s: Switch,
    to: f64,
) -> Vec<f64> {
    let j = d.alternatives();
    shares_with(family, d, beta, None, |i, b, v| match s {
        Switch::Attribute(a, k) => {
            if let (Some(p), true) = (map.attribute[a][k], v[k].is_finite()) {
                v[k] += b[p] * (to - d.obs.attributes[a][i * j + k]);
            }
        }
        Switch::Characteristic(c) => {
            let z = d.obs.characteristics[c][i];
            for (vl, p) in v.iter_mut().zip(&map.characteristic[c]) {
                if let (Some(p), true) = (p, vl.is_finite()) {
                    *vl += b[*p] * (to - z);
                }
            }
        }
    })
}

/// The flag rows of every 0/1 attribute and characteristic of the spec.
pub fn flag_rows(spec: &Spec, fit: &Fit, map: &TermMap) -> Vec<FlagRow> {
    flag_rows_with(spec, fit, map, crate::progress::QUIET)
}

/// `flag_rows`, reporting the phase `flag effects` (the shares at the
/// estimates, then each free parameter's differences) to `sink` when there is a flag.
pub fn flag_rows_with(
    spec: &Spec,
    fit: &Fit,
    map: &TermMap,
    sink: crate::progress::Sink,
) -> Vec<FlagRow> {
    let d = &fit.design;
    let family = &*fit.family;
    let names = spec.alternative_names();
    let mut switches = Vec::new();
    for (a, flag) in flag_attributes(d, map).into_iter().enumerate() {
        if flag {
            for (k, name) in names.iter().enumerate() {
                if map.attribute[a][k].is_some() {
                    switches.push((
                        spec.attributes[a].name.clone(),
                        Some(name.clone()),
                        Switch::Attribute(a, k),
                    ));
                }
            }
        }
    }
    for (c, flag) in flag_characteristics(d).into_iter().enumerate() {
        if flag {
            switches.push((
                spec.characteristics[c].name.clone(),
                None,
                Switch::Characteristic(c),
            ));
        }
    }
    if switches.is_empty() {
        return Vec::new();
    }
    let at = |beta: &[f64], to: f64| -> Vec<f64> {
        switches
            .iter()
            .flat_map(|(_, _, s)| shares_at(family, d, map, beta, *s, to))
            .collect()
    };
    let phase = crate::progress::Phase::start(sink, "flag effects", fit.free.len() + 2);
    let (s0, s1) = (at(&fit.beta, 0.0), at(&fit.beta, 1.0));
    phase.step();
    let change = |b: &[f64]| -> Vec<f64> {
        at(b, 1.0)
            .iter()
            .zip(at(b, 0.0))
            .map(|(x, y)| x - y)
            .collect()
    };
    let se = delta_se_with(fit, &change, &|| phase.step());
    phase.finish();
    let j = d.alternatives();
    let mut out = Vec::new();
    for (n, (variable, changed, _)) in switches.iter().enumerate() {
        for &jj in &map.focus {
            let affected = &names[jj];
            let idx = n * j + jj;
            out.push(FlagRow {
                variable: variable.clone(),
                changed: changed.clone(),
                affected: affected.clone(),
                share_at_0: s0[idx],
                share_at_1: s1[idx],
                change: s1[idx] - s0[idx],
                std_error: se[idx],
            });
        }
    }
    out
}
