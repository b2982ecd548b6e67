//! The one-pass analytic derivatives of the aggregate elasticities and
//! marginal effects (`analysis::analytic`), checked for every registered
//! family that gives second derivatives of its probabilities: the figures
//! equal the generic per-situation computation (`sensitivity::sensitivities`,
//! kept as the reference and for the other families), and their Jacobian by
//! the parameters equals central finite differences of that computation
//! (common practice for checking analytic derivatives). The families' second
//! derivatives themselves are checked against finite differences of their
//! first derivatives (the same practice).

use sharecast::analysis::analytic::sensitivities_with_jacobian;
use sharecast::analysis::sensitivity::{sensitivities, TermMap};
use sharecast::design::Design;
use sharecast::model::enumerate::Baseline;
use sharecast::model::registry::FAMILIES;
use sharecast::model::Family;
use sharecast::spec::Spec;

use super::families::setup;

/// One situation's utilities, probabilities and their first and second
/// derivatives by the utilities (buffers for J alternatives).
struct Situation {
    v: Vec<f64>,
    p: Vec<f64>,
    dp: Vec<f64>,
    d2p: Vec<f64>,
}

impl Situation {
    fn new(j: usize) -> Situation {
        Situation {
            v: vec![0.0; j],
            p: vec![0.0; j],
            dp: vec![0.0; j * j],
            d2p: vec![0.0; j * j * j],
        }
    }

    /// Fills them for situation `i`; `false` when the family has no second derivatives.
    fn fill(&mut self, family: &dyn Family, d: &Design, beta: &[f64], i: usize) -> bool {
        d.utilities(beta, i, &mut self.v);
        family.probabilities(beta, &self.v, &mut self.p);
        family.dprob(beta, &self.v, &self.p, &mut self.dp);
        family.d2prob(&self.v, &self.p, &self.dp, &mut self.d2p)
    }
}

#[test]
fn second_derivatives_of_probabilities_match_finite_differences() {
    let mut checked = 0;
    for e in FAMILIES {
        let (_, family, beta, d) = setup(e, 60, 17);
        let j = d.alternatives();
        let mut at = Situation::new(j);
        let (mut pu, mut dpu, mut pd, mut dpd) = (
            vec![0.0; j],
            vec![0.0; j * j],
            vec![0.0; j],
            vec![0.0; j * j],
        );
        for i in 0..d.situations() {
            if !at.fill(&*family, &d, &beta, i) {
                break;
            }
            let Situation { v, d2p, .. } = &at;
            checked += 1;
            for m in 0..j {
                if !v[m].is_finite() {
                    // An unavailable alternative: every derivative by it is zero.
                    for jk in 0..j * j {
                        assert_eq!(d2p[jk * j + m], 0.0, "{}: by unavailable {m}", e.name);
                    }
                    continue;
                }
                let h = 1e-5;
                let (mut vu, mut vd) = (v.clone(), v.clone());
                vu[m] += h;
                vd[m] -= h;
                family.probabilities(&beta, &vu, &mut pu);
                family.dprob(&beta, &vu, &pu, &mut dpu);
                family.probabilities(&beta, &vd, &mut pd);
                family.dprob(&beta, &vd, &pd, &mut dpd);
                for jk in 0..j * j {
                    let fd = (dpu[jk] - dpd[jk]) / (2.0 * h);
                    let an = d2p[jk * j + m];
                    assert!(
                        (fd - an).abs() < 1e-8,
                        "{}: d2P/dV dV ({jk}, {m}) at situation {i}: {an} vs numeric {fd}",
                        e.name
                    );
                }
            }
        }
    }
    assert!(checked > 0, "no family gives second derivatives");
}

/// A family's contraction of its second derivatives with dV/dβ (its own
/// shorter form, where it has one) equals the sum over `d2prob` written out.
#[test]
fn contracted_second_derivatives_equal_the_full_array_contracted() {
    let mut checked = 0;
    for e in FAMILIES {
        let (_, family, beta, d) = setup(e, 60, 19);
        let (j, kf) = (d.alternatives(), 4);
        let mut at = Situation::new(j);
        let mut g = vec![0.0; j * kf * j];
        for i in 0..d.situations() {
            if !at.fill(&*family, &d, &beta, i) {
                break;
            }
            let Situation { v, p, dp, d2p } = &at;
            // Directions: arbitrary values where the alternative is available.
            let x: Vec<f64> = (0..kf * j)
                .map(|t| {
                    if v[t % j].is_finite() {
                        ((t * 7 + i) % 11) as f64 * 0.3 - 1.4
                    } else {
                        0.0
                    }
                })
                .collect();
            let mut ev = vec![0.0; kf * j];
            for q in 0..kf {
                for jj in 0..j {
                    ev[q * j + jj] = (0..j).map(|m| dp[jj * j + m] * x[q * j + m]).sum();
                }
            }
            let mut scratch = vec![0.0; j * j * j];
            assert!(family.d2prob_along(v, p, dp, &mut scratch, &x, &ev, kf, &mut g));
            checked += 1;
            for k in 0..j {
                for q in 0..kf {
                    for jj in 0..j {
                        let full: f64 = (0..j)
                            .map(|m| d2p[(jj * j + k) * j + m] * x[q * j + m])
                            .sum();
                        let got = g[(k * kf + q) * j + jj];
                        assert!(
                            (got - full).abs() <= 1e-14 * full.abs().max(1.0),
                            "{}: situation {i}, ({k}, {q}, {jj}): {got} vs {full}",
                            e.name
                        );
                    }
                }
            }
        }
    }
    assert!(checked > 0, "no family gives second derivatives");
}

/// Checks the one-pass figures and Jacobian of `family` at `beta` (every
/// parameter free) against the differenced reference path: the figures equal
/// the generic pass (`sensitivities`) to 1e-12 relative and each Jacobian
/// column equals its central differences to 1e-6 relative. `false` when the
/// one pass does not apply to the family.
pub(crate) fn check_against_the_differenced_reference(
    name: &str,
    spec: &Spec,
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
) -> bool {
    let map = TermMap::new(spec, d);
    let free: Vec<usize> = (0..beta.len()).collect();
    let Some((sens, jac)) = sensitivities_with_jacobian(family, d, &map, beta, &free, None) else {
        return false;
    };
    // Reading the cached base utilities and probabilities changes nothing.
    let cached = Baseline::new(family, d, beta);
    let again = sensitivities_with_jacobian(family, d, &map, beta, &free, Some(&cached));
    let Some((sens_cached, jac_cached)) = again else {
        panic!("{name}: no figures with the cached base");
    };
    assert_eq!(sens.flat(), sens_cached.flat(), "{name}");
    assert_eq!(jac, jac_cached, "{name}");
    // The same figures as the generic pass (the reference), to rounding.
    let reference = sensitivities(family, d, &map, beta).flat();
    let fast = sens.flat();
    assert_eq!(reference.len(), fast.len());
    assert_eq!(jac.len(), fast.len());
    for (r, (a, b)) in reference.iter().zip(&fast).enumerate() {
        assert!(
            (a - b).abs() <= 1e-12 * a.abs().max(1e-300) || (a.is_nan() && b.is_nan()),
            "{name}: figure {r}: generic {a} vs one pass {b}"
        );
    }
    // Each column against central differences of the generic pass.
    for (q, &param) in free.iter().enumerate() {
        let h = 1e-5 * beta[param].abs().max(0.1);
        let (mut up, mut dn) = (beta.to_vec(), beta.to_vec());
        up[param] += h;
        dn[param] -= h;
        let fu = sensitivities(family, d, &map, &up).flat();
        let fd = sensitivities(family, d, &map, &dn).flat();
        for r in 0..fast.len() {
            let numeric = (fu[r] - fd[r]) / (2.0 * h);
            let scale = numeric.abs().max(fast[r].abs()).max(1e-3);
            assert!(
                (numeric - jac[r][q]).abs() <= 1e-6 * scale,
                "{name}: d figure {r} / d {}: analytic {} vs numeric {numeric}",
                spec.parameters[param].name,
                jac[r][q]
            );
        }
    }
    true
}

#[test]
fn one_pass_figures_and_jacobian_match_the_differenced_reference() {
    let mut applied = Vec::new();
    for e in FAMILIES {
        let (spec, family, beta, d) = setup(e, 3_000, 23);
        let label = format!("{} {}", e.name, e.example_model.replace('\n', " "));
        if check_against_the_differenced_reference(&label, &spec, &*family, &d, &beta) {
            applied.push((e.name, family.mixture(&d).is_some()));
        }
    }
    // Families whose probabilities depend on the parameters only through the
    // utilities, at one point or at coefficient points that give their
    // derivatives, offer it (a fact of the families).
    for (name, points) in [("logit", false), ("probit", false), ("logit", true)] {
        assert!(applied.contains(&(name, points)), "applied to {applied:?}");
    }
    // The mixed logit: independent, correlated and in willingness-to-pay
    // space; latent classes, whose points' weights move with the membership
    // model's parameters.
    let mixed = applied.iter().filter(|a| a.0 == "mixed").count();
    assert_eq!(mixed, 3, "applied to {applied:?}");
    assert!(
        applied.contains(&("latent-class", true)),
        "applied to {applied:?}"
    );
}

#[test]
fn families_with_parameters_of_their_own_keep_the_differenced_jacobian() {
    for e in FAMILIES {
        let (spec, family, beta, d) = setup(e, 200, 29);
        let own = spec
            .parameters
            .iter()
            .any(|p| matches!(p.term, sharecast::spec::Term::Family(_)));
        let map = TermMap::new(&spec, &d);
        let free: Vec<usize> = (0..beta.len()).collect();
        let fast = sensitivities_with_jacobian(&*family, &d, &map, &beta, &free, None);
        // Coefficient points carry the mixed logit's own parameters (its
        // spreads) and the latent classes' (the classes' coefficients and
        // the membership model's, through the points' weights).
        let points = family.mixture(&d);
        if points.is_none() && own {
            assert!(fast.is_none(), "{}: has parameters of its own", e.name);
        }
        if points.is_some() && ["mixed", "latent-class"].contains(&e.name) {
            assert!(fast.is_some(), "{}: its points give derivatives", e.name);
        }
    }
}
