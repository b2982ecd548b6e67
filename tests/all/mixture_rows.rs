//! The enumeration of a situation's coefficient points by rows (every point
//! at once: `Family::probabilities_of_points`, `WhatIf::utilities_of_points`)
//! against the reference path, one point at a time: the same family with its
//! rows form hidden. Base and scenario shares, the cached baseline and the
//! point-by-point derivatives of the analyses agree to rounding, for the
//! mixed logit (panel draws), latent classes and willingness-to-pay space.

use std::path::Path;
use std::sync::Arc;

use sharecast::analysis::sensitivity::{sensitivities, TermMap};
use sharecast::design::Design;
use sharecast::model::{Abilities, Baseline, Eval, Family, FamilyRef, Points};
use sharecast::scenario::{prepare, simulate, Scenario};
use sharecast::spec::Spec;

use crate::common::*;

/// A family with its rows form hidden: every other answer is the wrapped one's.
#[derive(Debug)]
struct PointByPoint(FamilyRef);

impl Family for PointByPoint {
    fn name(&self) -> &'static str {
        self.0.name()
    }
    fn abilities(&self) -> Abilities {
        self.0.abilities()
    }
    fn evaluate(&self, d: &Design, beta: &[f64], g: bool, h: bool) -> Eval {
        self.0.evaluate(d, beta, g, h)
    }
    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
        self.0.for_each_score(d, beta, f)
    }
    fn probabilities(&self, beta: &[f64], v: &[f64], p: &mut [f64]) {
        self.0.probabilities(beta, v, p)
    }
    fn probabilities_after(&self, b: &[f64], v0: &[f64], p0: &[f64], v1: &[f64], p1: &mut [f64]) {
        self.0.probabilities_after(b, v0, p0, v1, p1)
    }
    fn dprob(&self, beta: &[f64], v: &[f64], p: &[f64], dp: &mut [f64]) {
        self.0.dprob(beta, v, p, dp)
    }
    fn caution(&self, spec: &Spec) -> Option<String> {
        self.0.caution(spec)
    }
    fn mixture(&self, d: &Design) -> Option<Arc<dyn Points>> {
        self.0.mixture(d)
    }
}

fn assert_near(what: &str, a: &[f64], b: &[f64]) {
    assert_eq!(a.len(), b.len(), "{what}");
    for (x, (u, v)) in a.iter().zip(b).enumerate() {
        assert!(
            (u - v).abs() <= 1e-12 * u.abs().max(1e-9) || (u.is_nan() && v.is_nan()),
            "{what}[{x}]: by rows {u} vs point by point {v}"
        );
    }
}

/// Fits `spec_rel` and checks both paths on each scenario file's text.
fn check(spec_rel: &str, scenarios: &[&str]) {
    let (spec, ds) = load(spec_rel);
    let fit = fit_spec(&spec, &ds);
    let (family, d) = (fit.family.clone(), &fit.design);
    assert!(
        family.mixture(d).is_some(),
        "{spec_rel}: has coefficient points"
    );
    assert!(
        family.probabilities_of_points(&mut [], 0, &mut Vec::new()),
        "{spec_rel}: offers the rows form"
    );
    let reference = PointByPoint(family.clone());
    // Move off the estimates a little so that nothing rests on a cache.
    let beta: Vec<f64> = fit.beta.iter().map(|b| b * 1.01 + 0.003).collect();
    let fast = Baseline::new(&*family, d, &beta);
    let slow = Baseline::new(&reference, d, &beta);
    assert_near(
        &format!("{spec_rel} base"),
        &fast.probabilities,
        &slow.probabilities,
    );
    for text in scenarios {
        let sc = Scenario::from_str(text, Path::new("scenario.toml"), &spec).unwrap();
        let prep = prepare::prepare(&spec, &fit, &ds.table, &sc).unwrap();
        let wrapped: FamilyRef = Arc::new(PointByPoint(family.clone()));
        let a = simulate::shares_only(&*family, d, &beta, &prep, None);
        let b = simulate::shares_only(&*wrapped, d, &beta, &prep, None);
        assert_near(&format!("{spec_rel} {text}: base"), &a.0, &b.0);
        assert_near(&format!("{spec_rel} {text}: scenario"), &a.1, &b.1);
        assert!(a.1.iter().sum::<f64>() > 0.99, "{text}: shares sum to one");
    }
    let map = TermMap::new(&spec, d);
    let a = sensitivities(&*family, d, &map, &beta).flat();
    let b = sensitivities(&reference, d, &map, &beta).flat();
    assert_near(&format!("{spec_rel} sensitivities"), &a, &b);
}

#[test]
fn the_mixed_logit_by_rows_equals_point_by_point() {
    check(
        "specs/express_survey.toml",
        &[
            "[[change]]\nattribute = \"cost\"\nalternative = \"rail\"\nmultiply = 0.8\n",
            "remove = [\"coach\"]\n",
            &std::fs::read_to_string(path("specs/scenarios/express_second_coach.toml")).unwrap(),
        ],
    );
}

#[test]
fn latent_classes_and_willingness_space_by_rows_equal_point_by_point() {
    check(
        "specs/garden_classes.toml",
        &[&std::fs::read_to_string(path("specs/scenarios/garden_quick_plugs.toml")).unwrap()],
    );
    check(
        "specs/express_willingness.toml",
        &["[[change]]\nattribute = \"time\"\nalternative = \"coach\"\nadd = 10\n"],
    );
}
