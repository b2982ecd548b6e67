//! `sharecast new`: draft a commented spec from a data file and say what was found.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;

use crate::error::Result;

#[derive(Args, Debug)]
pub struct NewArgs {
    /// The data file (CSV or Parquet).
    pub data: PathBuf,
    /// Where to write the draft (default: the data file's name with .toml, in the current folder).
    #[arg(long, value_name = "SPEC.toml")]
    pub out: Option<PathBuf>,
    /// Replace the file if it exists.
    #[arg(long)]
    pub force: bool,
}

pub fn run(args: NewArgs) -> Result<ExitCode> {
    let out = match &args.out {
        Some(p) => p.clone(),
        None => {
            let stem = args
                .data
                .file_stem()
                .map(|s| s.to_string_lossy().to_string())
                .unwrap_or_else(|| "draft".into());
            PathBuf::from(format!("{stem}.toml"))
        }
    };
    // Refused before the data are read rather than after.
    crate::data::write::check_overwrite(&out, args.force)?;
    let d = crate::draft::draft(&args.data, &out)?;
    crate::data::write::text(&out, args.force, &d.text)?;
    for line in &d.summary {
        crate::outln!("{line}");
    }
    crate::outln!("wrote {} — read its comments, then run:", out.display());
    crate::outln!("  sharecast check {}", out.display());
    Ok(ExitCode::SUCCESS)
}
