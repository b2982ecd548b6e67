//! Post-estimation analysis: elasticities, marginal effects, value ratios,
//! diversion, validation and tests between models. Aggregate figures use
//! sample enumeration over the estimation data with the spec's weights.

pub mod analytic;
pub mod class_count;
pub mod classes;
pub mod compare;
pub mod correlation;
pub mod delta;
pub mod diversion;
pub mod flags;
mod focus;
pub mod grouped;
pub mod hypothesis;
pub mod random;
mod ratio_terms;
pub mod ratios;
pub mod rows;
pub mod sensitivity;
pub mod simulate;
pub mod single_index;
pub mod validation;

use serde::Serialize;

use crate::data::Dataset;
use crate::error::{Error, Result};
use crate::estimate::Fit;
use crate::progress::{self, Phase, Sink, QUIET};
use crate::spec::{Coefficient, Restriction, Spec};

pub use diversion::{DiversionRow, PriceDiversionRow};
pub use flags::FlagRow;
pub use focus::{focus, TOP_DEFAULT, WHOLE_UP_TO};
pub use hypothesis::{ChiTest, IiaTest};
pub use ratios::RatioRow;
pub use rows::{sensitivity_rows, sensitivity_rows_with};
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
    /// How many alternatives the elasticity, marginal-effect, flag and
    /// diversion tables cover (those with the largest predicted shares);
    /// `None`: all of them up to `WHOLE_UP_TO`, else `TOP_DEFAULT`.
    pub top: Option<usize>,
    /// Layout "tables": group the alternatives by this column of their table
    /// (shares by group, diversion between groups).
    pub by_alternative: Option<String>,
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
            top: None,
            by_alternative: None,
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
    /// The alternatives the elasticity, marginal-effect, flag and diversion
    /// tables cover when they are not all (largest predicted share first).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub top: Option<Vec<String>>,
    /// Shares by a column of the table of alternatives and diversion between
    /// its groups (`--by-alternative`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub by_alternative: Option<grouped::Grouped>,
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
    /// Correlated random coefficients: implied standard deviations and
    /// correlations, and the test of independence.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub correlations: Option<correlation::Correlations>,
    /// Figures the family derives from its parameters (the multinomial
    /// probit's error covariance and correlations), with delta-method errors.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub derived: Vec<DerivedRow>,
    /// Latent classes: each class's size and predicted shares, and the
    /// class shares by the values of each membership column.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub classes: Option<classes::Classes>,
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
    let rows = fit.family.derived(spec, &fit.design, &fit.beta);
    if rows.is_empty() {
        return Vec::new();
    }
    let f = |b: &[f64]| -> Vec<f64> {
        fit.family
            .derived(spec, &fit.design, b)
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
    analyse_with(spec, fit, ds, opts, QUIET)
}

/// `analyse`, reporting each section as a phase to `sink`: `elasticities`,
/// `flag effects` (with 0/1 variables), `value ratios` and `Krinsky-Robb
/// draws` (with ratios), `diversion`, `validation`, `tests`, `derived figures`.
/// The figures are the same with any sink.
pub fn analyse_with(
    spec: &Spec,
    fit: &Fit,
    ds: &Dataset,
    opts: &Options,
    sink: Sink,
) -> Result<Analysis> {
    opts.check(fit.beta.len())?;
    let focus = focus(fit, opts.top);
    let (elasticities, marginal_effects, sens) =
        sensitivity_rows_with(spec, fit, (opts.arc_change, &focus), sink);
    let map = TermMap::focused(spec, &fit.design, &focus);
    let flag_effects = flags::flag_rows_with(spec, fit, &map, sink);
    let (ratios, warnings) = ratio_section(spec, fit, opts, sink);
    let phase = Phase::start(sink, "diversion", 1);
    let (diversion, price_diversion) = diversion_section(spec, fit, opts, (&sens, &focus))?;
    let by_alternative = match &opts.by_alternative {
        Some(c) => Some(grouped::by_alternative(fit, c)?),
        None => None,
    };
    phase.finish();
    let validation = progress::one(sink, "validation", || {
        validation_section(spec, fit, ds, opts)
    });
    let (segments, validation) = validation?;
    let tests = tests_section(spec, fit, ds, opts, sink)?;
    let phase = Phase::start(sink, "derived figures", 3);
    let random_coefficients = random::rows(fit);
    let correlations = correlation::correlations(fit);
    phase.step();
    let derived = derived(spec, fit);
    let classes = classes::classes(spec, fit, &derived);
    phase.step();
    let expected_category = expected_category(spec, fit);
    phase.finish();
    let names = spec.alternative_names();
    let top =
        (focus.len() < names.len()).then(|| focus.iter().map(|&k| names[k].clone()).collect());
    Ok(Analysis {
        top,
        by_alternative,
        arc_change: opts.arc_change,
        elasticities,
        marginal_effects,
        flag_effects,
        ratios,
        random_coefficients,
        correlations,
        derived,
        classes,
        diversion,
        price_diversion,
        segments,
        validation,
        wald: tests.wald,
        family_test: tests.family_test,
        single_index: tests.single_index,
        expected_category,
        iia: tests.iia,
        warnings,
    })
}

/// The value ratios with their Krinsky-Robb intervals, and the warnings they raise.
fn ratio_section(
    spec: &Spec,
    fit: &Fit,
    opts: &Options,
    sink: Sink,
) -> (Vec<RatioRow>, Vec<String>) {
    let mut warnings = Vec::new();
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
    let ratios = ratios::ratios_with(fit, &spec.ratios, draws.as_deref(), opts.seed, sink);
    warnings.extend(
        ratios
            .iter()
            .filter_map(|r| r.warning.as_ref().map(|w| format!("{}: {w}", r.name))),
    );
    (ratios, warnings)
}

/// Diversion on withdrawal and price diversion ratios.
fn diversion_section(
    spec: &Spec,
    fit: &Fit,
    opts: &Options,
    (sens, focus): (&Sens, &[usize]),
) -> Result<(Vec<DiversionRow>, Vec<PriceDiversionRow>)> {
    let names = spec.alternative_names();
    // Ordered categories are not withdrawn: no diversion between them.
    let diversion = if fit.family.abilities().ordered {
        Vec::new()
    } else {
        diversion::removal(
            &*fit.family,
            &fit.design,
            &fit.beta,
            Some(fit.baseline()),
            (&names, focus),
        )
    };
    let price_diversion = match diversion_attribute(spec, opts.diversion_attribute.as_deref())? {
        Some(a) => diversion::price(
            sens,
            a,
            &spec.attributes[a].name,
            &attribute_present(spec, a),
            (&names, focus),
        ),
        None => Vec::new(),
    };
    Ok((diversion, price_diversion))
}

/// Observed and predicted shares by segment, the hit rate and the holdout.
fn validation_section(
    spec: &Spec,
    fit: &Fit,
    ds: &Dataset,
    opts: &Options,
) -> Result<(Vec<SegmentShareRow>, Validation)> {
    let segments = match &opts.by {
        Some(col) => validation::by_segment(spec, fit, &ds.table, col)?,
        None => Vec::new(),
    };
    let (hit_rate, mean_chosen_probability) =
        validation::hits(&*fit.family, &fit.design, &fit.beta, Some(fit.baseline()));
    let holdout = match validation::holdout_mask(spec, &ds.obs, &ds.table)? {
        Some(mask) => Some(validation::holdout(spec, &ds.obs, &mask)?),
        None => None,
    };
    Ok((
        segments,
        Validation {
            hit_rate,
            mean_chosen_probability,
            holdout,
        },
    ))
}

/// The tests between models.
struct Tests {
    wald: Option<ChiTest>,
    family_test: Option<ChiTest>,
    single_index: Option<single_index::SingleIndexCheck>,
    iia: Option<IiaTest>,
}

/// The Wald test of the restrictions, the family's reduction test, the
/// single-index check and the IIA test, as the phase `tests` of four steps.
fn tests_section(
    spec: &Spec,
    fit: &Fit,
    ds: &Dataset,
    opts: &Options,
    sink: Sink,
) -> Result<Tests> {
    let phase = Phase::start(sink, "tests", 4);
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
    phase.step();
    let family_test = hypothesis::family_reduction(spec, fit)?;
    phase.step();
    let single_index = single_index::check(spec, fit)?;
    phase.step();
    let iia = match &opts.iia_drop {
        Some(name) => Some(iia_test(spec, fit, ds, name)?),
        None => None,
    };
    phase.finish();
    Ok(Tests {
        wald,
        family_test,
        single_index,
        iia,
    })
}

/// The Hausman-McFadden test dropping alternative `name`.
fn iia_test(spec: &Spec, fit: &Fit, ds: &Dataset, name: &str) -> Result<IiaTest> {
    let m = spec
        .alternative_index(name)
        .ok_or_else(|| Error::Usage(format!("--iia-drop: `{name}` is not an alternative")))?;
    if m == spec.base {
        return Err(Error::Usage(format!(
            "--iia-drop: `{name}` is the base alternative, the one every constant and characteristic coefficient is measured from, so the test cannot drop it; drop another alternative, or make another one the base ([model].base) to test this one"
        )));
    }
    hypothesis::hausman_mcfadden(spec, &ds.obs, fit, m)
}
