//! `sharecast bench`: simulates a large wide data set from known logit
//! parameters (invented data, fixed seed), fits it the way `sharecast fit`
//! does, and times each stage: loading the CSV, one likelihood+gradient pass
//! (against the time to merely stream the bytes that pass reads), the number
//! of passes, the whole fit, `sharecast fit` as a separate process, and the
//! peak memory. `docs/performance.md` reports the figures.

pub mod classes;
mod classes_report;
pub mod correlated;
pub mod design;
pub mod destinations;
mod figures;
mod measure;
pub mod mixed;
pub mod probit;
mod process;
pub mod stream;
mod synthetic;

pub(crate) use process::{
    in_folder, mb, median, ms, own_path, run_peer, time_command, time_process,
};
pub use process::{peak_memory, status_bytes};
pub(crate) use synthetic::{draw, pick, AGE, ALTS, ASC, INCOME};
pub use synthetic::{spec_text, truth, write_data, write_set, Model, SEED};

use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Instant;

use crate::data::Extra;
use crate::design::Design;
use crate::error::{Error, Result};

/// What `sharecast bench` runs (the command line's flags, `cli::benchcmd`).
#[derive(Clone, Debug)]
pub struct Options {
    /// Number of choice situations to simulate.
    pub situations: usize,
    /// Which model to simulate and fit.
    pub model: Model,
    /// Keep the data and spec in this folder (else a temporary one, removed after).
    pub keep: Option<PathBuf>,
    /// Only write the data and spec; time nothing.
    pub write_only: bool,
    /// Timed repetitions of the passes (the median is reported).
    pub repeats: usize,
    /// Skip the run of `sharecast fit` as a separate process.
    pub no_process: bool,
    /// Print the figures as JSON.
    pub json: bool,
    /// For profilers: only load and run this many passes at the true parameters.
    pub profile: Option<usize>,
    /// With `profile`: passes with the Hessian.
    pub hessian: bool,
}

/// The largest synthetic data set the benchmark writes.
pub const MAX_SITUATIONS: usize = 50_000_000;
/// The most timed repetitions and profiling passes.
pub const MAX_REPEATS: usize = 10_000;
pub const MAX_PROFILE_PASSES: usize = 1_000_000;

pub fn run(args: Options) -> Result<ExitCode> {
    if args.situations == 0 {
        return Err(Error::Usage("--situations must be at least 1".into()));
    }
    // About 1 kB per situation: the CSV, the loaded columns and the design.
    crate::error::check_count("--situations", args.situations, MAX_SITUATIONS, 1000)?;
    crate::error::check_count("--repeats", args.repeats, MAX_REPEATS, 0)?;
    if let Some(p) = args.profile {
        crate::error::check_count("--profile", p, MAX_PROFILE_PASSES, 0)?;
    }
    let temp = args.keep.is_none();
    let dir = match &args.keep {
        Some(d) => d.clone(),
        None => std::env::temp_dir().join(format!("sharecast-bench-{}", std::process::id())),
    };
    let t = Instant::now();
    let spec_path = write_set(&dir, args.model, args.situations)?;
    let generate_s = t.elapsed().as_secs_f64();
    if args.write_only {
        crate::outln!(
            "wrote {} and {} ({} situations, {} model, {:.1} s)",
            dir.join("bench.csv").display(),
            spec_path.display(),
            args.situations,
            args.model.label(),
            generate_s
        );
        return Ok(ExitCode::SUCCESS);
    }
    let result = match args.profile {
        Some(passes) => profile(&args, &spec_path, passes),
        None => measure::measure(&args, &spec_path, generate_s),
    };
    if temp {
        let _ = std::fs::remove_dir_all(&dir);
    }
    result
}

/// Runs `passes` passes at the true parameters, for a profiler to watch.
fn profile(args: &Options, spec_path: &Path, passes: usize) -> Result<ExitCode> {
    let (spec, ds) = crate::workspace::open(spec_path, &Extra::default())?;
    let d = Design::build(&spec, std::sync::Arc::new(ds.obs));
    let family = crate::model::for_spec(&spec)?;
    let beta: Vec<f64> = truth(args.model).iter().map(|t| t.1).collect();
    let t = Instant::now();
    let mut ll = 0.0;
    for _ in 0..passes {
        ll += family.evaluate(&d, &beta, true, args.hessian).ll;
    }
    let s = t.elapsed().as_secs_f64() / passes.max(1) as f64;
    crate::outln!(
        "{passes} passes{}: {} each, {:.1} ns per situation (log-likelihood {:.6})",
        if args.hessian {
            " with the Hessian"
        } else {
            ""
        },
        ms(s),
        s * 1e9 / d.situations() as f64,
        ll / passes.max(1) as f64
    );
    Ok(ExitCode::SUCCESS)
}
