//! `sharecast simulate` (what-if forecasts) and `sharecast sweep` (demand curves).

use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;

use crate::data::{self, Extra};
use crate::error::{Error, Result};
use crate::report;
use crate::scenario::{self, export, prepare, Market, Scenario};

#[derive(Args, Debug)]
pub struct SimulateArgs {
    pub spec: PathBuf,
    /// The scenario file (TOML; see docs/scenarios.md).
    #[arg(long)]
    pub scenario: PathBuf,
    /// Forecast over another data file with the same columns instead of the estimation data.
    #[arg(long, value_name = "FILE")]
    pub data: Option<PathBuf>,
    /// Report shares per value of this column too.
    #[arg(long, value_name = "COLUMN")]
    pub by: Option<String>,
    /// Parameter draws for the uncertainty bands (0 = none).
    #[arg(long, default_value_t = 1000)]
    pub draws: usize,
    #[arg(long, default_value_t = 7)]
    pub seed: u64,
    /// Market size: a number of choices, or `weights` to read the weight column as demand units.
    #[arg(long, value_name = "N|weights")]
    pub market: Option<String>,
    /// Print the forecast as JSON.
    #[arg(long)]
    pub json: bool,
    /// Write the forecast (.csv, .parquet: tidy table; .json: the JSON document).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// With --out: write each situation's base and scenario probabilities instead.
    #[arg(long)]
    pub per_situation: bool,
    /// Replace an existing --out file.
    #[arg(long)]
    pub force: bool,
    /// Reuse a fit saved with `fit --save` when spec and data are unchanged.
    #[arg(long, value_name = "FILE.json")]
    pub load: Option<PathBuf>,
    /// With --data: rows of the file read at a time (default 500,000); a
    /// longer file is forecast chunk by chunk in bounded memory.
    #[arg(long, value_name = "N")]
    pub chunk_rows: Option<usize>,
    /// Show the N alternatives whose share changes most (default: all up to
    /// 12, else 10); --json and --out keep every one.
    #[arg(long, value_name = "N")]
    pub top: Option<usize>,
    /// Layout "tables": shares summed by a column of the table of alternatives.
    #[arg(long, value_name = "COLUMN")]
    pub by_alternative: Option<String>,
}

#[derive(Args, Debug)]
pub struct SweepArgs {
    pub spec: PathBuf,
    /// An attribute, or a characteristic of the decision maker.
    #[arg(long)]
    pub attribute: String,
    /// The alternative whose attribute changes (not for a characteristic).
    #[arg(long)]
    pub alternative: Option<String>,
    /// First multiplier of the attribute.
    #[arg(long, default_value_t = 0.5)]
    pub from: f64,
    /// Last multiplier.
    #[arg(long, default_value_t = 1.5)]
    pub to: f64,
    #[arg(long, default_value_t = 11)]
    pub steps: usize,
    #[arg(long)]
    pub json: bool,
    /// Reuse a fit saved with `fit --save` when spec and data are unchanged.
    #[arg(long, value_name = "FILE.json")]
    pub load: Option<PathBuf>,
}

fn market(text: &Option<String>) -> Result<Option<Market>> {
    match text.as_deref() {
        None => Ok(None),
        Some("weights") => Ok(Some(Market::Weights)),
        Some(t) => t
            .parse::<f64>()
            .ok()
            .filter(|v| *v > 0.0 && v.is_finite())
            .map(|v| Some(Market::Total(v)))
            .ok_or_else(|| {
                Error::Usage(format!(
                    "--market: `{t}` is neither a positive number nor `weights`"
                ))
            }),
    }
}

/// The rows of a population file read at a time, refused when zero or
/// given without a population file.
fn chunk_rows(args: &SimulateArgs) -> Result<usize> {
    match (args.chunk_rows, &args.data) {
        (Some(_), None) => Err(Error::Usage(
            "--chunk-rows goes with --data: it says how many rows of the population file are read at a time; without --data the forecast runs over the spec's own data, read whole".into(),
        )),
        (Some(0), Some(_)) => Err(Error::Usage(
            "--chunk-rows: give a number of rows of at least 1".into(),
        )),
        (rows, _) => Ok(rows.unwrap_or(data::stream::DEFAULT_CHUNK_ROWS)),
    }
}

pub fn simulate(args: SimulateArgs) -> Result<ExitCode> {
    let rows = chunk_rows(&args)?;
    let spec = crate::model::read_spec(&args.spec)?;
    let sc = Scenario::from_file(&args.scenario, &spec)?;
    let market = market(&args.market)?;
    crate::analysis::delta::check_draws(
        args.draws,
        spec.parameters.len(),
        2 * spec.alternatives.len() + sc.new_alternatives.len(),
    )?;
    if let Some(out) = &args.out {
        crate::data::write::check_overwrite(out, args.force)?;
    }
    // The fit uses the estimation data; the forecast may run over another file.
    let mut extra = sc.extra(&spec);
    extra.text.extend(args.by.iter().cloned());
    let est = data::load(&spec, &extra)?;
    let (fit, note) = super::fit_or_restore(&spec, &est, args.load.as_deref())?;
    if let Some(n) = note {
        crate::errln!("{n}");
    }
    let opts = scenario::Options {
        draws: args.draws,
        seed: args.seed,
        by: args.by.clone(),
        market,
        quick: false,
    };
    let (f, fit) = match &args.data {
        None => in_memory(&args, &spec, &sc, &opts, fit, est)?,
        Some(file) => {
            let mut chunks = data::stream::Chunks::open(&spec, file, &extra, rows)?;
            if chunks.single() {
                drop(chunks);
                let other = data::load_file(&spec, file, &extra)?;
                let design =
                    crate::design::Design::build(&spec, std::sync::Arc::new(other.obs.clone()));
                fit.family
                    .check_forecast_data(&spec, &design)
                    .map_err(|m| {
                        crate::error::Error::data(file, format!("forecasting over this file: {m}"))
                    })?;
                let fit = crate::estimate::Fit {
                    design,
                    baseline: Default::default(),
                    ..fit
                };
                in_memory(&args, &spec, &sc, &opts, fit, other)?
            } else {
                drop(est);
                (streamed(&args, &spec, &sc, &opts, &fit, &mut chunks)?, fit)
            }
        }
    };
    let mut f = f;
    if let Some(c) = &args.by_alternative {
        f.by_alternative = Some(scenario::grouped::by_alternative(&f, &fit, c)?);
    }
    if args.json {
        crate::outln!("{}", serde_json::to_string_pretty(&f).unwrap_or_default());
    } else {
        crate::out!("{}", report::forecast::text_top(&f, args.top));
        crate::outln!();
        crate::out!("{}", report::text::closing(&spec, &fit));
        if let Some(out) = &args.out {
            crate::outln!("wrote {}", out.display());
        }
    }
    Ok(ExitCode::SUCCESS)
}

/// The forecast over data held in memory (and its export).
fn in_memory(
    args: &SimulateArgs,
    spec: &crate::spec::Spec,
    sc: &Scenario,
    opts: &scenario::Options,
    fit: crate::estimate::Fit,
    ds: data::Dataset,
) -> Result<(scenario::Forecast, crate::estimate::Fit)> {
    let f = super::with_line(|line| {
        scenario::forecast_with(spec, &fit, &ds, sc, opts, &|t| line.tick(t))
    })?;
    if let Some(out) = &args.out {
        if args.per_situation {
            let prep = prepare::prepare(spec, &fit, &ds.table, sc)?;
            let (beta, _) = scenario::base_parameters(spec, &fit, sc)?;
            export::per_situation(out, args.force, &*fit.family, &fit.design, &beta, &prep)?;
        } else {
            export::forecast(out, args.force, &f)?;
        }
    }
    Ok((f, fit))
}

/// The forecast over a population read chunk by chunk; per-situation rows
/// are appended to one file as each chunk is done.
fn streamed(
    args: &SimulateArgs,
    spec: &crate::spec::Spec,
    sc: &Scenario,
    opts: &scenario::Options,
    fit: &crate::estimate::Fit,
    chunks: &mut data::stream::Chunks,
) -> Result<scenario::Forecast> {
    let Some(out) = args.out.as_ref().filter(|_| args.per_situation) else {
        let f = super::with_line(|line| {
            scenario::stream::forecast_with(spec, fit, chunks, sc, opts, None, &|t| line.tick(t))
        })?;
        if let Some(out) = &args.out {
            export::forecast(out, args.force, &f)?;
        }
        return Ok(f);
    };
    // The format is checked before anything is read.
    export::SituationWriter::new(out)?;
    let mut result = None;
    data::write::atomic(out, args.force, |file| {
        let mut writer = export::SituationWriter::new(out)?;
        {
            let mut append = |cf: &crate::estimate::Fit, prep: &prepare::Prepared, beta: &[f64]| {
                let cols = export::situation_columns(&*cf.family, &cf.design, beta, prep);
                writer.append(out, file, &cols)
            };
            let sink: scenario::stream::Sink = &mut append;
            result = Some(super::with_line(|line| {
                let ticks = |t| line.tick(t);
                scenario::stream::forecast_with(spec, fit, chunks, sc, opts, Some(sink), &ticks)
            })?);
        }
        writer.finish(out, file)
    })?;
    result.ok_or_else(|| Error::Usage("the forecast did not run".into()))
}

pub fn sweep(args: SweepArgs) -> Result<ExitCode> {
    let (spec, ds) = super::open(&args.spec, &Extra::default())?;
    crate::error::check_count(
        "--steps",
        args.steps,
        scenario::sweep::MAX_STEPS,
        8 * spec.alternatives.len() + 48,
    )?;
    let (fit, note) = super::fit_or_restore(&spec, &ds, args.load.as_deref())?;
    if let Some(n) = note {
        crate::errln!("{n}");
    }
    let req = scenario::sweep::Request {
        attribute: args.attribute.clone(),
        alternative: args.alternative.clone(),
        from: args.from,
        to: args.to,
        steps: args.steps,
    };
    let sw = super::with_line(|line| {
        scenario::sweep::sweep_with(&spec, &fit, &ds, &req, &|t| line.tick(t))
    })?;
    if args.json {
        crate::outln!("{}", serde_json::to_string_pretty(&sw).unwrap_or_default());
    } else {
        crate::out!("{}", report::forecast::sweep(&sw));
        crate::outln!();
        crate::out!("{}", report::text::closing(&spec, &fit));
    }
    Ok(ExitCode::SUCCESS)
}
