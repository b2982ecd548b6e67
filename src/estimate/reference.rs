//! The constants-only reference model of a fit (the ρ² against constants):
//! the spec reduced to its alternative-specific constants (and the family's
//! own parameters it keeps in the reference), fitted quietly. Its search
//! starts from the constants that reproduce the observed shares.

use std::sync::Arc;

use super::{optimise, Step};
use crate::data::Observations;
use crate::design::{Design, Value};
use crate::error::Result;
use crate::model;
use crate::spec::{Spec, Term};

/// The log-likelihood at the maximum of the constants-only model of `spec`.
pub fn constants_log_likelihood(spec: &Spec, obs: Arc<Observations>) -> Result<f64> {
    let cspec = spec.constants_only();
    let cd = Design::build(&cspec, obs);
    let cfree: Vec<usize> = (0..cd.params)
        .filter(|&p| cspec.parameters[p].fixed.is_none())
        .collect();
    let quiet = |_s: Step| {};
    let mut cstart: Vec<f64> = cspec.parameters.iter().map(|p| p.start).collect();
    share_start(&cspec, &cd, &mut cstart);
    // Built for the reduced spec: its own parameters sit at other positions.
    // They are held at their starting values; at their null values the
    // simpler family (if any) gives the same likelihood, faster.
    let cfamily = model::for_spec(&cspec)?;
    let held_at_null = cspec
        .parameters
        .iter()
        .all(|p| !matches!(p.term, Term::Family(_)) || p.start == p.null);
    let cfamily = match (held_at_null, cfamily.simpler()) {
        (true, Some(s)) => s,
        _ => cfamily,
    };
    let ll = optimise::maximise_level(&cd, &*cfamily, &cstart, &cfree, &quiet).ll;
    if ll.is_finite() {
        return Ok(ll);
    }
    // Starts of the family's own parameters the reference model cannot use
    // (absurd cut-points): its default start instead.
    let defaults = model::registry::default_starts(&cspec);
    for &p in &cfree {
        if matches!(cspec.parameters[p].term, Term::Family(_)) {
            cstart[p] = defaults[p];
        }
    }
    Ok(optimise::maximise_level(&cd, &*cfamily, &cstart, &cfree, &quiet).ll)
}

/// Starts each free constant at the log of its alternative's weighted share
/// of the choices over the share of the alternative without a constant: the
/// estimate itself for a logit whose alternatives are always available (the
/// maximum reproduces the shares), a nearby start otherwise. Constants of
/// alternatives never chosen, and every constant when no alternative is
/// without one or it is never chosen, keep their start.
fn share_start(spec: &Spec, d: &Design, start: &mut [f64]) {
    let j = d.alternatives();
    let mut share = vec![0.0; j];
    for (&c, &w) in d.obs.chosen.iter().zip(&d.obs.weight) {
        share[c as usize] += w;
    }
    let mut owner = vec![None; start.len()];
    let mut has_constant = vec![false; j];
    for (m, feats) in d.features.iter().enumerate() {
        for f in feats {
            if f.value == Value::One && spec.parameters[f.param].term == Term::Constant {
                owner[f.param] = Some(m);
                has_constant[m] = true;
            }
        }
    }
    let Some(base) = (0..j).find(|&m| !has_constant[m]) else {
        return;
    };
    if share[base] <= 0.0 {
        return;
    }
    for (p, o) in owner.iter().enumerate() {
        if let (Some(m), None) = (o, spec.parameters[p].fixed) {
            if share[*m] > 0.0 {
                start[p] = (share[*m] / share[base]).ln();
            }
        }
    }
}
