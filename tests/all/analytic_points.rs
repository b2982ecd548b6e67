//! The one-pass analytic Jacobian of elasticities and marginal effects over
//! coefficient points, on the shipped express survey's mixed logits
//! (`specs/express_survey.toml`: independent normal and negative-lognormal
//! coefficients; `specs/express_correlated.toml`: correlated;
//! `specs/express_willingness.toml`: willingness-to-pay space) and the garden
//! centres' latent classes (`specs/garden_classes.toml`: class shares that
//! move with a membership column), checked against the differenced reference
//! path (`analytic::check_against_the_differenced_reference`: the generic
//! figures and central differences of them, common practice for checking
//! analytic derivatives).

use std::sync::Arc;

use sharecast::data::{self, Extra};
use sharecast::demo::{EXPRESS_TRUTH, GARDEN_TRUTH};
use sharecast::design::Design;
use sharecast::model;

use crate::analytic::check_against_the_differenced_reference;
use crate::common::path;

/// The spec with fewer draws (a quicker check of the same formulas), its
/// family and design, and parameters near the demo's generating values `truth`
/// (a willingness-space price scale's log location at 0.4; any point would do).
fn at_the_demo(
    rel: &str,
    truth: &[(&str, f64)],
) -> (sharecast::spec::Spec, model::FamilyRef, Design, Vec<f64>) {
    let file = path(rel);
    let text = std::fs::read_to_string(&file)
        .unwrap()
        .replace("draws = 500", "draws = 40");
    let spec = model::parse_spec(&text, &file).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let family = model::for_spec(&spec).unwrap();
    let d = Design::build(&spec, Arc::new(ds.obs));
    let willingness = family.willingness().is_some();
    let beta = spec
        .parameters
        .iter()
        .map(|p| match truth.iter().find(|t| t.0 == p.name) {
            _ if willingness && p.name == "cost" => 0.4,
            Some(t) => t.1,
            None if p.name.starts_with("chol_") => -0.3,
            None => 0.1,
        })
        .collect();
    (spec, family, d, beta)
}

#[test]
fn the_express_mixed_logits_match_the_differenced_reference() {
    for rel in [
        "specs/express_survey.toml",
        "specs/express_correlated.toml",
        "specs/express_willingness.toml",
    ] {
        let (spec, family, d, beta) = at_the_demo(rel, EXPRESS_TRUTH);
        assert!(family.mixture(&d).is_some(), "{rel}");
        assert!(
            check_against_the_differenced_reference(rel, &spec, &*family, &d, &beta),
            "{rel}: the one pass does not apply"
        );
    }
}

#[test]
fn the_garden_latent_classes_match_the_differenced_reference() {
    let rel = "specs/garden_classes.toml";
    let (spec, family, d, beta) = at_the_demo(rel, GARDEN_TRUTH);
    assert!(family.abilities().latent_classes, "{rel}");
    // The membership column moves the shares (its coefficient is free).
    assert!(spec
        .parameters
        .iter()
        .any(|p| p.name == "member_class2_garden_size"));
    assert!(
        check_against_the_differenced_reference(rel, &spec, &*family, &d, &beta),
        "{rel}: the one pass does not apply"
    );
}
