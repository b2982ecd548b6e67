//! `sharecast compare A.toml B.toml ...`: fits each spec and sets them side by side.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;
use serde_json::json;

use crate::analysis::compare;
use crate::data::Extra;
use crate::error::{Error, Result};
use crate::estimate::Fit;

#[derive(Args, Debug)]
pub struct CompareArgs {
    /// Two or more specs.
    #[arg(required = true, num_args = 2..)]
    pub specs: Vec<PathBuf>,
    /// Print JSON instead of the report.
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: CompareArgs) -> Result<ExitCode> {
    if args.specs.len() < 2 {
        return Err(Error::Usage("compare needs at least two specs".into()));
    }
    let mut fits: Vec<Fit> = Vec::new();
    let mut labels = Vec::new();
    for p in &args.specs {
        let (spec, ds) = super::open(p, &Extra::default())?;
        fits.push(super::fit_quietly(&spec, &ds)?);
        labels.push(format!(
            "{} ({})",
            p.display(),
            spec.title.as_deref().unwrap_or("untitled")
        ));
    }
    let refs: Vec<&Fit> = fits.iter().collect();
    let c = compare::compare(&refs);
    if args.json {
        let models: Vec<_> = fits
            .iter()
            .zip(&args.specs)
            .enumerate()
            .map(|(i, (f, p))| json!({ "id": compare::model_id(i), "spec": p.display().to_string(), "errors": crate::report::errors_label(f), "parameters": f.parameters, "fit": f.stats }))
            .collect();
        let doc = json!({ "models": models, "comparison": c });
        crate::outln!("{}", serde_json::to_string_pretty(&doc).unwrap_or_default());
    } else {
        crate::out!("{}", crate::report::compare::text(&labels, &refs, &c));
    }
    Ok(ExitCode::SUCCESS)
}
