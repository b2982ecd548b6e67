//! `sharecast fit`: fit, then print the report or the results document.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;

use crate::data::Extra;
use crate::error::Result;
use crate::report;

#[derive(Args, Debug)]
pub struct FitArgs {
    pub spec: PathBuf,
    /// Print the results document as JSON instead of the report.
    #[arg(long)]
    pub json: bool,
    /// Also write the results document to this file (for reuse by other commands).
    #[arg(long, value_name = "FILE.json")]
    pub save: Option<PathBuf>,
    /// Replace the --save file if it exists.
    #[arg(long)]
    pub force: bool,
    /// Exit 0 even when the fit did not converge.
    #[arg(long)]
    pub allow_unconverged: bool,
}

pub fn run(args: FitArgs) -> Result<ExitCode> {
    let (spec, ds) = super::open(&args.spec, &Extra::default())?;
    let fit = super::fit_quietly(&spec, &ds)?;
    let label = args.spec.display().to_string();
    let doc = serde_json::Value::Object(report::json::results(&spec, &fit, &label));
    let body = serde_json::to_string_pretty(&doc).unwrap_or_default();
    if let Some(path) = &args.save {
        crate::data::write::text(path, args.force, &body)?;
    }
    if args.json {
        println!("{body}");
    } else {
        let colour = report::colour();
        print!("{}", report::text::fit_report(&spec, &fit, colour));
        println!();
        print!("{}", report::text::closing(&spec));
    }
    if !fit.stats.converged && !args.allow_unconverged {
        eprintln!("error: the fit did not converge (pass --allow-unconverged to accept it)");
        return Ok(ExitCode::from(2));
    }
    Ok(ExitCode::SUCCESS)
}
