//! `sharecast report`: one self-contained HTML page of a fit, its analysis,
//! scenario forecasts and demand curves; `--charts DIR` writes its charts as SVG files.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;

use crate::data::write;
use crate::error::{Error, Result};

#[derive(Args, Debug)]
pub struct ReportArgs {
    /// The model's spec, or a survey design file (its design report).
    pub spec: PathBuf,
    /// A scenario file to forecast (repeatable; each gets its own part of the page).
    #[arg(long = "scenario", value_name = "FILE")]
    pub scenarios: Vec<PathBuf>,
    /// Reuse a fit saved with `fit --save` when spec and data are unchanged.
    #[arg(long, value_name = "FIT.json")]
    pub load: Option<PathBuf>,
    /// The HTML file to write.
    #[arg(long, value_name = "REPORT.html")]
    pub out: PathBuf,
    /// Also write each chart as an SVG file into this folder (made if missing).
    #[arg(long, value_name = "DIR")]
    pub charts: Option<PathBuf>,
    /// Replace the report and chart files if they exist.
    #[arg(long)]
    pub force: bool,
    /// Tables over the N alternatives with the largest predicted shares (as `fit --top`).
    #[arg(long, value_name = "N")]
    pub top: Option<usize>,
    /// Layout "tables": shares and diversion by a column of the table of alternatives.
    #[arg(long, value_name = "COLUMN")]
    pub by_alternative: Option<String>,
}

pub fn run(args: ReportArgs) -> Result<ExitCode> {
    // Refused before the fit rather than after it.
    write::check_overwrite(&args.out, args.force)?;
    if crate::experiment::is_design_file(&args.spec) {
        return design(&args);
    }
    if let Some(dir) = &args.charts {
        if dir.exists() && !dir.is_dir() {
            return Err(Error::io(dir, "--charts: exists and is not a folder"));
        }
    }
    let results = super::with_line(|line| {
        let options = crate::analysis::Options {
            top: args.top,
            by_alternative: args.by_alternative.clone(),
            ..Default::default()
        };
        crate::workspace::report_results(
            &args.spec,
            (&args.scenarios, &options),
            args.load.as_deref(),
            &|s| line.step(s),
            &|t| line.tick(t),
        )
    })?;
    for n in &results.notes {
        crate::errln!("{n}");
    }
    let label = args.spec.display().to_string();
    let page = crate::report::html::page(&results.material(&label));
    let chart_paths: Vec<(PathBuf, &str)> = match &args.charts {
        Some(dir) => page
            .charts
            .iter()
            .map(|c| (dir.join(format!("{}.svg", c.name)), c.svg.as_str()))
            .collect(),
        None => Vec::new(),
    };
    for (p, _) in &chart_paths {
        write::check_overwrite(p, args.force)?;
    }
    write::text(&args.out, args.force, &page.html)?;
    crate::outln!(
        "wrote {} ({} scenario{}, {} charts)",
        args.out.display(),
        results.forecasts.len(),
        if results.forecasts.len() == 1 {
            ""
        } else {
            "s"
        },
        page.charts.len()
    );
    if let Some(dir) = &args.charts {
        std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
        for (p, svg) in &chart_paths {
            write::text(
                p,
                args.force,
                &format!("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n{svg}\n"),
            )?;
        }
        crate::outln!("wrote {} charts into {}", chart_paths.len(), dir.display());
    }
    if !results.fit.stats.converged {
        crate::errln!("warning: the fit did not converge; the report says so in its first section");
    }
    Ok(ExitCode::SUCCESS)
}

/// The report of a survey design file: the design searched again (the same
/// from its seed), laid out as one page.
fn design(args: &ReportArgs) -> Result<ExitCode> {
    let model_only = [
        (!args.scenarios.is_empty(), "--scenario"),
        (args.load.is_some(), "--load"),
        (args.charts.is_some(), "--charts"),
        (args.top.is_some(), "--top"),
        (args.by_alternative.is_some(), "--by-alternative"),
    ];
    if let Some((_, flag)) = model_only.iter().find(|f| f.0) {
        return Err(Error::Usage(format!(
            "{flag} is for a model's report; {} is a design file",
            args.spec.display()
        )));
    }
    let plan = crate::experiment::read(&args.spec)?;
    let outcome = super::with_line(|line| crate::experiment::make(&plan, &|t| line.tick(t)))?;
    write::text(
        &args.out,
        args.force,
        &crate::report::experiment::html(&outcome),
    )?;
    crate::outln!("wrote {} (the design report)", args.out.display());
    Ok(ExitCode::SUCCESS)
}
