//! Warnings about a nested-logit fit: a scale above 1 (then the model is not
//! consistent with utility maximisation for all values of the data; we count
//! the situations where it still is, by the sign of the within-nest cross
//! derivatives), a scale near 0 (the nest's alternatives are all but perfect
//! substitutes), and a nest whose alternatives are rarely available together.

use super::Nested;
use crate::design::Design;
use crate::model::FamilyWarning;
use crate::spec::Spec;

/// A scale below this is "near 0".
const NEAR_ZERO: f64 = 0.05;
/// A nest whose alternatives are available together in fewer situations than this share.
const RARELY_TOGETHER: f64 = 0.05;

pub fn all(m: &Nested, spec: &Spec, d: &Design, beta: &[f64]) -> Vec<FamilyWarning> {
    let mut out = Vec::new();
    for (g, name) in m.nests.iter().enumerate() {
        let Some(k) = m.scale[g] else { continue };
        let lam = beta[k];
        let param = spec.parameters[k].name.clone();
        if lam > 1.0 {
            let share = consistent_share(m, d, beta, g);
            out.push(FamilyWarning {
                code: "scale_above_one",
                parameters: vec![param.clone()],
                message: format!(
                    "the scale of nest {name} is {lam:.3}, above 1: the model is not consistent with utility maximisation for every value of the data (it implies that improving one alternative of the nest can raise the demand for another). At the data's own values it still is in {:.1}% of situations (those where the nest's probability is at least 1 - 1/scale = {:.3}). Consider removing the nest or regrouping.",
                    100.0 * share,
                    1.0 - 1.0 / lam
                ),
            });
        }
        if lam > 0.0 && lam < NEAR_ZERO {
            out.push(FamilyWarning {
                code: "scale_near_zero",
                parameters: vec![param.clone()],
                message: format!(
                    "the scale of nest {name} is {lam:.4}, near 0: its alternatives behave as almost perfect substitutes, and the estimates may be unstable; check whether they differ in the data at all"
                ),
            });
        }
        let together = available_together(m, d, g);
        if together < RARELY_TOGETHER {
            out.push(FamilyWarning {
                code: "nest_rarely_available",
                parameters: vec![param],
                message: format!(
                    "two or more alternatives of nest {name} are available together in only {:.1}% of situations: its scale rests on little information",
                    100.0 * together
                ),
            });
        }
    }
    out
}

/// Share of situations (weighted) where the within-nest cross derivatives of
/// group `g` are not positive: Q_g >= 1 - 1/l_g.
fn consistent_share(m: &Nested, d: &Design, beta: &[f64], g: usize) -> f64 {
    let j = d.alternatives();
    let mut v = vec![0.0; j];
    let mut w = m.work();
    let floor = 1.0 - 1.0 / m.scale[g].map(|k| beta[k]).unwrap_or(1.0);
    let (mut ok, mut all) = (0.0, 0.0);
    for i in 0..d.situations() {
        let wi = d.obs.weight[i];
        all += wi;
        d.utilities(beta, i, &mut v);
        m.situation(beta, &v, &mut w);
        if w.q[g] >= floor || m.members[g].iter().filter(|&&a| v[a].is_finite()).count() < 2 {
            ok += wi;
        }
    }
    if all > 0.0 {
        ok / all
    } else {
        1.0
    }
}

/// Share of situations where two or more of group `g`'s alternatives are available.
fn available_together(m: &Nested, d: &Design, g: usize) -> f64 {
    let n = d.situations();
    if n == 0 {
        return 1.0;
    }
    let count = (0..n)
        .filter(|&i| m.members[g].iter().filter(|&&a| d.available(i, a)).count() >= 2)
        .count();
    count as f64 / n as f64
}
