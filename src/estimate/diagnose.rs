//! Diagnostics of a fit that name parameters and spec terms: flat directions
//! of the Hessian (not identified), coefficients running off (separation),
//! no convergence, and alternatives never chosen or never available.

use super::inference::{self, Diagnostic, DiagnosticKind};
use super::optimise::{self, Outcome};
use crate::data::Observations;
use crate::design::Design;
use crate::model::Family;
use crate::spec::Spec;

/// What the diagnostics read: the free positions, the names, the search's
/// outcome, the Hessian's flat directions (free positions) and each
/// parameter's scale in the data's units.
pub struct Found<'a> {
    pub free: &'a [usize],
    pub names: &'a [String],
    pub out: &'a Outcome,
    pub flats: &'a [Vec<usize>],
    pub scales: &'a [f64],
}

/// A (negative-)lognormal coefficient whose location has run so far down
/// that the coefficient is 0 to eight digits: one standard deviation of its
/// variable moves utility by less than 1e-8 at the 99.9th percentile of the
/// coefficient's distribution. Returns (location, spread) of each.
pub fn opposite_sign(family: &dyn Family, d: &Design, beta: &[f64]) -> Vec<(usize, usize)> {
    family
        .random_coefficients()
        .into_iter()
        .filter(|rc| rc.distribution.is_log())
        .filter(|rc| {
            let top = beta[rc.location] + 3.1 * rc.scale(beta);
            top.exp() * crate::model::hessian::variable_spread(d, rc.location) < 1e-8
        })
        .map(|rc| (rc.location, rc.spread))
        .collect()
}

/// All findings about a fit.
pub fn diagnose(
    spec: &Spec,
    design: &Design,
    obs: &Observations,
    family: &dyn Family,
    found: &Found,
) -> Vec<Diagnostic> {
    let Found {
        free,
        names,
        out,
        flats,
        scales,
    } = *found;
    let mut diagnostics = Vec::new();
    let signs = opposite_sign(family, design, &out.beta);
    let skip: Vec<usize> = signs.iter().flat_map(|&(l, s)| [l, s]).collect();
    let runaway = inference::runaway(&out.beta, free, scales, &skip);
    let never_chosen = never_chosen(spec, design, obs);
    for group in flats {
        if group.len() == 1 && never_chosen.contains(&free[group[0]]) {
            continue;
        }
        if group.iter().all(|&x| skip.contains(&free[x])) {
            continue; // said below, with the opposite sign
        }
        diagnostics.push(not_identified(spec, free, names, group, &runaway));
    }
    for &(location, spread) in &signs {
        diagnostics.push(wrong_sign(spec, family, names, location, spread, out));
    }
    separation(
        spec,
        names,
        &out.beta,
        &runaway,
        &never_chosen,
        &mut diagnostics,
    );
    search_findings(free, out, &mut diagnostics);
    let unused = Unused {
        free,
        flats,
        never_chosen: &never_chosen,
    };
    alternatives(spec, design, obs, &unused, &mut diagnostics);
    diagnostics
}

/// What the search itself found: no convergence, nothing to estimate, a restart.
fn search_findings(free: &[usize], out: &Outcome, diagnostics: &mut Vec<Diagnostic>) {
    if !out.converged {
        diagnostics.push(Diagnostic {
            code: None,
            kind: DiagnosticKind::NotConverged,
            parameters: Vec::new(),
            message: format!(
                "the fit did not converge ({}, tolerance {:.0e}){}",
                if out.criterion.is_finite() {
                    format!("Newton decrement {:.3e}", out.criterion)
                } else {
                    "no Newton step could be computed".to_string()
                },
                optimise::NEWTON_TOLERANCE,
                out.note
                    .as_ref()
                    .map(|n| format!(": {n}"))
                    .unwrap_or_default()
            ),
        });
    }
    if free.is_empty() {
        diagnostics.push(Diagnostic {
            code: None,
            kind: DiagnosticKind::AllFixed,
            parameters: Vec::new(),
            message: "every parameter is fixed in [parameters]: the model is evaluated at the given values (log-likelihood and fit statistics at them) and nothing is estimated, so there are no standard errors".into(),
        });
    }
    if let Some(why) = &out.restart {
        diagnostics.push(Diagnostic {
            code: None,
            kind: DiagnosticKind::Restarted,
            parameters: Vec::new(),
            message: why.clone(),
        });
    }
}

/// Coefficients running off (except never-chosen alternatives' constants, said once below).
fn separation(
    spec: &Spec,
    names: &[String],
    beta: &[f64],
    runaway: &[(usize, f64)],
    never_chosen: &[usize],
    diagnostics: &mut Vec<Diagnostic>,
) {
    for &(p, spread) in runaway {
        if never_chosen.contains(&p) {
            continue;
        }
        diagnostics.push(Diagnostic {
            code: None,
            kind: DiagnosticKind::Separation,
            parameters: vec![names[p].clone()],
            message: format!(
                "`{}` = {} runs off (one standard deviation of its variable moves utility by {}): the variable (from {}) separates the choices almost perfectly, so the estimate and its error are not meaningful",
                names[p],
                short(beta[p]),
                short(spread),
                spec.term_label(&spec.parameters[p].term)
            ),
        });
    }
}

/// The diagnostic of a (negative-)lognormal coefficient whose location ran
/// off to minus infinity: the coefficient is 0 and the data prefer the other sign.
fn wrong_sign(
    spec: &Spec,
    family: &dyn Family,
    names: &[String],
    location: usize,
    spread: usize,
    out: &Outcome,
) -> Diagnostic {
    let rc = family
        .random_coefficients()
        .into_iter()
        .find(|rc| rc.location == location);
    let (this, other, sign) = match rc.map(|rc| rc.distribution) {
        Some(crate::model::distribution::Distribution::NegativeLognormal) => {
            ("negative-lognormal", "lognormal", "positive")
        }
        _ => ("lognormal", "negative-lognormal", "negative"),
    };
    Diagnostic {
        code: None,
        kind: DiagnosticKind::OppositeSign,
        parameters: vec![names[location].clone(), names[spread].clone()],
        message: format!(
            "`{}` (from {}) is {this}, so its coefficient has one sign, but the data prefer a {sign} coefficient: the location of its logarithm ran down to {} and the coefficient is all but 0, so its standard errors are withheld; use random = \"{other}\" or \"normal\"",
            names[location],
            spec.term_label(&spec.parameters[location].term),
            short(out.beta[location]),
        ),
    }
}

/// Constants of alternatives that are available but never chosen: their own
/// diagnostic explains why they run off, so they are reported once.
fn never_chosen(spec: &Spec, design: &Design, obs: &Observations) -> Vec<usize> {
    (0..design.params)
        .filter(|&p| {
            let par = &spec.parameters[p];
            par.term == crate::spec::Term::Constant
                && par.alternative.is_some_and(|a| {
                    !obs.chosen.iter().any(|&c| c as usize == a)
                        && (0..design.situations()).any(|i| design.available(i, a))
                })
        })
        .collect()
}

/// One flat direction of the Hessian: the parameters not identified, and why.
fn not_identified(
    spec: &Spec,
    free: &[usize],
    names: &[String],
    group: &[usize],
    runaway: &[(usize, f64)],
) -> Diagnostic {
    let params: Vec<String> = group.iter().map(|&x| names[free[x]].clone()).collect();
    let terms: Vec<String> = group
        .iter()
        .map(|&x| spec.term_label(&spec.parameters[free[x]].term))
        .fold(Vec::new(), |mut v, t| {
            if !v.contains(&t) {
                v.push(t)
            }
            v
        });
    // A flat direction next to a coefficient that runs off comes from
    // separation (fitted probabilities of 0 or 1), not from collinearity.
    let runners: Vec<String> = group
        .iter()
        .filter(|&&x| runaway.iter().any(|r| r.0 == free[x]))
        .map(|&x| format!("`{}`", names[free[x]]))
        .collect();
    let listed = params
        .iter()
        .map(|p| format!("`{p}`"))
        .collect::<Vec<_>>()
        .join(", ");
    let message = if !runners.is_empty() {
        let (what, them) = if params.len() == 1 {
            (format!("parameter {listed} is"), "it")
        } else {
            (format!("parameters {listed} are"), "them")
        };
        format!(
            "{what} not identified (from {}): {} runs off, so the fitted probabilities are all but 0 or 1 and the data no longer pin {them} down",
            terms.join(", "),
            runners.join(", ")
        )
    } else if params.len() == 1 {
        format!(
            "parameter `{}` is not identified: the data carry no information on it (from {}); drop the term, fix it in [parameters], or check that its variable varies across alternatives and situations",
            params[0], terms[0]
        )
    } else {
        format!(
            "parameters {listed} are not identified together: only a combination of them is estimable (from {}); their variables are collinear, so drop or fix one",
            terms.join(", ")
        )
    };
    Diagnostic {
        code: None,
        kind: DiagnosticKind::NotIdentified,
        parameters: params,
        message,
    }
}

/// The free positions, the flat directions and the never-chosen constants, for
/// the alternatives' findings.
struct Unused<'a> {
    free: &'a [usize],
    flats: &'a [Vec<usize>],
    never_chosen: &'a [usize],
}

/// Alternatives never available, and alternatives available but never chosen.
fn alternatives(
    spec: &Spec,
    design: &Design,
    obs: &Observations,
    unused: &Unused,
    diagnostics: &mut Vec<Diagnostic>,
) {
    let Unused {
        free,
        flats,
        never_chosen,
    } = *unused;
    if design.alternatives() != spec.alternatives.len() {
        // Sampled sets: slots, not alternatives (the full sets are not here).
        return;
    }
    let tables = matches!(spec.data.layout, crate::spec::Layout::Tables { .. });
    for (a, alt) in spec.alternatives.iter().enumerate() {
        if tables && !spec.constants {
            // Hundreds of alternatives without constants: one never chosen
            // or closed everywhere leaves no parameter unidentified.
            break;
        }
        let avail = (0..design.situations())
            .filter(|&i| design.available(i, a))
            .count();
        let chosen = obs.chosen.iter().filter(|&&c| c as usize == a).count();
        let asc: Vec<String> = spec
            .parameters
            .iter()
            .filter(|p| p.alternative == Some(a) && p.term == crate::spec::Term::Constant)
            .map(|p| p.name.clone())
            .collect();
        if avail == 0 {
            diagnostics.push(Diagnostic {
                code: None,
                kind: DiagnosticKind::NeverAvailable,
                parameters: asc,
                message: format!(
                    "alternative `{}` is never available, so nothing about it can be estimated",
                    alt.name
                ),
            });
        } else if chosen == 0 {
            // The flat direction of its constant (suppressed above) withholds the errors.
            let withheld = flats.iter().any(|g| {
                g.len() == 1
                    && never_chosen.contains(&free[g[0]])
                    && spec.parameters[free[g[0]]].alternative == Some(a)
            });
            let note = if withheld {
                "; standard errors are withheld while it stays in the model (fix its constant in [parameters] or drop the alternative)"
            } else {
                ""
            };
            diagnostics.push(Diagnostic {
                code: None,
                kind: DiagnosticKind::NeverChosen,
                parameters: asc,
                message: format!(
                    "alternative `{}` is never chosen (available in {avail} situations): its constant runs to minus infinity{note}",
                    alt.name
                ),
            });
        }
    }
}

/// A number for a sentence: four decimals for ordinary sizes, e-notation for huge or tiny ones.
fn short(x: f64) -> String {
    if x != 0.0 && !(1e-3..1e6).contains(&x.abs()) {
        format!("{x:.3e}")
    } else {
        format!("{x:.4}")
    }
}

/// Warnings on a search from several starts: few of them reached the best
/// log-likelihood (fewer than a quarter, or only one: another start may
/// find a higher maximum), or some ran off towards a maximum at infinity.
pub fn starts(s: Option<&crate::model::Starts>) -> Vec<Diagnostic> {
    let Some(s) = s else {
        return Vec::new();
    };
    let mut out = Vec::new();
    let few = s.reached_best < 2 || 4 * s.reached_best < s.tried;
    if s.tried > 1 && few {
        out.push(Diagnostic {
            kind: DiagnosticKind::Starts,
            code: None,
            parameters: Vec::new(),
            message: format!(
                "only {} of {} starts reached the best log-likelihood (within {:.3}): the likelihood has several maxima here and another start may find a higher one; run more starts ([model].starts) or another seed ([model].seed) and compare",
                s.reached_best, s.tried, s.tolerance
            ),
        });
    }
    if s.ran_off > 0 {
        out.push(Diagnostic {
            kind: DiagnosticKind::Starts,
            code: None,
            parameters: Vec::new(),
            message: format!(
                "{} of {} starts stopped because a class's coefficients ran off towards a maximum at infinity (a class predicting a few choices perfectly); {}",
                s.ran_off,
                s.tried,
                if s.ran_off == s.tried {
                    "every start did, so the fit continued from the best of them: its estimates are not meaningful; fit fewer classes or make parameters common"
                } else {
                    "the fit continued from the best start that did not"
                }
            ),
        });
    }
    out
}
