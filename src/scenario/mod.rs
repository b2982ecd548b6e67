//! Scenarios and forecasts: what-if simulation by sample enumeration with
//! uncertainty bands from parameter draws, constant calibration, demand
//! curves, and exports a spreadsheet can read.

pub mod calibrate;
pub mod export;
mod figures;
pub mod file;
pub mod grouped;
mod pick;
pub mod prepare;
mod rows;
pub mod simulate;
pub mod stream;
pub mod sweep;
mod written;

use figures::{assemble, Figures};

use serde::Serialize;

pub use file::{Change, NewAlternative, Op, Scenario, Target};

use crate::analysis::delta::draws;
use crate::data::Dataset;
use crate::error::{Error, Result};
use crate::estimate::Fit;
use crate::progress::{Phase, Sink, QUIET};
use crate::spec::Spec;

/// How shares become volumes.
#[derive(Clone, Debug, PartialEq)]
pub enum Market {
    /// A total number of choices (trips, purchases) in the market.
    Total(f64),
    /// The spec's weight column, read as demand units.
    Weights,
}

#[derive(Clone, Debug)]
pub struct Options {
    pub draws: usize,
    pub seed: u64,
    pub by: Option<String>,
    pub market: Option<Market>,
    /// A quick point forecast: a family that simulates uses its cheaper
    /// version (fewer draws per decision maker, `Family::for_bands`).
    pub quick: bool,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            draws: 1000,
            seed: 7,
            by: None,
            market: None,
            quick: false,
        }
    }
}

#[derive(Clone, Debug, Serialize)]
pub struct ShareRow {
    pub alternative: String,
    pub base: f64,
    pub scenario: f64,
    pub change: f64,
    pub relative_change: f64,
    pub low: f64,
    pub high: f64,
    pub change_low: f64,
    pub change_high: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub base_volume: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub scenario_volume: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub base_revenue: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub scenario_revenue: Option<f64>,
}

#[derive(Clone, Debug, Serialize)]
pub struct SwitchRow {
    pub from: String,
    pub to: String,
    pub share: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct SegmentRow {
    pub segment: String,
    pub alternative: String,
    pub situations: usize,
    pub base: f64,
    pub scenario: f64,
    pub change: f64,
    pub low: f64,
    pub high: f64,
}

/// A forecast: everything `simulate` reports, exports and writes as JSON.
#[derive(Clone, Debug, Serialize)]
pub struct Forecast {
    pub scenario: String,
    pub draws: usize,
    pub seed: u64,
    pub situations: usize,
    pub shares: Vec<ShareRow>,
    pub switching: Vec<SwitchRow>,
    pub segments: Vec<SegmentRow>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub segment_column: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub market: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub calibration: Option<calibrate::Calibrated>,
    /// Situations the scenario leaves with no available alternative.
    pub stranded_situations: usize,
    /// Their share of the weight: demand that leaves the market, so the
    /// scenario shares add up to 1 minus this.
    pub lost_share: f64,
    pub warnings: Vec<String>,
    /// Latent classes: each class's size and its shares at the base and
    /// under the scenario (the point forecast; no bands).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub classes: Vec<ClassForecast>,
    /// Layout "tables": the shares summed by a column of the table of
    /// alternatives (`simulate --by-alternative`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub by_alternative: Option<grouped::GroupedForecast>,
}

/// One latent class's shares at the base and under a scenario.
#[derive(Clone, Debug, Serialize)]
pub struct ClassForecast {
    pub class: String,
    /// Its share of the (weighted) situations.
    pub size: f64,
    /// Shares at the base, in the forecast's alternative order (0 for a new one).
    pub base: Vec<f64>,
    pub scenario: Vec<f64>,
}

/// Each latent class's shares at `beta` before and after the prepared
/// scenario (empty for a family without classes).
pub(crate) fn class_rows(fit: &Fit, beta: &[f64], prep: &prepare::Prepared) -> Vec<ClassForecast> {
    let Some(b) = crate::analysis::classes::by_class_at(fit, beta, Some(prep)) else {
        return Vec::new();
    };
    let m = prep.alternatives();
    (0..b.size.len())
        .map(|c| {
            let mut base = b.base[c].clone();
            base.resize(m, 0.0);
            ClassForecast {
                class: format!("class{}", c + 1),
                size: b.size[c],
                base,
                scenario: b.after[c].clone(),
            }
        })
        .collect()
}

impl ClassForecast {
    /// Adds `other` (a part of the population with weight `w`) to these
    /// running sums: size, and shares times size, all times the weight.
    fn add(&mut self, other: &ClassForecast, w: f64) {
        let mass = other.size * w;
        self.size += mass;
        for (a, b) in self.base.iter_mut().zip(&other.base) {
            *a += b * mass;
        }
        for (a, b) in self.scenario.iter_mut().zip(&other.scenario) {
            *a += b * mass;
        }
    }

    /// Running sums over a population of weight `total` back into a row.
    fn settle(&mut self, total: f64) {
        let mass = self.size.max(f64::MIN_POSITIVE);
        self.base.iter_mut().for_each(|x| *x /= mass);
        self.scenario.iter_mut().for_each(|x| *x /= mass);
        self.size /= total.max(f64::MIN_POSITIVE);
    }
}

/// Segment index of every situation and the labels, for a situation-level column.
pub fn segment_index(ds: &Dataset, column: &str) -> Result<(Vec<u32>, Vec<String>)> {
    ds.table.segments(column, "--by segment column")
}

/// The parameter vector scenarios use: calibrated when targets are given (scenario first, then spec).
pub fn base_parameters(
    spec: &Spec,
    fit: &Fit,
    scenario: &Scenario,
) -> Result<(Vec<f64>, Option<calibrate::Calibrated>)> {
    base_parameters_with(spec, fit, scenario, QUIET)
}

/// `base_parameters`, reporting a calibration's phase to `sink`.
pub fn base_parameters_with(
    spec: &Spec,
    fit: &Fit,
    scenario: &Scenario,
    sink: Sink,
) -> Result<(Vec<f64>, Option<calibrate::Calibrated>)> {
    let targets = scenario
        .calibration
        .clone()
        .or_else(|| spec.calibration.as_ref().map(|c| c.targets.clone()));
    let (tol, max_it) = spec
        .calibration
        .as_ref()
        .map(|c| (c.tolerance, c.max_iterations))
        .unwrap_or((1e-8, 1000));
    match targets {
        None => Ok((fit.beta.clone(), None)),
        Some(t) => {
            let (d, family) = (&fit.design, &*fit.family);
            let c = calibrate::calibrate_with(spec, d, family, &fit.beta, &t, (tol, max_it), sink)?;
            Ok((c.beta.clone(), Some(c)))
        }
    }
}

/// Refuses what a scenario cannot do with this family, and too many draws.
fn check(spec: &Spec, fit: &Fit, scenario: &Scenario, opts: &Options) -> Result<()> {
    if fit.family.abilities().ordered
        && (!scenario.new_alternatives.is_empty() || !scenario.remove.is_empty())
    {
        return Err(Error::Usage(format!(
            "scenario `{}`: the {} family's categories are ordered ratings on one scale: they can be neither withdrawn nor added; change the characteristics instead",
            scenario.name,
            fit.family.name()
        )));
    }
    crate::analysis::delta::check_draws(
        opts.draws,
        fit.beta.len(),
        2 * spec.alternatives.len() + scenario.new_alternatives.len(),
    )?;
    if !fit.family.abilities().new_alternatives && !scenario.new_alternatives.is_empty() {
        return Err(Error::Usage(format!(
            "new alternatives are not available for the {} family: {}",
            fit.family.name(),
            if fit.family.abilities().binary_only {
                "it has exactly two alternatives"
            } else {
                "its model does not define the errors of an added alternative"
            }
        )));
    }
    Ok(())
}

pub fn forecast(
    spec: &Spec,
    fit: &Fit,
    ds: &Dataset,
    scenario: &Scenario,
    opts: &Options,
) -> Result<Forecast> {
    forecast_with(spec, fit, ds, scenario, opts, QUIET)
}

/// `forecast`, reporting the phases `calibration` (with share targets) and
/// `forecast bands` (one step per parameter draw) to `sink`. The figures are
/// the same with any sink.
pub fn forecast_with(
    spec: &Spec,
    fit: &Fit,
    ds: &Dataset,
    scenario: &Scenario,
    opts: &Options,
    sink: Sink,
) -> Result<Forecast> {
    check(spec, fit, scenario, opts)?;
    let d = &fit.design;
    let prep = prepare::prepare(spec, fit, &ds.table, scenario)?;
    let (beta, calibration) = base_parameters_with(spec, fit, scenario, sink)?;
    let seg = match &opts.by {
        Some(c) => Some(segment_index(ds, c)?),
        None => None,
    };
    let seg_arg = seg.as_ref().map(|(i, l)| (i.as_slice(), l.len()));
    // The cached baseline applies when the parameters are the estimates (no calibration).
    let quick = opts.quick.then(|| fit.family.for_bands()).flatten();
    let baseline = (beta == fit.beta && quick.is_none()).then(|| fit.baseline());
    let family = quick.as_deref().unwrap_or(&*fit.family);
    let what = simulate::What::point(scenario.price);
    let point = simulate::run(family, d, &beta, &prep, seg_arg, what, baseline);
    let mut warnings = Vec::new();
    let (stranded_situations, stranded_weight) = prep.stranded(d);
    let lost_share = stranded_weight / d.total_weight().max(1e-300);
    let run = BandRun {
        fit,
        beta: &beta,
        prep: &prep,
        seg: seg_arg,
    };
    let bands = run.bands(opts, sink).unwrap_or_else(|| {
        warnings.push(NO_BANDS.into());
        Bands::empty(prep.alternatives(), seg_arg.map_or(0, |s| s.1))
    });
    let market = match &opts.market {
        Some(Market::Total(t)) => Some(*t),
        Some(Market::Weights) => Some(d.obs.weight_total),
        None => None,
    };
    let classes = class_rows(fit, &beta, &prep);
    let mut f = assemble(
        scenario,
        opts,
        Figures {
            names: prep.names.clone(),
            point,
            band_scen: bands.scen,
            band_change: bands.change,
            band_seg: bands.seg,
            labels: seg.map(|s| s.1),
            situations: d.situations(),
            stranded_situations,
            lost_share,
            market,
            calibration,
            warnings,
        },
    );
    f.classes = classes;
    Ok(f)
}

/// The shares under each parameter draw: per alternative the scenario share
/// and the change, per segment and alternative the scenario share.
struct Bands {
    scen: Vec<Vec<f64>>,
    change: Vec<Vec<f64>>,
    seg: Vec<Vec<f64>>,
}

impl Bands {
    fn empty(m: usize, nseg: usize) -> Bands {
        Bands {
            scen: vec![Vec::new(); m],
            change: vec![Vec::new(); m],
            seg: vec![Vec::new(); nseg * m],
        }
    }
}

/// What the bands are drawn around: the fit, the parameters used (calibrated
/// or not), the prepared scenario and the segments.
struct BandRun<'a> {
    fit: &'a Fit,
    beta: &'a [f64],
    prep: &'a prepare::Prepared,
    seg: Option<(&'a [u32], usize)>,
}

impl BandRun<'_> {
    /// Bands from draws of the parameters (none without draws), a calibration
    /// shift carried to every draw; `None` when the parameters cannot be drawn.
    fn bands(&self, opts: &Options, sink: Sink) -> Option<Bands> {
        let (fit, m) = (self.fit, self.prep.alternatives());
        let mut out = Bands::empty(m, self.seg.map_or(0, |s| s.1));
        if opts.draws == 0 {
            return Some(out);
        }
        let all = draws(fit, opts.draws, opts.seed)?;
        let shift: Vec<f64> = self
            .beta
            .iter()
            .zip(&fit.beta)
            .map(|(a, b)| a - b)
            .collect();
        // A family that simulates may use fewer draws per parameter draw.
        let family = fit.family.for_bands().unwrap_or_else(|| fit.family.clone());
        let phase = Phase::start(sink, "forecast bands", all.len());
        // The draws run over the cores, each taking the next: a pass over a
        // small sample is one piece (one core) by itself. Each draw's shares
        // are computed as alone, and kept in draw order.
        let each = crate::design::on_ranges((0..all.len()).map(|i| i..i + 1).collect(), |r| {
            let b: Vec<f64> = all[r.start]
                .iter()
                .zip(&shift)
                .map(|(x, s)| x + s)
                .collect();
            let out = simulate::shares_only(&*family, &fit.design, &b, self.prep, self.seg);
            phase.step();
            out
        });
        for (base, scen, segs) in each {
            for a in 0..m {
                out.scen[a].push(scen[a]);
                out.change[a].push(scen[a] - base[a]);
            }
            for (s, (_, sc)) in segs.iter().enumerate() {
                for (a, x) in sc.iter().enumerate().take(m) {
                    out.seg[s * m + a].push(*x);
                }
            }
            phase.step();
        }
        phase.finish();
        Some(out)
    }
}

/// The warning when the parameters cannot be drawn.
const NO_BANDS: &str = "the covariance is not positive definite: no uncertainty bands";
