//! Demand curves: shares of every alternative as one attribute of one
//! alternative, or one characteristic of everyone, is multiplied across a range.

use serde::Serialize;

use super::file::{Change, Op, Scenario, Target};
use super::{base_parameters_with, prepare, simulate};
use crate::data::Dataset;
use crate::error::{Error, Result};
use crate::estimate::Fit;
use crate::progress::{Phase, Sink, QUIET};
use crate::spec::Spec;

#[derive(Clone, Debug, Serialize)]
pub struct SweepPoint {
    pub multiplier: f64,
    /// Shares in the order of `alternatives`.
    pub shares: Vec<f64>,
}

#[derive(Clone, Debug, Serialize)]
pub struct Sweep {
    /// The attribute or characteristic swept.
    pub attribute: String,
    /// The alternative whose attribute is swept; null for a characteristic.
    pub alternative: Option<String>,
    pub alternatives: Vec<String>,
    pub points: Vec<SweepPoint>,
}

/// The most points on one demand curve.
pub const MAX_STEPS: usize = 10_000;

/// What to sweep: an attribute of an alternative, or a characteristic (no
/// alternative), multiplied from `from` to `to` in `steps` steps.
#[derive(Clone, Debug)]
pub struct Request {
    pub attribute: String,
    pub alternative: Option<String>,
    pub from: f64,
    pub to: f64,
    pub steps: usize,
}

/// The change a sweep makes: an attribute of one alternative, or a characteristic.
fn target(spec: &Spec, attribute: &str, alternative: Option<&str>) -> Result<Target> {
    if let Some(c) = spec
        .characteristics
        .iter()
        .position(|x| x.name == attribute)
    {
        if let Some(alt) = alternative {
            return Err(Error::Usage(format!(
                "--alternative `{alt}`: `{attribute}` is a characteristic of the decision maker, changed for every alternative at once; leave out --alternative"
            )));
        }
        return Ok(Target::Characteristic { characteristic: c });
    }
    let a = spec
        .attributes
        .iter()
        .position(|x| x.name == attribute)
        .ok_or_else(|| {
            Error::Usage(format!(
                "--attribute: `{attribute}` is neither an attribute nor a characteristic of the spec"
            ))
        })?;
    let Some(alternative) = alternative else {
        return Err(Error::Usage(format!(
            "--alternative: name the alternative whose `{attribute}` changes"
        )));
    };
    let k = spec.alternative_index(alternative).ok_or_else(|| {
        Error::Usage(format!(
            "--alternative: `{alternative}` is not an alternative of the spec"
        ))
    })?;
    if spec.attributes[a].sources[k].is_none() {
        return Err(Error::Usage(format!(
            "attribute `{attribute}` does not enter `{alternative}`"
        )));
    }
    Ok(Target::Attribute {
        attribute: a,
        alternative: k,
    })
}

pub fn sweep(spec: &Spec, fit: &Fit, ds: &Dataset, req: &Request) -> Result<Sweep> {
    sweep_with(spec, fit, ds, req, QUIET)
}

/// `sweep`, reporting the phases `calibration` (with the spec's share
/// targets) and `demand curve` (one step per point) to `sink`.
pub fn sweep_with(
    spec: &Spec,
    fit: &Fit,
    ds: &Dataset,
    req: &Request,
    sink: Sink,
) -> Result<Sweep> {
    let (attribute, alternative, from, to, steps) = (
        req.attribute.as_str(),
        req.alternative.as_deref(),
        req.from,
        req.to,
        req.steps,
    );
    let target = target(spec, attribute, alternative)?;
    if steps < 2 || !(from.is_finite() && to.is_finite()) {
        return Err(Error::Usage(
            "--steps must be at least 2 and --from/--to finite".into(),
        ));
    }
    crate::error::check_count(
        "--steps",
        steps,
        MAX_STEPS,
        8 * spec.alternatives.len() + 48,
    )?;
    let (beta, _) = base_parameters_with(spec, fit, &Scenario::default(), sink)?;
    let mut points = Vec::with_capacity(steps);
    let phase = Phase::start(sink, "demand curve", steps);
    for s in 0..steps {
        let multiplier = from + (to - from) * s as f64 / (steps - 1) as f64;
        let sc = Scenario {
            name: match alternative {
                Some(alt) => format!("{attribute} of {alt} x {multiplier}"),
                None => format!("{attribute} x {multiplier}"),
            },
            changes: vec![Change {
                target: target.clone(),
                op: Op::Multiply(multiplier),
                filter: None,
            }],
            ..Scenario::default()
        };
        let prep = prepare::prepare(spec, fit, &ds.table, &sc)?;
        let (_, shares, _) = simulate::shares_only(&*fit.family, &fit.design, &beta, &prep, None);
        points.push(SweepPoint { multiplier, shares });
        phase.step();
    }
    phase.finish();
    Ok(Sweep {
        attribute: attribute.to_string(),
        alternative: alternative.map(String::from),
        alternatives: spec.alternative_names(),
        points,
    })
}
