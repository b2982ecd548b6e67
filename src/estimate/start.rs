//! What a fit does when its search did not converge: starts or fixed values
//! at which the log-likelihood is not finite are refused, naming them; a
//! search from finite `[parameters]` starts that failed is run again from the
//! default start, and the better of the two is kept with a note.

use super::optimise::Outcome;
use super::Progress;
use crate::design::Design;
use crate::error::{Error, Result};
use crate::model::{self, FamilyRef};
use crate::spec::Spec;

/// The search a fit runs from a start.
type Search = fn(&Spec, &Design, &FamilyRef, Vec<f64>, &[usize], Progress) -> Outcome;

/// The outcome to finish with: `out` itself when it converged; else refuses
/// unusable starts or fixed values, or restarts from the default start.
pub(super) fn settle(
    spec: &Spec,
    design: &Design,
    family: &FamilyRef,
    free: &[usize],
    out: Outcome,
    progress: Progress,
    search: Search,
) -> Result<Outcome> {
    if out.converged && out.ll.is_finite() && out.gradient_norm.is_finite() {
        return Ok(out);
    }
    let given: Vec<f64> = spec.parameters.iter().map(|p| p.start).collect();
    let defaults = model::registry::default_starts(spec);
    let mut at_default = given.clone();
    for &p in free {
        at_default[p] = defaults[p];
    }
    let moved: Vec<usize> = free
        .iter()
        .copied()
        .filter(|&p| given[p] != defaults[p])
        .collect();
    if !finite_at(design, family, &given) {
        // The start itself is unusable (or the fixed values are): refused, naming them.
        return Err(unusable(spec, &given, free, &moved));
    }
    if moved.is_empty() {
        return usable(spec, out, (&given, free, &moved));
    }
    let mut again = search(spec, design, family, at_default, free, progress);
    let why = out
        .note
        .clone()
        .unwrap_or_else(|| "it did not converge".into());
    let better = again.ll.is_finite()
        && (again.converged && !out.converged || again.ll > out.ll || !out.ll.is_finite());
    if !better {
        return usable(spec, out, (&given, free, &moved));
    }
    again.passes += out.passes;
    again.restart = Some(format!(
        "the search from the starts given in [parameters] ({}) stopped ({why}); it was run again from the default start, which reached a higher log-likelihood",
        listed(spec, &given, &moved)
    ));
    usable(spec, again, (&given, free, &moved))
}

/// Whether the log-likelihood and its gradient are finite at `beta` (one pass).
fn finite_at(design: &Design, family: &FamilyRef, beta: &[f64]) -> bool {
    let e = family.evaluate(design, beta, true, false);
    e.ll.is_finite() && e.grad.iter().all(|g| g.is_finite())
}

/// Refuses an outcome whose log-likelihood or gradient is not finite
/// (nothing to report), naming the starts and fixed values it came from.
fn usable(
    spec: &Spec,
    out: Outcome,
    (given, free, moved): (&[f64], &[usize], &[usize]),
) -> Result<Outcome> {
    if out.ll.is_finite() && out.gradient_norm.is_finite() {
        return Ok(out);
    }
    Err(unusable(spec, given, free, moved))
}

/// The error for starts or fixed values at which the log-likelihood is not finite.
fn unusable(spec: &Spec, given: &[f64], free: &[usize], moved: &[usize]) -> Error {
    let fixed: Vec<usize> = (0..given.len()).filter(|p| !free.contains(p)).collect();
    let named = match (moved.is_empty(), fixed.is_empty()) {
        (false, _) => format!("the starts {}", listed(spec, given, moved)),
        (true, false) => format!("the fixed values {}", listed(spec, given, &fixed)),
        (true, true) => "the default start".to_string(),
    };
    Error::spec(
        &spec.path,
        format!(
            "[parameters]: the log-likelihood is not finite at {named}{}: some chosen alternative gets probability 0 there, or the utilities overflow; give values of the size the data's units call for, or remove them",
            if moved.is_empty() || fixed.is_empty() {
                String::new()
            } else {
                format!(" with the fixed values {}", listed(spec, given, &fixed))
            }
        ),
    )
}

/// `` `name` = value `` for each of `which`.
fn listed(spec: &Spec, values: &[f64], which: &[usize]) -> String {
    which
        .iter()
        .map(|&p| format!("`{}` = {:e}", spec.parameters[p].name, values[p]))
        .collect::<Vec<_>>()
        .join(", ")
}
