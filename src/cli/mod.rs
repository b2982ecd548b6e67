//! The command line: argument parsing and one function per subcommand. Each
//! returns an exit code or an error value; `main` only prints and exits.

mod benchcmd;
mod comparecmd;
mod designcmd;
mod fitclasses;
mod fitcmd;
mod newcmd;
mod progress;
mod reportcmd;
mod simcmd;

use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::Arc;

use clap::{Parser, Subcommand};

use crate::data::{Dataset, Extra, Observations};
use crate::error::Result;
use crate::spec::Spec;

#[derive(Parser, Debug)]
#[command(
    name = "sharecast",
    version,
    about = "Fit, check and forecast discrete-choice models from a TOML spec"
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Load and validate a spec and its data, and summarise them (or check a design file).
    Check { spec: PathBuf },
    /// Fit the model and print the report (or the JSON results document).
    Fit(fitcmd::FitArgs),
    /// Fit several specs and compare them side by side (LR tests where nested).
    Compare(comparecmd::CompareArgs),
    /// Forecast shares under a scenario (what-if), with uncertainty bands.
    Simulate(simcmd::SimulateArgs),
    /// Shares over a range of one attribute of one alternative (a demand curve).
    Sweep(simcmd::SweepArgs),
    /// Draft a commented spec from a CSV or Parquet data file.
    New(newcmd::NewArgs),
    /// Write one self-contained HTML report of a fit, its analysis and scenarios.
    Report(reportcmd::ReportArgs),
    /// Write the invented demo data sets into a folder.
    DemoData {
        /// Target folder.
        dir: PathBuf,
        /// Replace files that exist already.
        #[arg(long)]
        force: bool,
    },
    /// Search for an efficient stated-choice design (the tasks to show respondents).
    Design(designcmd::DesignArgs),
    /// Time loading, one likelihood pass and a whole fit on simulated data.
    Bench(benchcmd::BenchArgs),
    /// The interactive workbench: estimates, elasticities, diversion, what-ifs and curves.
    Explore(ExploreArgs),
}

#[derive(clap::Args, Debug)]
pub struct ExploreArgs {
    /// One or more specs (with several, the compare view sets them side by
    /// side), or one design file.
    #[arg(required = true, num_args = 1..)]
    pub specs: Vec<PathBuf>,
    /// Reuse a fit saved with `fit --save` when spec and data are unchanged.
    #[arg(long, value_name = "FILE.json")]
    pub load: Option<PathBuf>,
}

/// Loads a spec and its data (with extra columns, e.g. for segments).
pub fn open(spec_path: &Path, extra: &Extra) -> Result<(Spec, Dataset)> {
    crate::workspace::open(spec_path, extra)
}

pub use progress::Line;

/// Runs `work` with the stderr progress line, cleared when it returns.
pub fn with_line<T>(work: impl FnOnce(&Line) -> T) -> T {
    let line = Line::stderr();
    let out = work(&line);
    line.clear();
    out
}

pub fn run(cli: Cli) -> Result<ExitCode> {
    match cli.command {
        Command::Check { spec } if crate::experiment::is_design_file(&spec) => {
            let plan = crate::experiment::read(&spec)?;
            crate::out!("{}", crate::report::experiment::plan_summary(&plan));
            crate::outln!("\nthe design file is valid");
            Ok(ExitCode::SUCCESS)
        }
        Command::Check { spec } => {
            let (spec, ds) = open(&spec, &Extra::default())?;
            crate::out!("{}", crate::report::check::summary(&spec, &ds.obs));
            crate::outln!("\nthe spec and its data are valid");
            Ok(ExitCode::SUCCESS)
        }
        Command::Fit(args) => fitcmd::run(args),
        Command::Compare(args) => comparecmd::run(args),
        Command::Simulate(args) => simcmd::simulate(args),
        Command::Sweep(args) => simcmd::sweep(args),
        Command::New(args) => newcmd::run(args),
        Command::Report(args) => reportcmd::run(args),
        Command::DemoData { dir, force } => {
            crate::demo::write_all(&dir, force)?;
            crate::outln!(
                "wrote {}, {}, {}, {}, {}, {}, {} and {}",
                dir.join("commute.csv").display(),
                dir.join("grocery.parquet").display(),
                dir.join("ratings.csv").display(),
                dir.join("express_survey.csv").display(),
                dir.join("garden_panel.csv").display(),
                dir.join("velmora_zones.csv").display(),
                dir.join("velmora_skims.parquet").display(),
                dir.join("velmora_trips.csv").display()
            );
            Ok(ExitCode::SUCCESS)
        }
        Command::Design(args) => designcmd::run(args),
        Command::Bench(args) => benchcmd::run(args),
        Command::Explore(args) => crate::tui::run(args.specs, args.load),
    }
}

/// What `fit_quietly` fits: a borrowed `Dataset` (its observations are copied)
/// or an owned one (its observations are moved and the rest dropped: no copy).
pub trait IntoObservations {
    fn into_observations(self) -> Arc<Observations>;
}

impl IntoObservations for &Dataset {
    fn into_observations(self) -> Arc<Observations> {
        Arc::new(self.obs.clone())
    }
}

impl IntoObservations for Dataset {
    fn into_observations(self) -> Arc<Observations> {
        Arc::new(self.obs)
    }
}

impl IntoObservations for Observations {
    fn into_observations(self) -> Arc<Observations> {
        Arc::new(self)
    }
}

impl IntoObservations for Arc<Observations> {
    fn into_observations(self) -> Arc<Observations> {
        self
    }
}

/// Uses a saved fit (`fit --save`) when its fingerprint matches the spec and data;
/// otherwise fits (with the stderr progress line). The note says which happened and why.
pub fn fit_or_restore(
    spec: &Spec,
    ds: &Dataset,
    load: Option<&Path>,
) -> Result<(crate::estimate::Fit, Option<String>)> {
    let Some(path) = load else {
        return Ok((fit_quietly(spec, ds)?, None));
    };
    with_line(|line| {
        let obs = Arc::new(ds.obs.clone());
        crate::workspace::fit_or_restore(spec, obs, Some(path), &|s| line.step(s))
    })
}

/// Shared by commands that fit: fits with the stderr progress line. Pass the
/// dataset by value when it is not needed afterwards, to avoid a copy.
pub fn fit_quietly(spec: &Spec, ds: impl IntoObservations) -> Result<crate::estimate::Fit> {
    let obs = ds.into_observations();
    with_line(|line| crate::estimate::fit(spec, obs, &|s| line.step(s)))
}

pub fn main() -> ExitCode {
    let cli = Cli::parse();
    match run(cli) {
        Ok(code) => code,
        Err(e) => {
            crate::errln!("error: {e}");
            ExitCode::from(1)
        }
    }
}
