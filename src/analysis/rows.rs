//! The elasticity and marginal-effect rows of the analysis: point figures
//! with delta-method errors (an analytic Jacobian where the family has one,
//! else central differences) and arc elasticities from one pass over the
//! fit's cached base.

use super::{analytic, delta, flags, sensitivity, simulate};
use super::{ElasticityRow, MarginalRow, Sens, TermMap};
use crate::estimate::Fit;
use crate::progress::{Phase, Sink, QUIET};
use crate::spec::Spec;

/// Elasticity and marginal-effect rows with delta-method errors and arc elasticities.
pub fn sensitivity_rows(
    spec: &Spec,
    fit: &Fit,
    arc_change: f64,
) -> (Vec<ElasticityRow>, Vec<MarginalRow>, Sens) {
    let all: Vec<usize> = (0..fit.design.alternatives()).collect();
    sensitivity_rows_with(spec, fit, (arc_change, &all), QUIET)
}

/// `sensitivity_rows`, reporting the phase `elasticities` to `sink`: the
/// figures at the estimates, each free parameter's differences (or the one
/// analytic pass), then the arc pass.
pub fn sensitivity_rows_with(
    spec: &Spec,
    fit: &Fit,
    (arc_change, focus): (f64, &[usize]),
    sink: Sink,
) -> (Vec<ElasticityRow>, Vec<MarginalRow>, Sens) {
    let map = TermMap::focused(spec, &fit.design, focus);
    let phase = Phase::start(sink, "elasticities", fit.free.len() + 2);
    let (sens, se) = figures_and_errors(fit, &map, &phase);
    let (base_shares, arcs) = arc_shares(spec, fit, &map, arc_change);
    phase.finish();
    let fig = Figures {
        flat: sens.flat(),
        se,
        base_shares,
        arcs,
        arc_change,
    };
    let mut out = (Vec::new(), Vec::new());
    let next = attribute_rows(spec, fit, &map, &fig, &mut out);
    characteristic_rows(spec, fit, (&map, &fig), next, &mut out);
    (out.0, out.1, sens)
}

/// The figures at the estimates and their delta-method errors: analytic
/// derivatives in one pass where the family has them, else differences.
fn figures_and_errors(fit: &Fit, map: &TermMap, phase: &Phase) -> (Sens, Vec<f64>) {
    let (d, family) = (&fit.design, &*fit.family);
    match analytic::sensitivities_with_jacobian(
        family,
        d,
        map,
        &fit.beta,
        &fit.free,
        Some(fit.baseline()),
    ) {
        Some((sens, jac)) => {
            phase.advance(fit.free.len() + 1);
            (sens, delta::se_from_jacobian(fit, &jac))
        }
        None => (
            sensitivity::sensitivities(family, d, map, &fit.beta),
            delta::delta_se_with(
                fit,
                &|b| sensitivity::sensitivities(family, d, map, b).flat(),
                &|| phase.step(),
            ),
        ),
    }
}

/// What the rows are read from: the flattened figures, their errors, and the
/// base shares and shares after each arc step.
struct Figures {
    flat: Vec<f64>,
    se: Vec<f64>,
    base_shares: Vec<f64>,
    arcs: Vec<Vec<f64>>,
    arc_change: f64,
}

impl Figures {
    /// The arc elasticity of alternative `jj`'s share after arc step `arc`.
    fn arc(&self, arc: usize, jj: usize) -> f64 {
        (self.arcs[arc][jj] / self.base_shares[jj] - 1.0) / self.arc_change
    }
}

type Rows = (Vec<ElasticityRow>, Vec<MarginalRow>);

/// The rows of every attribute in every alternative it enters; returns the
/// number of arc steps read.
fn attribute_rows(spec: &Spec, fit: &Fit, map: &TermMap, fig: &Figures, out: &mut Rows) -> usize {
    let j = map.focus.len();
    let names = spec.alternative_names();
    let flag_attr = flags::flag_attributes(&fit.design, map);
    let off_me = spec.attributes.len() * j * j;
    let mut next = 0;
    for (a, attr) in spec.attributes.iter().enumerate() {
        for (kf, &k) in map.focus.iter().enumerate() {
            if map.attribute[a][k].is_none() {
                continue;
            }
            let arc = next;
            next += 1;
            for (jf, &jj) in map.focus.iter().enumerate() {
                let idx = (a * j + kf) * j + jf;
                // A 0/1 flag has no elasticity (see `flags`); its derivative is kept.
                if !flag_attr[a] {
                    out.0.push(ElasticityRow {
                        variable: attr.name.clone(),
                        changed: Some(names[k].clone()),
                        affected: names[jj].clone(),
                        value: fig.flat[idx],
                        std_error: fig.se[idx],
                        arc: fig.arc(arc, jj),
                    });
                }
                out.1.push(MarginalRow {
                    variable: attr.name.clone(),
                    changed: Some(names[k].clone()),
                    alternative: names[jj].clone(),
                    value: fig.flat[off_me + idx],
                    std_error: fig.se[off_me + idx],
                });
            }
        }
    }
    next
}

/// The rows of every characteristic, whose arc steps follow the attributes' from `next`.
fn characteristic_rows(
    spec: &Spec,
    fit: &Fit,
    (map, fig): (&TermMap, &Figures),
    next: usize,
    out: &mut Rows,
) {
    let j = map.focus.len();
    let names = spec.alternative_names();
    let flag_char = flags::flag_characteristics(&fit.design);
    let off_ce = 2 * spec.attributes.len() * j * j;
    let off_cm = off_ce + spec.characteristics.len() * j;
    for (c, ch) in spec.characteristics.iter().enumerate() {
        let arc = next + c;
        for (jf, &jj) in map.focus.iter().enumerate() {
            let name = &names[jj];
            let idx = c * j + jf;
            if !flag_char[c] {
                out.0.push(ElasticityRow {
                    variable: ch.name.clone(),
                    changed: None,
                    affected: name.clone(),
                    value: fig.flat[off_ce + idx],
                    std_error: fig.se[off_ce + idx],
                    arc: fig.arc(arc, jj),
                });
            }
            out.1.push(MarginalRow {
                variable: ch.name.clone(),
                changed: None,
                alternative: name.clone(),
                value: fig.flat[off_cm + idx],
                std_error: fig.se[off_cm + idx],
            });
        }
    }
}

/// Base shares and the shares after each arc step (every attribute of every
/// alternative it enters, then every characteristic), in one pass over the
/// fit's cached base.
fn arc_shares(spec: &Spec, fit: &Fit, map: &TermMap, arc_change: f64) -> (Vec<f64>, Vec<Vec<f64>>) {
    let d = &fit.design;
    let j = d.alternatives();
    let mut edits: Vec<Box<simulate::EditFn>> = Vec::new();
    for a in 0..spec.attributes.len() {
        // In the rows' order: the focus's alternatives in turn.
        for &k in &map.focus {
            let Some(param) = map.attribute[a][k] else {
                continue;
            };
            edits.push(Box::new(move |i: usize, b: &[f64], v: &mut [f64]| {
                if v[k].is_finite() {
                    v[k] += b[param] * d.obs.attributes[a][i * j + k] * arc_change;
                }
            }));
        }
    }
    for c in 0..spec.characteristics.len() {
        edits.push(Box::new(move |i: usize, b: &[f64], v: &mut [f64]| {
            let z = d.obs.characteristics[c][i];
            for (vl, param) in v.iter_mut().zip(&map.characteristic[c]) {
                if let (Some(p), true) = (param, vl.is_finite()) {
                    *vl += b[*p] * z * arc_change;
                }
            }
        }));
    }
    let refs: Vec<&simulate::EditFn> = edits.iter().map(|e| &**e).collect();
    simulate::shares_many(&*fit.family, d, &fit.beta, fit.baseline(), &refs)
}
