//! `sharecast bench`: the command line's flags for the benchmark room (`crate::bench`).

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Args, ValueEnum};

use crate::bench::{self, Options};
use crate::error::Result;

/// The simulated model.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum BenchModel {
    /// 4 constants, 3 shared attributes (a column per alternative), 2
    /// characteristics on the 4 non-base alternatives: 15 parameters.
    Full,
    /// 4 constants and the 2 characteristics only: 12 parameters.
    Characteristics,
    /// The full model as a nested logit (two nests of two): 17 parameters.
    Nested,
    /// A mixed logit panel: --decision-makers x --tasks situations of 4
    /// alternatives, 3 fixed constants and 4 random attributes, --draws Halton
    /// draws; side by side with a plain numpy pass (bench/mixed_peer.py).
    Mixed,
    /// A multinomial probit: --situations (default 20,000) of 5 alternatives,
    /// full error covariance (15 parameters), --draws GHK draws (default 500).
    Probit,
    /// A forecast over a Parquet population of --situations situations read
    /// in chunks (`simulate --data`), the full model fitted on a sample.
    Stream,
    /// A latent class logit panel: --decision-makers x --tasks situations of
    /// 4 alternatives from 3 classes, membership on 2 columns, --starts
    /// random starts; side by side with an independent numpy/scipy latent
    /// class code (bench/classes_peer.py).
    Classes,
    /// Destination choice: --situations trips (default 1,000,000) over
    /// --zones zones (1,000) with a zones x zones pairs table in Parquet:
    /// `fit --no-analysis` on --sampled (50) sampled zones per trip, and a
    /// forecast over the full sets streamed in chunks.
    Destinations,
    /// The survey design search: 3 alternatives, 5 attributes, 24 tasks in
    /// 3 blocks, normal priors over --draws prior draws (default 1,000),
    /// --starts random starts (default 8); the D-error reached against time.
    Design,
}

#[derive(Args, Debug)]
pub struct BenchArgs {
    /// Number of choice situations to simulate (default 1,000,000; 20,000 for --model probit).
    #[arg(long)]
    pub situations: Option<usize>,
    /// Which model to simulate and fit.
    #[arg(long, value_enum, default_value_t = BenchModel::Full)]
    pub model: BenchModel,
    /// Write the data and spec into this folder and keep them, replacing its
    /// bench.csv and bench.toml (default: a temporary folder, removed after).
    #[arg(long, value_name = "DIR")]
    pub keep: Option<PathBuf>,
    /// Only write the data and spec (needs --keep); time nothing.
    #[arg(long, requires = "keep")]
    pub write_only: bool,
    /// Timed repetitions of the likelihood pass and of the streaming pass (the median is reported).
    #[arg(long, default_value_t = 9)]
    pub repeats: usize,
    /// Skip the run of `sharecast fit` as a separate process.
    #[arg(long)]
    pub no_process: bool,
    /// Print the figures as JSON.
    #[arg(long)]
    pub json: bool,
    /// For profilers: only load the data and run this many likelihood+gradient
    /// passes at the true parameters (with --hessian, full passes), then stop.
    #[arg(long, value_name = "PASSES")]
    pub profile: Option<usize>,
    /// With --profile: passes with the Hessian.
    #[arg(long, requires = "profile")]
    pub hessian: bool,
    /// --model mixed and classes: decision makers in the panel.
    #[arg(long, default_value_t = 5_000)]
    pub decision_makers: usize,
    /// --model mixed and classes: choice tasks per decision maker.
    #[arg(long, default_value_t = 10)]
    pub tasks: usize,
    /// --model mixed: Halton draws per decision maker (default 1,000);
    /// --model probit: GHK draws per situation (default 500);
    /// --model design: prior draws (default 1,000).
    #[arg(long)]
    pub draws: Option<usize>,
    /// --model mixed and classes: do not run the numpy peer.
    #[arg(long)]
    pub no_peer: bool,
    /// --model mixed: simulate correlated tastes and fit the independent and
    /// the correlated model on them in the same run (no numpy peer).
    #[arg(long)]
    pub correlated: bool,
    /// --model classes: random starts of the latent class search (default 20);
    /// --model design: random starts of the design search (default 8).
    #[arg(long)]
    pub starts: Option<usize>,
    /// --model classes: the numpy peer begins no new start after this many
    /// seconds (it runs at least one).
    #[arg(long, default_value_t = 180.0)]
    pub peer_seconds: f64,
    /// --model stream: rows of the population read at a time.
    #[arg(long, default_value_t = crate::data::stream::DEFAULT_CHUNK_ROWS)]
    pub chunk_rows: usize,
    /// --model stream: parameter draws of the timed run with bands (0: none).
    #[arg(long, default_value_t = 10)]
    pub band_draws: usize,
    /// --model destinations: zones (alternatives), at most 5,000.
    #[arg(long, default_value_t = 1_000, value_parser = clap::value_parser!(u64).range(2..=5_000))]
    pub zones: u64,
    /// --model destinations: zones drawn per trip besides the chosen one.
    #[arg(long, default_value_t = 50)]
    pub sampled: usize,
}

pub fn run(args: BenchArgs) -> Result<ExitCode> {
    if args.correlated && args.model != BenchModel::Mixed {
        return Err(crate::error::Error::Usage(
            "--correlated applies to --model mixed".into(),
        ));
    }
    if let Some(own) = own_runner(args.model) {
        return own(args);
    }
    let draws = args.draws.unwrap_or(if args.model == BenchModel::Probit {
        500
    } else {
        1_000
    });
    if draws > crate::model::draws::MAX_DRAWS {
        return Err(crate::error::Error::Usage(format!(
            "--draws {draws}: at most {} draws",
            crate::model::draws::MAX_DRAWS
        )));
    }
    if args.model == BenchModel::Probit {
        if args.profile.is_some() {
            return Err(crate::error::Error::Usage(
                "--profile applies to the logit and nested models".into(),
            ));
        }
        return bench::probit::run(bench::probit::ProbitOptions {
            situations: args.situations.unwrap_or(20_000),
            draws,
            repeats: args.repeats.min(5),
            keep: args.keep,
            no_process: args.no_process,
            json: args.json,
            write_only: args.write_only,
        });
    }
    if args.model == BenchModel::Mixed {
        if args.profile.is_some() {
            return Err(crate::error::Error::Usage(
                "--profile applies to the logit and nested models; for --model mixed time the passes without it".into(),
            ));
        }
        return bench::mixed::run(bench::mixed::MixedOptions {
            decision_makers: args.decision_makers,
            tasks: args.tasks,
            draws,
            repeats: args.repeats.min(5),
            keep: args.keep,
            no_process: args.no_process,
            no_peer: args.no_peer,
            json: args.json,
            write_only: args.write_only,
            correlated: args.correlated,
        });
    }
    bench::run(Options {
        situations: args.situations.unwrap_or(1_000_000),
        model: match args.model {
            BenchModel::Full => bench::Model::Full,
            BenchModel::Characteristics => bench::Model::Characteristics,
            BenchModel::Nested => bench::Model::Nested,
            // handled above
            BenchModel::Mixed
            | BenchModel::Probit
            | BenchModel::Stream
            | BenchModel::Classes
            | BenchModel::Destinations
            | BenchModel::Design => bench::Model::Full,
        },
        keep: args.keep,
        write_only: args.write_only,
        repeats: args.repeats,
        no_process: args.no_process,
        json: args.json,
        profile: args.profile,
        hessian: args.hessian,
    })
}

/// `--model stream`: the forecast over a population read in chunks.
fn stream(args: BenchArgs) -> Result<ExitCode> {
    let situations = args.situations.unwrap_or(1_000_000);
    crate::error::check_count("--situations", situations, bench::MAX_SITUATIONS, 0)?;
    if args.chunk_rows == 0 || args.profile.is_some() {
        return Err(crate::error::Error::Usage(
            "--model stream: --chunk-rows must be at least 1, and --profile does not apply".into(),
        ));
    }
    bench::stream::run(bench::stream::StreamOptions {
        situations,
        chunk_rows: args.chunk_rows,
        band_draws: args.band_draws,
        keep: args.keep,
        write_only: args.write_only,
        json: args.json,
    })
}

/// `--model classes`: the latent class logit panel.
fn classes(args: BenchArgs) -> Result<ExitCode> {
    if args.profile.is_some() || args.draws.is_some() || args.situations.is_some() {
        return Err(crate::error::Error::Usage(
            "--model classes: the size is --decision-makers x --tasks; --situations, --draws and --profile do not apply".into(),
        ));
    }
    if !(args.peer_seconds >= 0.0 && args.peer_seconds <= 86_400.0) {
        return Err(crate::error::Error::Usage(
            "--peer-seconds must be between 0 and 86400".into(),
        ));
    }
    bench::classes::run(bench::classes::ClassesOptions {
        decision_makers: args.decision_makers,
        tasks: args.tasks,
        starts: args.starts.unwrap_or(20),
        repeats: args.repeats.min(5),
        keep: args.keep,
        no_process: args.no_process,
        no_peer: args.no_peer,
        peer_seconds: args.peer_seconds,
        json: args.json,
        write_only: args.write_only,
    })
}

fn destinations(args: BenchArgs) -> Result<ExitCode> {
    bench::destinations::run(bench::destinations::DestinationOptions {
        situations: args.situations.unwrap_or(1_000_000),
        zones: args.zones as usize,
        sampled: args.sampled,
        keep: args.keep,
        write_only: args.write_only,
        json: args.json,
        chunk_rows: args.chunk_rows,
    })
}

fn design(args: BenchArgs) -> Result<ExitCode> {
    bench::design::run(bench::design::DesignOptions {
        draws: args.draws.unwrap_or(1_000),
        starts: args.starts.unwrap_or(8),
        keep: args.keep,
        json: args.json,
    })
}

/// The models whose benchmark is a runner of its own (not the synthetic fit).
fn own_runner(model: BenchModel) -> Option<fn(BenchArgs) -> Result<ExitCode>> {
    match model {
        BenchModel::Stream => Some(stream),
        BenchModel::Classes => Some(classes),
        BenchModel::Destinations => Some(destinations),
        BenchModel::Design => Some(design),
        _ => None,
    }
}
