//! `sharecast fit`: fit, analyse, then print the report or the results document.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;

use crate::analysis::{self, Analysis};
use crate::data::Extra;
use crate::error::Result;
use crate::report;

#[derive(Args, Debug, Clone)]
pub struct AnalysisArgs {
    /// Skip the analysis sections (elasticities, diversion, ratios, validation).
    #[arg(long)]
    pub no_analysis: bool,
    /// Observed vs predicted shares by this (situation-level) column.
    #[arg(long, value_name = "COLUMN")]
    pub by: Option<String>,
    /// Krinsky-Robb draws for value-ratio intervals.
    #[arg(long, default_value_t = 10_000)]
    pub draws: usize,
    /// Seed of the draws.
    #[arg(long, default_value_t = 7)]
    pub seed: u64,
    /// Percentage change for arc elasticities.
    #[arg(long, value_name = "PERCENT", default_value_t = 10.0)]
    pub arc: f64,
    /// Attribute for the price diversion ratios (default: the first shared attribute).
    #[arg(long, value_name = "ATTRIBUTE")]
    pub diversion_attribute: Option<String>,
    /// Hausman-McFadden IIA test dropping this alternative.
    #[arg(long, value_name = "ALTERNATIVE")]
    pub iia_drop: Option<String>,
    /// A linear restriction for a Wald test, e.g. "cost_bus = cost_rail" (repeatable).
    #[arg(long = "restrict", value_name = "RESTRICTION")]
    pub restrictions: Vec<String>,
}

impl AnalysisArgs {
    pub fn options(&self) -> analysis::Options {
        analysis::Options {
            arc_change: self.arc / 100.0,
            draws: self.draws,
            seed: self.seed,
            diversion_attribute: self.diversion_attribute.clone(),
            by: self.by.clone(),
            iia_drop: self.iia_drop.clone(),
            restrictions: self.restrictions.clone(),
        }
    }
}

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
    #[command(flatten)]
    pub analysis: AnalysisArgs,
}

/// Adds the analysis sections to a results document.
pub fn add_analysis(doc: &mut serde_json::Map<String, serde_json::Value>, a: &Analysis) {
    if let Ok(serde_json::Value::Object(m)) = serde_json::to_value(a) {
        for (k, v) in m {
            let key = if k == "warnings" {
                "analysis_warnings".to_string()
            } else {
                k
            };
            doc.insert(key, v);
        }
    }
}

pub fn run(args: FitArgs) -> Result<ExitCode> {
    let extra = Extra {
        numeric: Vec::new(),
        text: args.analysis.by.iter().cloned().collect(),
    };
    let (spec, ds) = super::open(&args.spec, &extra)?;
    if !args.analysis.no_analysis {
        // Refused before the fit rather than after it.
        args.analysis.options().check(spec.parameters.len())?;
    }
    let fit = super::fit_quietly(&spec, &ds)?;
    let analysis = if args.analysis.no_analysis {
        None
    } else {
        Some(analysis::analyse(
            &spec,
            &fit,
            &ds,
            &args.analysis.options(),
        )?)
    };
    let label = args.spec.display().to_string();
    let mut doc = report::json::results(&spec, &fit, &label);
    if let Some(a) = &analysis {
        add_analysis(&mut doc, a);
    }
    let body = serde_json::to_string_pretty(&serde_json::Value::Object(doc)).unwrap_or_default();
    if let Some(path) = &args.save {
        crate::data::write::text(path, args.force, &body)?;
    }
    if args.json {
        crate::outln!("{body}");
    } else {
        let colour = report::colour();
        crate::out!("{}", report::text::fit_report(&spec, &fit, colour));
        if let Some(a) = &analysis {
            crate::outln!();
            crate::out!("{}", report::analysis::sections(&spec, a));
        }
        crate::outln!();
        crate::out!("{}", report::text::closing(&spec, &fit));
    }
    if !fit.stats.converged && !args.allow_unconverged {
        crate::errln!("error: the fit did not converge (pass --allow-unconverged to accept it)");
        return Ok(ExitCode::from(2));
    }
    Ok(ExitCode::SUCCESS)
}
