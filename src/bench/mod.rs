//! `sharecast bench`: simulates a large wide data set from known logit
//! parameters (invented data, fixed seed), fits it the way `sharecast fit`
//! does, and times each stage: loading the CSV, one likelihood+gradient pass
//! (against the time to merely stream the bytes that pass reads), the number
//! of passes, the whole fit, `sharecast fit` as a separate process, and the
//! peak memory. `docs/performance.md` reports the figures.

pub mod mixed;
pub mod probit;
mod process;
pub mod stream;
mod synthetic;

pub(crate) use process::{in_folder, mb, median, ms, own_path, time_process};
pub use process::{peak_memory, status_bytes};
pub(crate) use synthetic::{draw, pick, AGE, ALTS, ASC, INCOME};
pub use synthetic::{spec_text, truth, write_data, write_set, Model, SEED};

use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Instant;

use serde_json::json;

use crate::data::{self, Extra, Observations};
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

/// The arrays a logit pass reads, and their size in bytes.
fn pass_bytes(d: &Design) -> usize {
    let o = &*d.obs;
    let (attrs, chars) = used_arrays(d);
    attrs.len() * o.situations * o.alternatives * 8
        + chars.len() * o.situations * 8
        + o.available.len()
        + o.chosen.len() * 4
        + o.weight.len() * 8
}

/// Attribute and characteristic arrays some feature reads.
fn used_arrays(d: &Design) -> (Vec<usize>, Vec<usize>) {
    let mut attrs = Vec::new();
    let mut chars = Vec::new();
    for f in d.features.iter().flatten() {
        match f.value {
            crate::design::Value::Attribute(a) if !attrs.contains(&a) => attrs.push(a),
            crate::design::Value::Characteristic(c) if !chars.contains(&c) => chars.push(c),
            _ => {}
        }
    }
    (attrs, chars)
}

fn sum(x: &[f64]) -> f64 {
    // Four accumulators so that the sum runs at memory speed, not at the adder's latency.
    let mut s = [0.0f64; 4];
    let mut it = x.chunks_exact(4);
    for c in &mut it {
        s[0] += c[0];
        s[1] += c[1];
        s[2] += c[2];
        s[3] += c[3];
    }
    s[0] + s[1] + s[2] + s[3] + it.remainder().iter().sum::<f64>()
}

/// Reads every byte a logit pass reads once (summing them), split over the
/// cores the way the pass is (`likelihood::on_pieces`); returns the sum so that
/// nothing is optimised away.
fn stream_once(d: &Design) -> f64 {
    let o: &Observations = &d.obs;
    let j = o.alternatives;
    let (attrs, chars) = used_arrays(d);
    let run = |r: std::ops::Range<usize>| {
        let mut t = 0.0;
        for &a in &attrs {
            t += sum(&o.attributes[a][r.start * j..r.end * j]);
        }
        for &c in &chars {
            t += sum(&o.characteristics[c][r.clone()]);
        }
        t += sum(&o.weight[r.clone()]);
        t += o.available[r.start * j..r.end * j]
            .iter()
            .map(|&b| b as u64)
            .sum::<u64>() as f64;
        t += o.chosen[r].iter().map(|&c| c as u64).sum::<u64>() as f64;
        t
    };
    crate::design::on_pieces(o.situations, run)
        .into_iter()
        .sum()
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
        None => measure(&args, &spec_path, generate_s),
    };
    if temp {
        let _ = std::fs::remove_dir_all(&dir);
    }
    result
}

/// What the timed what-if changes: the first attribute of the second
/// alternative, or the first characteristic when the model has no attribute.
fn whatif_target(spec: &crate::spec::Spec) -> crate::scenario::Target {
    if spec.attributes.is_empty() {
        crate::scenario::Target::Characteristic { characteristic: 0 }
    } else {
        crate::scenario::Target::Attribute {
            attribute: 0,
            alternative: 1.min(spec.alternatives.len() - 1),
        }
    }
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

fn measure(args: &Options, spec_path: &Path, generate_s: f64) -> Result<ExitCode> {
    let csv_bytes = std::fs::metadata(spec_path.with_file_name("bench.csv"))
        .map(|m| m.len())
        .unwrap_or(0);
    let peak_before = peak_memory();
    let spec = crate::model::read_spec(spec_path)?;
    let t = Instant::now();
    let ds = data::load(&spec, &Extra::default())?;
    let load_s = t.elapsed().as_secs_f64();
    let peak_load = peak_memory();
    let t = Instant::now();
    let quiet = |_s: crate::estimate::Step| {};
    let fit = crate::estimate::fit(&spec, std::sync::Arc::new(ds.obs), &quiet)?;
    let fit_s = t.elapsed().as_secs_f64();
    let peak_fit = peak_memory();
    // The CSV read alone (polars and the copy into columns), after the peak is taken.
    let (numeric, text) = data::needed_columns(&spec, &Extra::default());
    let t = Instant::now();
    let table = data::load::read(&spec.data.file, &numeric, &text)?;
    let read_s = t.elapsed().as_secs_f64();
    drop(table);
    let in_process_s = load_s + fit_s;

    let d = &fit.design;
    let family = &*fit.family;
    let beta = &fit.beta;
    let reps = args.repeats.max(1);
    let mut grad_t = Vec::new();
    let mut hess_t = Vec::new();
    let mut ll_check = 0.0;
    for _ in 0..reps {
        let t = Instant::now();
        let e = family.evaluate(d, beta, true, false);
        grad_t.push(t.elapsed().as_secs_f64());
        ll_check = std::hint::black_box(e.ll);
    }
    for _ in 0..reps.div_ceil(2) {
        let t = Instant::now();
        let e = family.evaluate(d, beta, true, true);
        hess_t.push(t.elapsed().as_secs_f64());
        std::hint::black_box(e.ll);
    }
    // The same pass of the simpler family the model reduces to (the logit for
    // a nested model), on the same data and parameters.
    let simpler = family.simpler();
    let simpler_s = simpler.as_ref().map(|f| {
        let mut t = Vec::new();
        for _ in 0..reps {
            let start = Instant::now();
            std::hint::black_box(f.evaluate(d, beta, true, false).ll);
            t.push(start.elapsed().as_secs_f64());
        }
        median(t)
    });
    let mut stream_t = Vec::new();
    for _ in 0..reps {
        let t = Instant::now();
        std::hint::black_box(stream_once(d));
        stream_t.push(t.elapsed().as_secs_f64());
    }
    // Where the fit's time goes: the main optimisation, the constants-only
    // reference model (for rho-squared), and the per-situation scores.
    let free: Vec<usize> = fit.free.clone();
    let start: Vec<f64> = spec.parameters.iter().map(|p| p.start).collect();
    let t = Instant::now();
    let main_out = crate::estimate::optimise::maximise(d, family, &start, &free, &quiet);
    let main_s = t.elapsed().as_secs_f64();
    let cspec = spec.constants_only();
    let cd = Design::build(&cspec, d.obs.clone());
    let cfree: Vec<usize> = (0..cd.params).collect();
    let t = Instant::now();
    let const_out = crate::estimate::optimise::maximise(
        &cd,
        &*crate::model::for_spec(&cspec)?,
        &vec![0.0; cd.params],
        &cfree,
        &quiet,
    );
    let const_s = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let mut score_sum = 0.0;
    family.for_each_score(d, beta, &mut |_, s| score_sum += s[0]);
    std::hint::black_box(score_sum);
    let scores_s = t.elapsed().as_secs_f64();

    // A what-if after one change (the first attribute of the second alternative
    // x 1.1, or the first characteristic x 1.1 in a model without attributes):
    // prepare the change and re-simulate every situation, point estimate only.
    let whatif = crate::scenario::Scenario {
        name: "bench".into(),
        changes: vec![crate::scenario::Change {
            target: whatif_target(&spec),
            op: crate::scenario::Op::Multiply(1.1),
            filter: None,
        }],
        ..Default::default()
    };
    let empty = crate::data::Table::new(&spec.data.file, d.situations());
    let mut whatif_t = Vec::new();
    for _ in 0..reps {
        let t = Instant::now();
        let prep = crate::scenario::prepare::prepare(&spec, &fit, &empty, &whatif)?;
        let pass = crate::scenario::simulate::run(
            family,
            d,
            beta,
            &prep,
            None,
            None,
            Some(fit.baseline()),
        );
        std::hint::black_box(pass.scenario[0]);
        whatif_t.push(t.elapsed().as_secs_f64());
    }
    let whatif_s = median(whatif_t);

    let pass_s = median(grad_t);
    let hess_s = median(hess_t);
    let stream_s = median(stream_t);
    let bytes = pass_bytes(d);
    let (process, process_analysis) = if args.no_process {
        (None, None)
    } else {
        (
            Some(time_process(spec_path, &["--no-analysis"])?),
            Some(time_process(spec_path, &[])?),
        )
    };

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
    let max_z = fit
        .parameters
        .iter()
        .filter_map(|p| {
            let t = truth.iter().find(|t| t.0 == p.name)?.1;
            Some(((p.estimate - t) / p.std_error).abs())
        })
        .fold(0.0, f64::max);
    let threads = std::thread::available_parallelism()
        .map(|t| t.get())
        .unwrap_or(1);
    let s = &fit.stats;
    let doc = json!({
        "situations": d.situations(),
        "alternatives": d.alternatives(),
        "parameters": d.params,
        "model": args.model.label(),
        "threads": threads,
        "csv_bytes": csv_bytes,
        "generate_seconds": generate_s,
        "load_seconds": load_s,
        "csv_read_seconds": read_s,
        "fit_seconds": fit_s,
        "load_and_fit_seconds": in_process_s,
        "pass_seconds": pass_s,
        "hessian_pass_seconds": hess_s,
        "stream_seconds": stream_s,
        "pass_bytes": bytes,
        "pass_over_stream": pass_s / stream_s,
        "whatif_seconds": whatif_s,
        "passes": s.passes,
        "main_optimisation_seconds": main_s,
        "main_optimisation_passes": main_out.passes,
        "constants_model_seconds": const_s,
        "constants_model_passes": const_out.passes,
        "scores_seconds": scores_s,
        "bfgs_iterations": s.iterations,
        "newton_steps": s.newton_steps,
        "converged": s.converged,
        "log_likelihood": s.log_likelihood,
        "log_likelihood_recheck": ll_check,
        "peak_memory_bytes_before_load": peak_before,
        "peak_memory_bytes_after_load": peak_load,
        "peak_memory_bytes": peak_fit,
        "process_seconds": process.map(|p| p.0),
        "process_peak_memory_bytes": process.and_then(|p| p.1),
        "process_succeeded": process.map(|p| p.2),
        "process_with_analysis_seconds": process_analysis.map(|p| p.0),
        "process_with_analysis_peak_memory_bytes": process_analysis.and_then(|p| p.1),
        "process_with_analysis_succeeded": process_analysis.map(|p| p.2),
        "max_abs_z_vs_truth": max_z,
        "estimates": fit_rows,
    });
    let mut doc = doc;
    doc["simpler_family"] = json!(simpler.as_ref().map(|f| f.name()));
    doc["simpler_pass_seconds"] = json!(simpler_s);
    doc["pass_over_simpler"] = json!(simpler_s.map(|x| pass_s / x));
    if args.json {
        crate::outln!("{}", serde_json::to_string_pretty(&doc).unwrap_or_default());
        return Ok(ExitCode::SUCCESS);
    }
    let n = d.situations();
    crate::outln!(
        "sharecast bench: {} situations x {} alternatives, {} parameters ({} model), {} threads",
        n,
        d.alternatives(),
        d.params,
        args.model.label(),
        threads
    );
    crate::outln!();
    let rows: Vec<(&str, String)> = vec![
        (
            "simulate and write the CSV",
            format!("{} ({:.0} MB)", ms(generate_s), csv_bytes as f64 / 1e6),
        ),
        (
            "load the CSV (data::load)",
            format!("{}  (the CSV read alone {})", ms(load_s), ms(read_s)),
        ),
        (
            "fit (estimate::fit, all of it)",
            format!(
                "{}  ({} passes: {} quasi-Newton iterations, {} Newton steps)",
                ms(fit_s),
                s.passes,
                s.iterations,
                s.newton_steps
            ),
        ),
        (
            "  of which: the optimisation",
            format!("{}  ({} passes)", ms(main_s), main_out.passes),
        ),
        (
            "  the constants-only model",
            format!("{}  ({} passes)", ms(const_s), const_out.passes),
        ),
        ("  per-situation scores", ms(scores_s)),
        ("load + fit in this process", ms(in_process_s)),
        (
            "likelihood + gradient pass",
            format!("{}  (median of {reps})", ms(pass_s)),
        ),
        (
            if family.abilities().analytic_hessian {
                "likelihood + gradient + Hessian"
            } else {
                "likelihood + gradient (no analytic Hessian)"
            },
            ms(hess_s),
        ),
        (
            "stream the pass's bytes once",
            format!(
                "{}  ({:.0} MB, {:.1} GB/s)",
                ms(stream_s),
                bytes as f64 / 1e6,
                bytes as f64 / stream_s / 1e9
            ),
        ),
        ("pass / stream", format!("{:.2}x", pass_s / stream_s)),
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
                mb(peak_fit),
                mb(peak_before),
                mb(peak_load)
            ),
        ),
    ];
    let mut rows = rows;
    if let (Some(f), Some(x)) = (&simpler, simpler_s) {
        rows.insert(
            rows.len() - 2,
            (
                "pass of the simpler family",
                format!(
                    "{}  ({}, same data; this family's pass is {:.2}x it)",
                    ms(x),
                    f.name(),
                    pass_s / x
                ),
            ),
        );
    }
    for (label, p) in [
        ("`sharecast fit --no-analysis`", process),
        ("`sharecast fit` (with analysis)", process_analysis),
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
    rows.push((
        "log-likelihood at the estimates",
        format!(
            "{:.4}  (converged: {})",
            s.log_likelihood,
            if s.converged { "yes" } else { "no" }
        ),
    ));
    rows.push(("largest |estimate - truth| / s.e.", format!("{max_z:.2}")));
    let width = rows.iter().map(|r| r.0.len()).max().unwrap_or(0);
    for (k, v) in rows {
        crate::outln!("  {k:<width$}  {v}");
    }
    Ok(ExitCode::SUCCESS)
}
