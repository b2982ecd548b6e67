//! The logit benchmark's figures (`Figures`) laid out: the JSON document of
//! `--json`, or the table of labelled rows.

use serde_json::json;

use super::{mb, ms, truth, Options};
use crate::error::Result;
use crate::estimate::Fit;
use crate::model::FamilyRef;

/// Loading and fitting, timed, with the peak memory around them.
pub(super) struct Load {
    pub(super) generate_s: f64,
    pub(super) csv_bytes: u64,
    pub(super) peak_before: Option<u64>,
    pub(super) peak_load: Option<u64>,
    pub(super) peak_fit: Option<u64>,
    pub(super) load_s: f64,
    pub(super) read_s: f64,
    pub(super) fit_s: f64,
}

/// The passes at the estimates (medians of the repetitions).
pub(super) struct Passes {
    pub(super) reps: usize,
    pub(super) pass_s: f64,
    pub(super) hess_s: f64,
    pub(super) stream_s: f64,
    pub(super) bytes: usize,
    pub(super) ll_check: f64,
    pub(super) simpler: Option<FamilyRef>,
    pub(super) simpler_s: Option<f64>,
}

/// Where the fit's time goes, and the what-if.
pub(super) struct Parts {
    pub(super) main_s: f64,
    pub(super) main_passes: usize,
    pub(super) const_s: f64,
    pub(super) const_passes: usize,
    pub(super) scores_s: f64,
    pub(super) whatif_s: f64,
}

/// `sharecast fit` as a separate process: (wall seconds, peak memory, succeeded).
pub(super) type Process = Option<(f64, Option<u64>, bool)>;

/// Everything the benchmark measured.
pub(super) struct Figures {
    pub(super) load: Load,
    pub(super) passes: Passes,
    pub(super) parts: Parts,
    pub(super) process: Process,
    pub(super) process_analysis: Process,
    pub(super) threads: usize,
}

/// The figures as the table of labelled rows.
pub(super) fn table(args: &Options, fit: &Fit, f: &Figures) -> Result<()> {
    let d = &fit.design;
    crate::outln!(
        "sharecast bench: {} situations x {} alternatives, {} parameters ({} model), {} threads",
        d.situations(),
        d.alternatives(),
        d.params,
        args.model.label(),
        f.threads
    );
    crate::outln!();
    let mut rows = fit_rows(fit, &f.load, &f.parts);
    rows.extend(pass_rows(fit, &f.load, &f.passes, f.parts.whatif_s));
    for (label, p) in [
        ("`sharecast fit --no-analysis`", f.process),
        ("`sharecast fit` (with analysis)", f.process_analysis),
    ] {
        if let Some((wall, peak, ok)) = p {
            rows.push((
                label,
                format!(
                    "{} wall, peak {}{}",
                    ms(wall),
                    mb(peak),
                    if ok { "" } else { "  (it FAILED)" }
                ),
            ));
        }
    }
    let s = &fit.stats;
    rows.push((
        "log-likelihood at the estimates",
        format!(
            "{:.4}  (converged: {})",
            s.log_likelihood,
            if s.converged { "yes" } else { "no" }
        ),
    ));
    let max_z = max_z(args, fit);
    rows.push(("largest |estimate - truth| / s.e.", format!("{max_z:.2}")));
    let width = rows.iter().map(|r| r.0.len()).max().unwrap_or(0);
    for (k, v) in rows {
        crate::outln!("  {k:<width$}  {v}");
    }
    Ok(())
}

/// The largest |estimate - truth| / standard error.
fn max_z(args: &Options, fit: &Fit) -> f64 {
    let truth = truth(args.model);
    fit.parameters
        .iter()
        .filter_map(|p| {
            let t = truth.iter().find(|t| t.0 == p.name)?.1;
            Some(((p.estimate - t) / p.std_error).abs())
        })
        .fold(0.0, f64::max)
}

/// The figures as the JSON document `--json` prints.
pub(super) fn document(args: &Options, fit: &Fit, f: &Figures) -> serde_json::Value {
    let (load, p, parts) = (&f.load, &f.passes, &f.parts);
    let (process, process_analysis, threads) = (f.process, f.process_analysis, f.threads);
    let truth = truth(args.model);
    let fit_rows: Vec<serde_json::Value> = fit
        .parameters
        .iter()
        .map(|p| {
            let t = truth
                .iter()
                .find(|t| t.0 == p.name)
                .map(|t| t.1)
                .unwrap_or(f64::NAN);
            json!({"name": p.name, "true": t, "estimate": p.estimate, "std_error": p.std_error})
        })
        .collect();
    let d = &fit.design;
    let s = &fit.stats;
    let mut doc = json!({
        "situations": d.situations(),
        "alternatives": d.alternatives(),
        "parameters": d.params,
        "model": args.model.label(),
        "threads": threads,
        "csv_bytes": load.csv_bytes,
        "generate_seconds": load.generate_s,
        "load_seconds": load.load_s,
        "csv_read_seconds": load.read_s,
        "fit_seconds": load.fit_s,
        "load_and_fit_seconds": load.load_s + load.fit_s,
        "pass_seconds": p.pass_s,
        "hessian_pass_seconds": p.hess_s,
        "stream_seconds": p.stream_s,
        "pass_bytes": p.bytes,
        "pass_over_stream": p.pass_s / p.stream_s,
        "whatif_seconds": parts.whatif_s,
        "passes": s.passes,
        "main_optimisation_seconds": parts.main_s,
        "main_optimisation_passes": parts.main_passes,
        "constants_model_seconds": parts.const_s,
        "constants_model_passes": parts.const_passes,
        "scores_seconds": parts.scores_s,
        "bfgs_iterations": s.iterations,
        "newton_steps": s.newton_steps,
        "converged": s.converged,
        "log_likelihood": s.log_likelihood,
        "log_likelihood_recheck": p.ll_check,
        "peak_memory_bytes_before_load": load.peak_before,
        "peak_memory_bytes_after_load": load.peak_load,
        "peak_memory_bytes": load.peak_fit,
        "process_seconds": process.map(|p| p.0),
        "process_peak_memory_bytes": process.and_then(|p| p.1),
        "process_succeeded": process.map(|p| p.2),
        "process_with_analysis_seconds": process_analysis.map(|p| p.0),
        "process_with_analysis_peak_memory_bytes": process_analysis.and_then(|p| p.1),
        "process_with_analysis_succeeded": process_analysis.map(|p| p.2),
        "max_abs_z_vs_truth": max_z(args, fit),
        "estimates": fit_rows,
    });
    doc["simpler_family"] = json!(p.simpler.as_ref().map(|f| f.name()));
    doc["simpler_pass_seconds"] = json!(p.simpler_s);
    doc["pass_over_simpler"] = json!(p.simpler_s.map(|x| p.pass_s / x));
    doc
}

/// The table's rows on loading and fitting.
fn fit_rows(fit: &Fit, load: &Load, parts: &Parts) -> Vec<(&'static str, String)> {
    let s = &fit.stats;
    vec![
        (
            "simulate and write the CSV",
            format!(
                "{} ({:.0} MB)",
                ms(load.generate_s),
                load.csv_bytes as f64 / 1e6
            ),
        ),
        (
            "load the CSV (data::load)",
            format!(
                "{}  (the CSV read alone {})",
                ms(load.load_s),
                ms(load.read_s)
            ),
        ),
        (
            "fit (estimate::fit, all of it)",
            format!(
                "{}  ({} passes: {} quasi-Newton iterations, {} Newton steps)",
                ms(load.fit_s),
                s.passes,
                s.iterations,
                s.newton_steps
            ),
        ),
        (
            "  of which: the optimisation",
            format!("{}  ({} passes)", ms(parts.main_s), parts.main_passes),
        ),
        (
            "  the constants-only model",
            format!("{}  ({} passes)", ms(parts.const_s), parts.const_passes),
        ),
        ("  per-situation scores", ms(parts.scores_s)),
        ("load + fit in this process", ms(load.load_s + load.fit_s)),
    ]
}

/// The table's rows on the passes, the what-if and the peak memory.
fn pass_rows(fit: &Fit, load: &Load, p: &Passes, whatif_s: f64) -> Vec<(&'static str, String)> {
    let reps = p.reps;
    let mut rows = vec![
        (
            "likelihood + gradient pass",
            format!("{}  (median of {reps})", ms(p.pass_s)),
        ),
        (
            if fit.family.abilities().analytic_hessian {
                "likelihood + gradient + Hessian"
            } else {
                "likelihood + gradient (no analytic Hessian)"
            },
            ms(p.hess_s),
        ),
        (
            "stream the pass's bytes once",
            format!(
                "{}  ({:.0} MB, {:.1} GB/s)",
                ms(p.stream_s),
                p.bytes as f64 / 1e6,
                p.bytes as f64 / p.stream_s / 1e9
            ),
        ),
        ("pass / stream", format!("{:.2}x", p.pass_s / p.stream_s)),
        (
            "what-if after one change (point)",
            format!(
                "{}  (median of {reps}; prepare and re-simulate against the cached base)",
                ms(whatif_s)
            ),
        ),
        (
            "peak memory (VmHWM, this process)",
            format!(
                "{}  (before load {}, after load {})",
                mb(load.peak_fit),
                mb(load.peak_before),
                mb(load.peak_load)
            ),
        ),
    ];
    if let (Some(f), Some(x)) = (&p.simpler, p.simpler_s) {
        rows.insert(
            rows.len() - 2,
            (
                "pass of the simpler family",
                format!(
                    "{}  ({}, same data; this family's pass is {:.2}x it)",
                    ms(x),
                    f.name(),
                    p.pass_s / x
                ),
            ),
        );
    }
    rows
}
