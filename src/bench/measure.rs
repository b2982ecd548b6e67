//! The logit benchmark's measurements: load and fit timed, the passes timed
//! against merely streaming the bytes they read, where the fit's time goes, a
//! what-if, the separate `sharecast fit` processes, and the figures laid out as
//! JSON or a table.

use std::path::Path;
use std::process::ExitCode;
use std::time::Instant;

use super::figures::{self, Figures, Load, Parts, Passes};
use super::{median, peak_memory, time_process, Options};
use crate::data::{self, Extra, Observations};
use crate::design::Design;
use crate::error::Result;
use crate::estimate::Fit;
use crate::spec::Spec;

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

pub(super) fn measure(args: &Options, spec_path: &Path, generate_s: f64) -> Result<ExitCode> {
    let (spec, fit, load) = load_and_fit(spec_path, generate_s)?;
    let reps = args.repeats.max(1);
    let passes = time_passes(&fit, reps);
    let mut parts = time_parts(&spec, &fit)?;
    parts.whatif_s = time_whatif(&spec, &fit, reps)?;
    let (process, process_analysis) = if args.no_process {
        (None, None)
    } else {
        (
            Some(time_process(spec_path, &["--no-analysis"])?),
            Some(time_process(spec_path, &[])?),
        )
    };
    let figures = Figures {
        load,
        passes,
        parts,
        process,
        process_analysis,
        threads: std::thread::available_parallelism()
            .map(|t| t.get())
            .unwrap_or(1),
    };
    if args.json {
        let doc = figures::document(args, &fit, &figures);
        crate::outln!("{}", serde_json::to_string_pretty(&doc).unwrap_or_default());
    } else {
        figures::table(args, &fit, &figures)?;
    }
    Ok(ExitCode::SUCCESS)
}

/// Loads the data and fits them the way `sharecast fit` does, timing each,
/// then times the CSV read alone (after the peak memory is taken).
fn load_and_fit(spec_path: &Path, generate_s: f64) -> Result<(Spec, Fit, Load)> {
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
    let load = Load {
        generate_s,
        csv_bytes,
        peak_before,
        peak_load,
        peak_fit,
        load_s,
        read_s,
        fit_s,
    };
    Ok((spec, fit, load))
}

/// Times the passes at the estimates: with the gradient, with the Hessian, the
/// simpler family's, and streaming the bytes a pass reads.
fn time_passes(fit: &Fit, reps: usize) -> Passes {
    let d = &fit.design;
    let family = &*fit.family;
    let beta = &fit.beta;
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
    Passes {
        reps,
        pass_s: median(grad_t),
        hess_s: median(hess_t),
        stream_s: median(stream_t),
        bytes: pass_bytes(d),
        ll_check,
        simpler,
        simpler_s,
    }
}

/// Where the fit's time goes: the main optimisation, the constants-only
/// reference model (for rho-squared), and the per-situation scores.
fn time_parts(spec: &Spec, fit: &Fit) -> Result<Parts> {
    let d = &fit.design;
    let family = &*fit.family;
    let quiet = |_s: crate::estimate::Step| {};
    let free: Vec<usize> = fit.free.clone();
    let start: Vec<f64> = spec.parameters.iter().map(|p| p.start).collect();
    let t = Instant::now();
    let main_out = crate::estimate::optimise::maximise(d, family, &start, &free, &quiet);
    let main_s = t.elapsed().as_secs_f64();
    let cspec = spec.constants_only();
    let cd = Design::build(&cspec, d.obs.clone());
    let cfree: Vec<usize> = (0..cd.params).collect();
    let t = Instant::now();
    let const_out = crate::estimate::optimise::maximise_level(
        &cd,
        &*crate::model::for_spec(&cspec)?,
        &vec![0.0; cd.params],
        &cfree,
        &quiet,
    );
    let const_s = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let mut score_sum = 0.0;
    family.for_each_score(d, &fit.beta, &mut |_, s| score_sum += s[0]);
    std::hint::black_box(score_sum);
    let scores_s = t.elapsed().as_secs_f64();
    Ok(Parts {
        main_s,
        main_passes: main_out.passes,
        const_s,
        const_passes: const_out.passes,
        scores_s,
        whatif_s: 0.0,
    })
}

/// A what-if after one change (the first attribute of the second alternative
/// x 1.1, or the first characteristic x 1.1 in a model without attributes):
/// prepare the change and re-simulate every situation, point estimate only.
fn time_whatif(spec: &Spec, fit: &Fit, reps: usize) -> Result<f64> {
    let d = &fit.design;
    let whatif = crate::scenario::Scenario {
        name: "bench".into(),
        changes: vec![crate::scenario::Change {
            target: whatif_target(spec),
            op: crate::scenario::Op::Multiply(1.1),
            filter: None,
        }],
        ..Default::default()
    };
    let empty = crate::data::Table::new(&spec.data.file, d.situations());
    let mut whatif_t = Vec::new();
    for _ in 0..reps {
        let t = Instant::now();
        let prep = crate::scenario::prepare::prepare(spec, fit, &empty, &whatif)?;
        let pass = crate::scenario::simulate::run(
            &*fit.family,
            d,
            &fit.beta,
            &prep,
            None,
            crate::scenario::simulate::What::point(None),
            Some(fit.baseline()),
        );
        std::hint::black_box(pass.scenario[0]);
        whatif_t.push(t.elapsed().as_secs_f64());
    }
    Ok(median(whatif_t))
}
