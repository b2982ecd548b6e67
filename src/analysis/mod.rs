//! Post-estimation analysis: elasticities, marginal effects, value ratios,
//! diversion, validation and tests between models. Aggregate figures use
//! sample enumeration over the estimation data with the spec's weights.

pub mod analytic;
pub mod compare;
pub mod delta;
pub mod diversion;
pub mod flags;
pub mod hypothesis;
pub mod random;
pub mod ratios;
pub mod sensitivity;
pub mod simulate;
pub mod single_index;
pub mod validation;

use serde::Serialize;

use crate::data::Dataset;
use crate::error::{Error, Result};
use crate::estimate::Fit;
use crate::spec::{Coefficient, Restriction, Spec};

pub use diversion::{DiversionRow, PriceDiversionRow};
pub use flags::FlagRow;
pub use hypothesis::{ChiTest, IiaTest};
pub use ratios::RatioRow;
pub use sensitivity::{ElasticityRow, MarginalRow, Sens, TermMap};
pub use validation::{SegmentShareRow, Validation};

#[derive(Clone, Debug)]
pub struct Options {
    /// Percentage change for arc elasticities, as a fraction (0.10 = 10%).
    pub arc_change: f64,
    /// Krinsky-Robb draws for ratio intervals.
    pub draws: usize,
    pub seed: u64,
    /// Attribute for the price diversion ratios (default: the first shared one).
    pub diversion_attribute: Option<String>,
    /// Segment column for observed vs predicted shares.
    pub by: Option<String>,
    /// Alternative to drop for the Hausman-McFadden IIA test.
    pub iia_drop: Option<String>,
    /// Restrictions for a Wald test besides the spec's own.
    pub restrictions: Vec<String>,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            arc_change: 0.10,
            draws: 10_000,
            seed: 7,
            diversion_attribute: None,
            by: None,
            iia_drop: None,
            restrictions: Vec::new(),
        }
    }
}

impl Options {
    /// Refuses options that would give no figure or could not be held in
    /// memory: an arc change that is zero, not a number or -100% or below, and
    /// more than `delta::MAX_DRAWS` draws. `params` is the number of parameters.
    pub fn check(&self, params: usize) -> Result<()> {
        let pct = self.arc_change * 100.0;
        if !self.arc_change.is_finite() || self.arc_change == 0.0 || self.arc_change <= -1.0 {
            return Err(Error::Usage(format!(
                "--arc {pct}: the arc change must be a finite percentage other than 0 and above -100 (e.g. 10 or -5)"
            )));
        }
        delta::check_draws(self.draws, params, 0)
    }
}

#[derive(Clone, Debug, Serialize)]
pub struct Analysis {
    pub arc_change: f64,
    pub elasticities: Vec<ElasticityRow>,
    pub marginal_effects: Vec<MarginalRow>,
    /// 0/1 variables: the change in shares when the flag switches from 0 to 1
    /// (they have no elasticities or marginal effects).
    pub flag_effects: Vec<FlagRow>,
    pub ratios: Vec<RatioRow>,
    /// Families with random coefficients: each one's implied distribution.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub random_coefficients: Vec<random::RandomRow>,
    /// Figures the family derives from its parameters (the multinomial
    /// probit's error covariance and correlations), with delta-method errors.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub derived: Vec<DerivedRow>,
    pub diversion: Vec<DiversionRow>,
    pub price_diversion: Vec<PriceDiversionRow>,
    pub segments: Vec<SegmentShareRow>,
    pub validation: Validation,
    pub wald: Option<ChiTest>,
    /// Wald test that the family's own parameters equal their null values, where
    /// the family then reduces to a simpler one (nested logit: every scale 1, the logit).
    pub family_test: Option<ChiTest>,
    /// Ordered families: the likelihood ratio against the unordered logit (a guide).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub single_index: Option<single_index::SingleIndexCheck>,
    pub iia: Option<IiaTest>,
    /// Ordered families: the effect of a one-unit change of each
    /// characteristic on the expected category (categories numbered 1..J).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub expected_category: Vec<ExpectedCategoryRow>,
    pub warnings: Vec<String>,
}

/// A figure the family derives from its parameters, with its delta-method error.
#[derive(Clone, Debug, Serialize)]
pub struct DerivedRow {
    pub group: String,
    pub name: String,
    pub value: f64,
    pub std_error: f64,
}

/// The family's derived figures at the estimates with delta-method errors.
pub fn derived(spec: &Spec, fit: &Fit) -> Vec<DerivedRow> {
    let rows = fit.family.derived(spec, &fit.beta);
    if rows.is_empty() {
        return Vec::new();
    }
    let f = |b: &[f64]| -> Vec<f64> {
        fit.family
            .derived(spec, b)
            .into_iter()
            .map(|r| r.value)
            .collect()
    };
    let se = delta::delta_se(fit, &f);
    rows.into_iter()
        .zip(se)
        .map(|(r, std_error)| DerivedRow {
            group: r.group,
            name: r.name,
            value: r.value,
            std_error,
        })
        .collect()
}

/// d E[category] / dz for a characteristic z, E[category] = sum_k k P_k.
#[derive(Clone, Debug, Serialize)]
pub struct ExpectedCategoryRow {
    pub variable: String,
    pub value: f64,
    pub std_error: f64,
}

/// For ordered families: each characteristic's average effect on the expected
/// category, with delta-method errors; empty for other families.
pub fn expected_category(spec: &Spec, fit: &Fit) -> Vec<ExpectedCategoryRow> {
    if !fit.family.abilities().ordered {
        return Vec::new();
    }
    let d = &fit.design;
    let map = TermMap::new(spec, d);
    let j = d.alternatives();
    let f = |b: &[f64]| -> Vec<f64> {
        let s = sensitivity::sensitivities(&*fit.family, d, &map, b);
        (0..spec.characteristics.len())
            .map(|c| (0..j).map(|k| (k + 1) as f64 * s.char_me[c * j + k]).sum())
            .collect()
    };
    let value = f(&fit.beta);
    let se = delta::delta_se(fit, &f);
    spec.characteristics
        .iter()
        .enumerate()
        .map(|(c, ch)| ExpectedCategoryRow {
            variable: ch.name.clone(),
            value: value[c],
            std_error: se[c],
        })
        .collect()
}

/// A text the user wrote, cut to 60 characters for echoing in a message.
fn clip(text: &str) -> String {
    if text.chars().count() > 60 {
        text.chars().take(57).chain("…".chars()).collect()
    } else {
        text.to_string()
    }
}

/// The alternatives where attribute `a` enters.
pub fn attribute_present(spec: &Spec, a: usize) -> Vec<bool> {
    spec.attributes[a]
        .sources
        .iter()
        .map(|s| s.is_some())
        .collect()
}

/// Elasticity and marginal-effect rows with delta-method errors and arc elasticities.
pub fn sensitivity_rows(
    spec: &Spec,
    fit: &Fit,
    arc_change: f64,
) -> (Vec<ElasticityRow>, Vec<MarginalRow>, Sens) {
    let d = &fit.design;
    let map = TermMap::new(spec, d);
    let family = &*fit.family;
    // Analytic derivatives in one pass where the family has them, else differences.
    let (sens, se) = match analytic::sensitivities_with_jacobian(
        family,
        d,
        &map,
        &fit.beta,
        &fit.free,
        Some(fit.baseline()),
    ) {
        Some((sens, jac)) => (sens, delta::se_from_jacobian(fit, &jac)),
        None => (
            sensitivity::sensitivities(family, d, &map, &fit.beta),
            delta::delta_se(fit, &|b| {
                sensitivity::sensitivities(family, d, &map, b).flat()
            }),
        ),
    };
    let flat = sens.flat();
    let j = d.alternatives();
    let na = spec.attributes.len();
    let names = spec.alternative_names();
    let (base_shares, arcs) = arc_shares(spec, fit, &map, arc_change);
    let mut next = 0;
    let flag_attr = flags::flag_attributes(d, &map);
    let flag_char = flags::flag_characteristics(d);
    let mut el = Vec::new();
    let mut me = Vec::new();
    let off_me = na * j * j;
    let off_ce = 2 * na * j * j;
    let off_cm = off_ce + spec.characteristics.len() * j;
    for (a, attr) in spec.attributes.iter().enumerate() {
        for k in 0..j {
            if map.attribute[a][k].is_none() {
                continue;
            }
            let arc = &arcs[next];
            next += 1;
            for jj in 0..j {
                let idx = (a * j + k) * j + jj;
                // A 0/1 flag has no elasticity (see `flags`); its derivative is kept.
                if !flag_attr[a] {
                    el.push(ElasticityRow {
                        variable: attr.name.clone(),
                        changed: Some(names[k].clone()),
                        affected: names[jj].clone(),
                        value: flat[idx],
                        std_error: se[idx],
                        arc: (arc[jj] / base_shares[jj] - 1.0) / arc_change,
                    });
                }
                me.push(MarginalRow {
                    variable: attr.name.clone(),
                    changed: Some(names[k].clone()),
                    alternative: names[jj].clone(),
                    value: flat[off_me + idx],
                    std_error: se[off_me + idx],
                });
            }
        }
    }
    for (c, ch) in spec.characteristics.iter().enumerate() {
        let arc = &arcs[next];
        next += 1;
        for jj in 0..j {
            let idx = c * j + jj;
            if !flag_char[c] {
                el.push(ElasticityRow {
                    variable: ch.name.clone(),
                    changed: None,
                    affected: names[jj].clone(),
                    value: flat[off_ce + idx],
                    std_error: se[off_ce + idx],
                    arc: (arc[jj] / base_shares[jj] - 1.0) / arc_change,
                });
            }
            me.push(MarginalRow {
                variable: ch.name.clone(),
                changed: None,
                alternative: names[jj].clone(),
                value: flat[off_cm + idx],
                std_error: se[off_cm + idx],
            });
        }
    }
    (el, me, sens)
}

/// Base shares and the shares after each arc step (every attribute of every
/// alternative it enters, then every characteristic), in one pass over the
/// fit's cached base.
fn arc_shares(spec: &Spec, fit: &Fit, map: &TermMap, arc_change: f64) -> (Vec<f64>, Vec<Vec<f64>>) {
    let d = &fit.design;
    let j = d.alternatives();
    let mut edits: Vec<Box<simulate::EditFn>> = Vec::new();
    for a in 0..spec.attributes.len() {
        for k in 0..j {
            let Some(param) = map.attribute[a][k] else {
                continue;
            };
            edits.push(Box::new(move |i: usize, b: &[f64], v: &mut [f64]| {
                if v[k].is_finite() {
                    v[k] += b[param] * d.obs.attributes[a][i * j + k] * arc_change;
                }
            }));
        }
    }
    for c in 0..spec.characteristics.len() {
        edits.push(Box::new(move |i: usize, b: &[f64], v: &mut [f64]| {
            let z = d.obs.characteristics[c][i];
            for (vl, param) in v.iter_mut().zip(&map.characteristic[c]) {
                if let (Some(p), true) = (param, vl.is_finite()) {
                    *vl += b[*p] * z * arc_change;
                }
            }
        }));
    }
    let refs: Vec<&simulate::EditFn> = edits.iter().map(|e| &**e).collect();
    simulate::shares_many(&*fit.family, d, &fit.beta, fit.baseline(), &refs)
}

/// Which attribute the price diversion ratios use.
pub fn diversion_attribute(spec: &Spec, requested: Option<&str>) -> Result<Option<usize>> {
    match requested {
        Some(name) => spec
            .attributes
            .iter()
            .position(|a| a.name == name)
            .map(Some)
            .ok_or_else(|| {
                Error::Usage(format!(
                    "--diversion-attribute: `{name}` is not an attribute of the spec"
                ))
            }),
        None => Ok(spec
            .attributes
            .iter()
            .position(|a| a.coefficient == Coefficient::Shared)),
    }
}

pub fn analyse(spec: &Spec, fit: &Fit, ds: &Dataset, opts: &Options) -> Result<Analysis> {
    opts.check(fit.beta.len())?;
    let d = &fit.design;
    let names = spec.alternative_names();
    let mut warnings = Vec::new();
    let (elasticities, marginal_effects, sens) = sensitivity_rows(spec, fit, opts.arc_change);
    let flag_effects = flags::flag_rows(spec, fit, &TermMap::new(spec, d));

    let draws = if spec.ratios.is_empty() || opts.draws == 0 {
        None
    } else {
        delta::draws(fit, opts.draws, opts.seed)
    };
    if !spec.ratios.is_empty() && opts.draws == 0 {
        warnings.push(
            "--draws 0: no Krinsky-Robb intervals were drawn for the value ratios (shown as —)"
                .into(),
        );
    } else if !spec.ratios.is_empty() && draws.is_none() {
        warnings.push(
            "the covariance is not positive definite, so no Krinsky-Robb draws were made".into(),
        );
    }
    let ratios = ratios::ratios(fit, &spec.ratios, draws.as_deref(), opts.seed);
    warnings.extend(
        ratios
            .iter()
            .filter_map(|r| r.warning.as_ref().map(|w| format!("{}: {w}", r.name))),
    );

    // Ordered categories are not withdrawn: no diversion between them.
    let diversion = if fit.family.abilities().ordered {
        Vec::new()
    } else {
        diversion::removal(&*fit.family, d, &fit.beta, Some(fit.baseline()), &names)
    };
    let price_diversion = match diversion_attribute(spec, opts.diversion_attribute.as_deref())? {
        Some(a) => diversion::price(
            &sens,
            a,
            &spec.attributes[a].name,
            &attribute_present(spec, a),
            &names,
        ),
        None => Vec::new(),
    };

    let segments = match &opts.by {
        Some(col) => validation::by_segment(spec, fit, &ds.table, col)?,
        None => Vec::new(),
    };
    let (hit_rate, mean_chosen_probability) =
        validation::hits(&*fit.family, d, &fit.beta, Some(fit.baseline()));
    let holdout = match validation::holdout_mask(spec, &ds.obs, &ds.table)? {
        Some(mask) => Some(validation::holdout(spec, &ds.obs, &mask)?),
        None => None,
    };

    let mut restrictions: Vec<Restriction> = spec.restrictions.clone();
    for text in &opts.restrictions {
        restrictions.push(
            crate::spec::parse_restriction(text, &spec.parameters)
                .map_err(|m| Error::Usage(format!("--restrict `{}`: {m}", clip(text))))?,
        );
    }
    let wald = if restrictions.is_empty() {
        None
    } else {
        Some(hypothesis::wald(fit, &restrictions)?)
    };
    let family_test = hypothesis::family_reduction(spec, fit)?;
    let single_index = single_index::check(spec, fit)?;
    let iia = match &opts.iia_drop {
        Some(name) => {
            let m = spec.alternative_index(name).ok_or_else(|| {
                Error::Usage(format!("--iia-drop: `{name}` is not an alternative"))
            })?;
            if m == spec.base {
                return Err(Error::Usage(format!(
                    "--iia-drop: `{name}` is the base alternative, the one every constant and characteristic coefficient is measured from, so the test cannot drop it; drop another alternative, or make another one the base ([model].base) to test this one"
                )));
            }
            Some(hypothesis::hausman_mcfadden(spec, &ds.obs, fit, m)?)
        }
        None => None,
    };
    Ok(Analysis {
        arc_change: opts.arc_change,
        elasticities,
        marginal_effects,
        flag_effects,
        ratios,
        random_coefficients: random::rows(fit),
        derived: derived(spec, fit),
        diversion,
        price_diversion,
        segments,
        validation: Validation {
            hit_rate,
            mean_chosen_probability,
            holdout,
        },
        wald,
        family_test,
        single_index,
        expected_category: expected_category(spec, fit),
        iia,
        warnings,
    })
}
