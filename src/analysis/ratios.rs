//! Value ratios (willingness to pay, value of time) with a delta-method
//! interval and a Krinsky-Robb percentile interval. Sign convention: the value
//! is a willingness to pay, -scale * b_num / b_den for one unit more of the
//! numerator's variable (positive when that variable is desirable and the
//! denominator is a price), or +scale * b_num / b_den for one unit less
//! (`per = "unit less"`: a saving, e.g. of travel time).

use serde::Serialize;

use super::delta::{self, quantile};
use crate::estimate::{Fit, Z95};
use crate::model::distribution::Distribution;
use crate::model::RandomCoefficient;
use crate::progress::{Phase, Sink, QUIET};
use crate::rng::Rng;
use crate::spec::Ratio;

use super::ratio_terms::Tastes;

/// Simulated decision makers for a ratio of random coefficients.
pub const RATIO_DRAWS: usize = 100_000;
/// Simulated decision makers per parameter draw for its Krinsky-Robb interval.
const RATIO_DRAWS_PER_PARAMETER_DRAW: usize = 2_000;
/// Parameter draws used for that interval.
const RATIO_PARAMETER_DRAWS: usize = 1_000;

#[derive(Clone, Copy, Debug, Serialize)]
pub struct RatioQuantile {
    pub level: f64,
    pub value: f64,
}

/// A ratio whose terms vary across decision makers: its distribution.
#[derive(Clone, Debug, Serialize)]
pub struct RatioDistribution {
    pub median: f64,
    /// The 5/25/75/95% points.
    pub quantiles: Vec<RatioQuantile>,
    /// The share of decision makers whose ratio is above zero.
    pub share_positive: f64,
    /// Simulated decision makers and the seed of their draws.
    pub draws: usize,
    pub seed: u64,
}

#[derive(Clone, Debug, Serialize)]
pub struct RatioRow {
    pub name: String,
    pub numerator: String,
    pub denominator: String,
    pub scale: f64,
    /// The unit of `value` as the spec gives it (`[[ratio]].unit`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unit: Option<String>,
    /// "unit more" or "unit less": what the willingness to pay is for.
    pub per: String,
    pub value: f64,
    pub std_error: f64,
    pub ci_low: f64,
    pub ci_high: f64,
    pub kr_low: f64,
    pub kr_high: f64,
    pub draws: usize,
    pub seed: u64,
    /// Set when the denominator's 95% interval includes zero.
    pub warning: Option<String>,
    /// What the ratio is, when that needs saying (in willingness-to-pay
    /// space, a value over the price is that value itself, not a division).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
    /// When a term varies across decision makers: the ratio's distribution
    /// (then `value` is its median, with delta-method and Krinsky-Robb
    /// intervals of the median).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub distribution: Option<RatioDistribution>,
}

/// Computes every declared ratio; `draws` are parameter vectors from `delta::draws`.
pub fn ratios(
    fit: &Fit,
    declared: &[Ratio],
    draws: Option<&[Vec<f64>]>,
    seed: u64,
) -> Vec<RatioRow> {
    ratios_with(fit, declared, draws, seed, QUIET)
}

/// `ratios`, reporting the phase `value ratios` (one step per ratio) to
/// `sink`, and for a ratio of random terms its `Krinsky-Robb draws`.
pub fn ratios_with(
    fit: &Fit,
    declared: &[Ratio],
    draws: Option<&[Vec<f64>]>,
    seed: u64,
    sink: Sink,
) -> Vec<RatioRow> {
    if declared.is_empty() {
        return Vec::new();
    }
    let cov = fit.inference_covariance();
    let random = fit.family.random_coefficients();
    let phase = Phase::start(sink, "value ratios", declared.len());
    let rows = declared
        .iter()
        .map(|r| {
            let (n, d) = (r.numerator, r.denominator);
            let _step = Step(&phase);
            if Tastes::of(fit, &random).varies(n, d) {
                return simulated(fit, r, &random, draws, seed, sink);
            }
            let tastes = Tastes::of(fit, &random);
            let (bn, bd) = (tastes.fixed(&fit.beta, n), tastes.fixed(&fit.beta, d));
            // The willingness to pay: c * bn / bd with c = -scale for a unit more.
            let c = if r.per_less { r.scale } else { -r.scale };
            let value = c * bn / bd;
            // gradient of c * bn / bd (a price in willingness space is the constant -1)
            let gn = if tastes.is_price(n) { 0.0 } else { c / bd };
            let gd = if tastes.is_price(d) { 0.0 } else { -c * bn / (bd * bd) };
            let var = gn * gn * cov[(n, n)] + 2.0 * gn * gd * cov[(n, d)] + gd * gd * cov[(d, d)];
            let se = var.max(0.0).sqrt();
            let (mut kr_low, mut kr_high, mut used) = (f64::NAN, f64::NAN, 0);
            if let Some(draws) = draws {
                let mut vals: Vec<f64> = draws
                    .iter()
                    .map(|b| c * tastes.fixed(b, n) / tastes.fixed(b, d))
                    .filter(|v| v.is_finite())
                    .collect();
                vals.sort_by(|a, b| a.total_cmp(b));
                kr_low = quantile(&vals, 0.025);
                kr_high = quantile(&vals, 0.975);
                used = vals.len();
            }
            let sd = cov[(d, d)].sqrt();
            let warning = if tastes.is_price(d) {
                None
            } else if (bd - Z95 * sd) * (bd + Z95 * sd) <= 0.0 || !sd.is_finite() {
                Some(format!(
                    "the 95% interval of `{}` includes zero: the ratio's distribution has no finite moments, so its error and interval are unreliable",
                    fit.names[d]
                ))
            } else {
                None
            };
            RatioRow {
                name: r.name.clone(),
                numerator: fit.names[n].clone(),
                denominator: fit.names[d].clone(),
                scale: r.scale,
                unit: r.unit.clone(),
                per: if r.per_less { "unit less" } else { "unit more" }.into(),
                value,
                std_error: se,
                ci_low: value - Z95 * se,
                ci_high: value + Z95 * se,
                kr_low,
                kr_high,
                draws: used,
                seed,
                warning,
                note: tastes.note(fit, n, d),
                distribution: None,
            }
        })
        .collect();
    phase.finish();
    rows
}

/// Counts a step of its phase when dropped (whichever way the step ends).
struct Step<'a, 'b>(&'a Phase<'b>);

impl Drop for Step<'_, '_> {
    fn drop(&mut self) {
        self.0.step();
    }
}

/// The sorted ratios of `count` simulated decision makers at `beta`; the
/// numerator and denominator get their joint draws (correlated when the
/// model correlates them, the same one when they are the same coefficient).
fn sample(tastes: &Tastes, beta: &[f64], r: &Ratio, c: f64, uniforms: &[(f64, f64)]) -> Vec<f64> {
    let pair = tastes.pair(beta, r.numerator, r.denominator);
    let mut vals: Vec<f64> = uniforms
        .iter()
        .map(|&(un, ud)| {
            let (bn, bd) = pair.at(un, ud);
            c * bn / bd
        })
        .filter(|v| v.is_finite())
        .collect();
    vals.sort_by(|a, b| a.total_cmp(b));
    vals
}

/// A ratio with random terms: its distribution over simulated decision makers.
fn simulated(
    fit: &Fit,
    r: &Ratio,
    random: &[RandomCoefficient],
    draws: Option<&[Vec<f64>]>,
    seed: u64,
    sink: Sink,
) -> RatioRow {
    let (n, d) = (r.numerator, r.denominator);
    let c = if r.per_less { r.scale } else { -r.scale };
    let mut rng = Rng::new(seed ^ 0x2a71_0b5e);
    let open = |x: f64| x.clamp(1e-12, 1.0 - 1e-12);
    let uniforms: Vec<(f64, f64)> = (0..RATIO_DRAWS)
        .map(|_| (open(rng.uniform()), open(rng.uniform())))
        .collect();
    let tastes = Tastes::of(fit, random);
    let vals = sample(&tastes, &fit.beta, r, c, &uniforms);
    let median = quantile(&vals, 0.5);
    let se = delta::delta_se(fit, &|b: &[f64]| {
        vec![quantile(&sample(&tastes, b, r, c, &uniforms), 0.5)]
    })[0];
    let few = &uniforms[..RATIO_DRAWS_PER_PARAMETER_DRAW];
    let medians = draws.map(|all| kr_medians(&tastes, all, r, c, few, sink));
    let (kr_low, kr_high, used) = match &medians {
        Some(m) => (quantile(m, 0.025), quantile(m, 0.975), m.len()),
        None => (f64::NAN, f64::NAN, 0),
    };
    let positive = vals.iter().filter(|v| **v > 0.0).count() as f64 / vals.len().max(1) as f64;
    RatioRow {
        name: r.name.clone(),
        numerator: fit.names[n].clone(),
        denominator: fit.names[d].clone(),
        scale: r.scale,
        unit: r.unit.clone(),
        per: if r.per_less { "unit less" } else { "unit more" }.into(),
        value: median,
        std_error: se,
        ci_low: median - Z95 * se,
        ci_high: median + Z95 * se,
        kr_low,
        kr_high,
        draws: used,
        seed,
        warning: near_zero_warning(fit, random, d).filter(|_| !tastes.is_price(d)),
        note: tastes.note(fit, n, d),
        distribution: Some(RatioDistribution {
            median,
            quantiles: super::random::LEVELS
                .iter()
                .map(|q| RatioQuantile {
                    level: *q,
                    value: quantile(&vals, *q),
                })
                .collect(),
            share_positive: positive,
            draws: vals.len(),
            seed,
        }),
    }
}

/// The sorted finite medians of the ratio under the first
/// `RATIO_PARAMETER_DRAWS` parameter draws, reported as the phase
/// `Krinsky-Robb draws` in blocks of a hundredth.
fn kr_medians(
    tastes: &Tastes,
    all: &[Vec<f64>],
    r: &Ratio,
    c: f64,
    few: &[(f64, f64)],
    sink: Sink,
) -> Vec<f64> {
    let used = &all[..all.len().min(RATIO_PARAMETER_DRAWS)];
    let block = used.len().div_ceil(100).max(1);
    let phase = Phase::start(sink, "Krinsky-Robb draws", used.len());
    let mut medians = Vec::with_capacity(used.len());
    for part in used.chunks(block) {
        medians.extend(
            part.iter()
                .map(|b| quantile(&sample(tastes, b, r, c, few), 0.5))
                .filter(|v| v.is_finite()),
        );
        phase.advance(part.len());
    }
    phase.finish();
    medians.sort_by(|a, b| a.total_cmp(b));
    medians
}

/// The warning when the denominator, random across decision makers, takes
/// values at or near zero.
fn near_zero_warning(fit: &Fit, random: &[RandomCoefficient], d: usize) -> Option<String> {
    let t = random.iter().find(|t| t.location == d)?;
    let (m, s) = (fit.beta[t.location], t.scale(&fit.beta));
    let touches_zero = s > 0.0
        && match t.distribution {
            Distribution::Normal => true,
            Distribution::Uniform | Distribution::Triangular => m.abs() <= s,
            Distribution::Lognormal | Distribution::NegativeLognormal => false,
        };
    touches_zero.then(|| {
        format!(
            "the denominator `{}` is {} across decision makers and takes values at or near zero, so the ratio has no finite mean or variance: read its median and quantiles, or make `{}` lognormal (negative-lognormal for a price)",
            fit.names[d],
            t.distribution.name(),
            fit.names[d]
        )
    })
}
