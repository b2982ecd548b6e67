//! Value ratios (willingness to pay, value of time) with a delta-method
//! interval and a Krinsky-Robb percentile interval. Sign convention: the value
//! is a willingness to pay, -scale * b_num / b_den for one unit more of the
//! numerator's variable (positive when that variable is desirable and the
//! denominator is a price), or +scale * b_num / b_den for one unit less
//! (`per = "unit less"`: a saving, e.g. of travel time).

use serde::Serialize;

use super::delta::quantile;
use crate::estimate::{Fit, Z95};
use crate::spec::Ratio;

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
}

/// Computes every declared ratio; `draws` are parameter vectors from `delta::draws`.
pub fn ratios(
    fit: &Fit,
    declared: &[Ratio],
    draws: Option<&[Vec<f64>]>,
    seed: u64,
) -> Vec<RatioRow> {
    let cov = fit.inference_covariance();
    declared
        .iter()
        .map(|r| {
            let (n, d) = (r.numerator, r.denominator);
            let (bn, bd) = (fit.beta[n], fit.beta[d]);
            // The willingness to pay: c * bn / bd with c = -scale for a unit more.
            let c = if r.per_less { r.scale } else { -r.scale };
            let value = c * bn / bd;
            // gradient of c * bn / bd
            let gn = c / bd;
            let gd = -c * bn / (bd * bd);
            let var = gn * gn * cov[(n, n)] + 2.0 * gn * gd * cov[(n, d)] + gd * gd * cov[(d, d)];
            let se = var.max(0.0).sqrt();
            let (mut kr_low, mut kr_high, mut used) = (f64::NAN, f64::NAN, 0);
            if let Some(draws) = draws {
                let mut vals: Vec<f64> = draws.iter().map(|b| c * b[n] / b[d]).filter(|v| v.is_finite()).collect();
                vals.sort_by(|a, b| a.total_cmp(b));
                kr_low = quantile(&vals, 0.025);
                kr_high = quantile(&vals, 0.975);
                used = vals.len();
            }
            let sd = cov[(d, d)].sqrt();
            let warning = if (bd - Z95 * sd) * (bd + Z95 * sd) <= 0.0 || !sd.is_finite() {
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
            }
        })
        .collect()
}
