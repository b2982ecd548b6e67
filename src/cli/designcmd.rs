//! `sharecast design`: searches for an efficient stated-choice design from a
//! design file, writes its tasks (the wide layout `fit` reads), prints its
//! figures, and with `--simulate N` rehearses the study.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;

use crate::data::write;
use crate::error::{Error, Result};
use crate::experiment;
use crate::experiment::rehearse::{self, MAX_RESPONDENTS};

#[derive(Args, Debug)]
pub struct DesignArgs {
    /// The design file (TOML with a [design] table).
    pub file: PathBuf,
    /// The CSV (or Parquet) file of tasks to write.
    #[arg(long, value_name = "DESIGN.csv")]
    pub out: PathBuf,
    /// Print the results document as JSON instead of the text report.
    #[arg(long)]
    pub json: bool,
    /// Replace the output files if they exist.
    #[arg(long)]
    pub force: bool,
    /// Rehearse: simulate N respondents from the priors (one block each),
    /// write their answers and a spec beside the design, fit it and say how
    /// well the priors are recovered.
    #[arg(long, value_name = "N")]
    pub simulate: Option<usize>,
}

pub fn run(args: DesignArgs) -> Result<ExitCode> {
    write::check_overwrite(&args.out, args.force)?;
    let beside = rehearse::beside(&args.out);
    if args.simulate.is_some() {
        write::check_overwrite(&beside.0, args.force)?;
        write::check_overwrite(&beside.1, args.force)?;
    }
    let plan = experiment::read(&args.file)?;
    if let Some(n) = args.simulate {
        if n < plan.blocks || n > MAX_RESPONDENTS {
            return Err(Error::Usage(format!(
                "--simulate: {n} respondents; give {} to {MAX_RESPONDENTS} so that every block is answered",
                plan.blocks
            )));
        }
    }
    let mut outcome = super::with_line(|line| experiment::make(&plan, &|t| line.tick(t)))?;
    write::table(&args.out, args.force, &outcome.table())?;
    if let Some(n) = args.simulate {
        let recovery = super::with_line(|line| {
            rehearse::run(
                &plan,
                &outcome,
                n,
                (&beside.0, &beside.1),
                args.force,
                &|s| line.step(s),
            )
        })?;
        outcome.rehearsal = Some(recovery);
    }
    if args.json {
        crate::outln!(
            "{}",
            serde_json::to_string_pretty(&outcome).unwrap_or_default()
        );
    } else {
        crate::out!("{}", crate::report::experiment::text(&outcome));
        crate::outln!("wrote {}", args.out.display());
    }
    Ok(ExitCode::SUCCESS)
}
