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
    /// Tables of elasticities, marginal effects, flags and diversion over the N
    /// alternatives with the largest predicted shares (default: all up to 12,
    /// else 10); the shares table shows as many.
    #[arg(long, value_name = "N")]
    pub top: Option<usize>,
    /// Layout "tables": shares by a column of the table of alternatives
    /// (e.g. district), and diversion between its groups.
    #[arg(long, value_name = "COLUMN")]
    pub by_alternative: Option<String>,
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
            top: self.top,
            by_alternative: self.by_alternative.clone(),
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
    /// Replace the --save, --conditional or --classes-out file if it exists.
    #[arg(long)]
    pub force: bool,
    /// Exit 0 even when the fit did not converge.
    #[arg(long)]
    pub allow_unconverged: bool,
    /// Write each decision maker's random coefficients conditional on their
    /// choices to this CSV or Parquet file (families with random coefficients).
    #[arg(long, value_name = "FILE")]
    pub conditional: Option<PathBuf>,
    /// Write each decision maker's class probabilities (the membership
    /// model's and, given their choices, the posterior ones) to this CSV or
    /// Parquet file (latent class models).
    #[arg(long, value_name = "FILE")]
    pub classes_out: Option<PathBuf>,
    /// Instead of the report, fit the spec with each number of latent
    /// classes in this range (such as 1..4) and set the fits side by side.
    #[arg(long, value_name = "RANGE")]
    pub classes: Option<String>,
    /// Fit again on the draws of the next seed and show how far each estimate
    /// moves, in standard errors (families that simulate their probabilities).
    #[arg(long)]
    pub draws_check: bool,
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
    let (spec, ds) = match args.analysis.no_analysis && args.classes.is_none() {
        // Sampled sets drawn straight from the tables when the full sets are large.
        true => crate::workspace::open_for_fit(&args.spec, &extra)?,
        false => super::open(&args.spec, &extra)?,
    };
    if !args.analysis.no_analysis {
        // Refused before the fit rather than after it.
        args.analysis.options().check(spec.parameters.len())?;
    }
    if let Some(range) = &args.classes {
        return super::fitclasses::counts(&spec, &ds, range, args.json);
    }
    for path in args.conditional.iter().chain(&args.classes_out) {
        // Refused before the fit rather than after it.
        crate::data::write::check_overwrite(path, args.force)?;
    }
    let alone = args.analysis.no_analysis
        && !args.draws_check
        && args.conditional.is_none()
        && args.classes_out.is_none();
    let fit = if alone {
        // Nothing reads the observations after the fit but the fit itself:
        // handed over rather than copied (large sampled sets are gigabytes).
        let mut ds = ds;
        let none = ds.obs.subset(&vec![false; ds.obs.situations]);
        let obs = std::mem::replace(&mut ds.obs, none);
        drop(ds);
        let fit = super::fit_quietly(&spec, std::sync::Arc::new(obs))?;
        return output(&args, &spec, &fit, (None, None));
    } else {
        super::fit_quietly(&spec, &ds)?
    };
    let draws_check = if args.draws_check {
        let obs = ds.obs.clone().into();
        Some(super::with_line(|line| {
            crate::estimate::simcheck::draws_check(&spec, obs, &fit, &|s| line.step(s))
        })?)
    } else {
        None
    };
    if let Some(path) = &args.conditional {
        write_conditional(&spec, &fit, &ds, path, args.force)?;
    }
    if let Some(path) = &args.classes_out {
        super::fitclasses::write_classes(&spec, &fit, &ds, path, args.force)?;
    }
    let analysis = if args.analysis.no_analysis {
        None
    } else {
        let opts = args.analysis.options();
        Some(super::with_line(|line| {
            analysis::analyse_with(&spec, &fit, &ds, &opts, &|t| line.tick(t))
        })?)
    };
    output(
        &args,
        &spec,
        &fit,
        (analysis.as_ref(), draws_check.as_ref()),
    )
}

/// Prints or saves the fit (and its analysis and simulation check).
fn output(
    args: &FitArgs,
    spec: &crate::spec::Spec,
    fit: &crate::estimate::Fit,
    (analysis, draws_check): (
        Option<&Analysis>,
        Option<&crate::estimate::simcheck::DrawsCheck>,
    ),
) -> Result<ExitCode> {
    // The results document is made only when it is printed or saved.
    let body = (args.json || args.save.is_some()).then(|| {
        let label = args.spec.display().to_string();
        let mut doc = report::json::results(spec, fit, &label);
        if let Some(a) = analysis {
            add_analysis(&mut doc, a);
        }
        if let Some(c) = draws_check {
            if let Ok(v) = serde_json::to_value(c) {
                doc.insert("draws_check".into(), v);
            }
        }
        serde_json::to_string_pretty(&serde_json::Value::Object(doc)).unwrap_or_default()
    });
    if let (Some(path), Some(body)) = (&args.save, &body) {
        crate::data::write::text(path, args.force, body)?;
    }
    if let (true, Some(body)) = (args.json, &body) {
        crate::outln!("{body}");
    } else {
        let text = report::text::report(spec, fit, analysis, draws_check, report::colour());
        crate::out!("{text}");
    }
    if !fit.stats.converged && !args.allow_unconverged {
        crate::errln!("error: the fit did not converge (pass --allow-unconverged to accept it)");
        return Ok(ExitCode::from(2));
    }
    Ok(ExitCode::SUCCESS)
}

/// Writes each decision maker's conditional mean of every random coefficient:
/// one row per decision maker, named by the group column (or the data row of
/// their situation when each situation is its own decision maker).
fn write_conditional(
    spec: &crate::spec::Spec,
    fit: &crate::estimate::Fit,
    ds: &crate::data::Dataset,
    path: &std::path::Path,
    force: bool,
) -> Result<()> {
    use crate::data::write::Values;
    let terms = fit.family.random_coefficients();
    let cond = match fit.family.conditional(&fit.design, &fit.beta) {
        Some(c) if !terms.is_empty() => c,
        _ => {
            return Err(crate::error::Error::Usage(format!(
                "--conditional: the {} family has no random coefficients (they come with [model].family = \"mixed\")",
                fit.family.name()
            )))
        }
    };
    let rows: Vec<usize> = cond
        .first
        .iter()
        .map(|&i| fit.design.obs.first_row[i])
        .collect();
    let mut columns = Vec::new();
    match &spec.data.group {
        Some(g) => {
            let keys = ds.table.keys(g, "[data].group")?;
            columns.push((
                g.clone(),
                Values::Text(rows.iter().map(|&r| keys[r - 1].clone()).collect()),
            ));
        }
        None => columns.push((
            "row".to_string(),
            Values::Int(rows.iter().map(|&r| r as i64).collect()),
        )),
    }
    let dims = terms.len();
    for (d, t) in terms.iter().enumerate() {
        columns.push((
            fit.names[t.location].clone(),
            Values::Num(cond.means.iter().skip(d).step_by(dims).copied().collect()),
        ));
    }
    crate::data::write::table(path, force, &columns)?;
    crate::errln!(
        "wrote {} decision makers' conditional coefficients to {}",
        rows.len(),
        path.display()
    );
    Ok(())
}
