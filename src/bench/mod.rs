//! `sharecast bench`: simulates a large wide data set from known logit
//! parameters (invented data, fixed seed), fits it the way `sharecast fit`
//! does, and times each stage: loading the CSV, one likelihood+gradient pass
//! (against the time to merely stream the bytes that pass reads), the number
//! of passes, the whole fit, `sharecast fit` as a separate process, and the
//! peak memory. `docs/performance.md` reports the figures.

pub mod mixed;
pub mod probit;
pub mod stream;

use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode, Stdio};
use std::time::{Duration, Instant};

use serde_json::json;

use crate::data::{self, Extra, Observations};
use crate::design::Design;
use crate::error::{Error, Result};
use crate::rng::Rng;

/// Alternatives of the simulated choice (the first is the base).
const ALTS: [&str; 5] = ["a1", "a2", "a3", "a4", "a5"];

/// Seed of the simulated data.
pub const SEED: u64 = 20_251_201;

/// The simulated model.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Model {
    /// 4 constants, 3 shared attributes (a column per alternative), 2
    /// characteristics on the 4 non-base alternatives: 15 parameters.
    Full,
    /// 4 constants and the 2 characteristics only: 12 parameters.
    Characteristics,
    /// The full model as a nested logit: a2 and a3 in one nest, a4 and a5 in
    /// another, a1 alone; choices drawn from the nested process: 17 parameters.
    Nested,
}

/// The nested model's nests: (alternative indices, scale name, true scale).
const NESTS: [(&[usize], &str, f64); 2] =
    [(&[1, 2], "lambda_near", 0.6), (&[3, 4], "lambda_far", 0.75)];

impl Model {
    pub fn label(self) -> &'static str {
        match self {
            Model::Full => "full",
            Model::Characteristics => "characteristics",
            Model::Nested => "nested",
        }
    }
    fn attributes(self) -> &'static [Attr] {
        match self {
            Model::Full | Model::Nested => &ATTRS,
            Model::Characteristics => &[],
        }
    }
}

/// A simulated attribute: uniform on `low..high` (alternative j adds `shift * j`),
/// written with `decimals` digits; `beta` is its true coefficient.
struct Attr {
    name: &'static str,
    low: f64,
    high: f64,
    shift: f64,
    decimals: u32,
    beta: f64,
}

const ATTRS: [Attr; 3] = [
    Attr {
        name: "cost",
        low: 1.0,
        high: 9.0,
        shift: 0.5,
        decimals: 2,
        beta: -0.45,
    },
    Attr {
        name: "time",
        low: 5.0,
        high: 50.0,
        shift: -2.0,
        decimals: 1,
        beta: -0.035,
    },
    Attr {
        name: "rating",
        low: 1.0,
        high: 5.0,
        shift: 0.0,
        decimals: 1,
        beta: 0.30,
    },
];

/// True constants of a2..a5.
const ASC: [f64; 4] = [0.40, -0.30, 0.20, -0.50];
/// True income coefficients of a2..a5 (income in thousands, 10..120).
const INCOME: [f64; 4] = [0.010, -0.008, 0.005, 0.012];
/// True age coefficients of a2..a5 (age in years, 18..80).
const AGE: [f64; 4] = [-0.015, 0.010, 0.020, -0.005];

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

/// True value of each parameter, in the spec's parameter order.
pub fn truth(model: Model) -> Vec<(String, f64)> {
    let mut out: Vec<(String, f64)> = Vec::new();
    for (j, b) in ASC.iter().enumerate() {
        out.push((format!("asc_{}", ALTS[j + 1]), *b));
    }
    for a in model.attributes() {
        out.push((a.name.to_string(), a.beta));
    }
    for (j, b) in INCOME.iter().enumerate() {
        out.push((format!("income_{}", ALTS[j + 1]), *b));
    }
    for (j, b) in AGE.iter().enumerate() {
        out.push((format!("age_{}", ALTS[j + 1]), *b));
    }
    if model == Model::Nested {
        for (_, name, scale) in NESTS {
            out.push((name.to_string(), scale));
        }
    }
    out
}

/// The spec text for the simulated file `data_file` (relative to the spec).
pub fn spec_text(model: Model, data_file: &str) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# Simulated by `sharecast bench` (invented data, seed {SEED}).\n\
         title = \"sharecast bench: {} model\"\n\n\
         [data]\nfile = \"{data_file}\"\nlayout = \"wide\"\nchoice = \"choice\"\n\n\
         [model]\nfamily = \"{}\"\nbase = \"a1\"\n",
        model.label(),
        if model == Model::Nested {
            "nested"
        } else {
            "logit"
        }
    );
    if model == Model::Nested {
        for (alts, name, _) in NESTS {
            let members: Vec<String> = alts.iter().map(|&a| format!("\"{}\"", ALTS[a])).collect();
            let nest = name.trim_start_matches("lambda_");
            let _ = writeln!(
                s,
                "[[nest]]\nname = \"{nest}\"\nalternatives = [{}]\n",
                members.join(", ")
            );
        }
    }
    for (j, a) in ALTS.iter().enumerate() {
        let _ = writeln!(s, "[alternatives.{a}]\ncode = {}\n", j + 1);
    }
    for a in model.attributes() {
        let cols: Vec<String> = ALTS
            .iter()
            .map(|alt| format!("{alt} = \"{}_{alt}\"", a.name))
            .collect();
        let _ = writeln!(
            s,
            "[[attribute]]\nname = \"{}\"\ncolumns = {{ {} }}\n",
            a.name,
            cols.join(", ")
        );
    }
    for c in ["income", "age"] {
        let _ = writeln!(s, "[[characteristic]]\nname = \"{c}\"\ncolumn = \"{c}\"\n");
    }
    s
}

/// Appends `scaled / 10^decimals` in fixed notation (exactly what the parser reads back).
fn push_fixed(buf: &mut Vec<u8>, scaled: i64, decimals: u32) {
    if scaled < 0 {
        buf.push(b'-');
    }
    let m = scaled.unsigned_abs();
    let p = 10u64.pow(decimals);
    let _ = write!(buf, "{}", m / p);
    if decimals > 0 {
        let _ = write!(buf, ".{:0width$}", m % p, width = decimals as usize);
    }
}

/// A uniform draw rounded to `decimals`: (value as written, scaled integer).
fn draw(rng: &mut Rng, low: f64, high: f64, decimals: u32) -> (f64, i64) {
    let p = 10f64.powi(decimals as i32);
    let scaled = ((low + (high - low) * rng.uniform()) * p).round() as i64;
    (scaled as f64 / p, scaled)
}

/// The alternative of `range` with the largest V/scale plus a Gumbel draw.
fn pick(rng: &mut Rng, v: &[f64], scale: f64, range: impl Iterator<Item = usize>) -> usize {
    let mut best = 0;
    let mut best_u = f64::NEG_INFINITY;
    for j in range {
        let u = v[j] / scale + rng.gumbel();
        if u > best_u {
            best_u = u;
            best = j;
        }
    }
    best
}

/// A draw from the nested model in its two stages: the group (a1 alone, then
/// the nests) by l I + Gumbel, I the log of the sum of exp(V/l) over the group,
/// then the alternative within it by V/l + Gumbel.
fn pick_nested(rng: &mut Rng, v: &[f64]) -> usize {
    let groups: [(&[usize], f64); 3] = [
        (&[0], 1.0),
        (NESTS[0].0, NESTS[0].2),
        (NESTS[1].0, NESTS[1].2),
    ];
    let mut best = 0;
    let mut best_u = f64::NEG_INFINITY;
    for (g, (alts, l)) in groups.iter().enumerate() {
        let iv = alts.iter().map(|&a| (v[a] / l).exp()).sum::<f64>().ln();
        let u = l * iv + rng.gumbel();
        if u > best_u {
            best_u = u;
            best = g;
        }
    }
    let (alts, l) = groups[best];
    pick(rng, v, l, alts.iter().copied())
}

/// Writes `n` simulated situations as a wide CSV, one row at a time (nothing of size n is held).
pub fn write_data(path: &Path, model: Model, n: usize) -> Result<()> {
    let file = std::fs::File::create(path).map_err(|e| Error::io(path, e))?;
    let mut w = std::io::BufWriter::with_capacity(1 << 20, file);
    let attrs = model.attributes();
    let mut header = String::from("id,choice,income,age");
    for a in attrs {
        for alt in ALTS {
            let _ = write!(header, ",{}_{alt}", a.name);
        }
    }
    header.push('\n');
    w.write_all(header.as_bytes())
        .map_err(|e| Error::io(path, e))?;
    let mut rng = Rng::new(SEED);
    let mut line: Vec<u8> = Vec::with_capacity(256);
    let mut x = vec![0.0; attrs.len() * ALTS.len()];
    let mut xs = vec![0i64; attrs.len() * ALTS.len()];
    for i in 0..n {
        let (income, income_s) = draw(&mut rng, 10.0, 120.0, 1);
        let age = (18 + rng.below(63)) as f64;
        for (a, at) in attrs.iter().enumerate() {
            for j in 0..ALTS.len() {
                let shift = at.shift * j as f64;
                let (v, s) = draw(&mut rng, at.low + shift, at.high + shift, at.decimals);
                x[a * ALTS.len() + j] = v;
                xs[a * ALTS.len() + j] = s;
            }
        }
        let mut v = [0.0; ALTS.len()];
        for (j, vj) in v.iter_mut().enumerate() {
            if j > 0 {
                *vj += ASC[j - 1] + INCOME[j - 1] * income + AGE[j - 1] * age;
            }
            for (a, at) in attrs.iter().enumerate() {
                *vj += at.beta * x[a * ALTS.len() + j];
            }
        }
        let best = if model == Model::Nested {
            pick_nested(&mut rng, &v)
        } else {
            pick(&mut rng, &v, 1.0, 0..ALTS.len())
        };
        line.clear();
        let _ = write!(line, "{},{},", i + 1, best + 1);
        push_fixed(&mut line, income_s, 1);
        let _ = write!(line, ",{age}");
        for (a, at) in attrs.iter().enumerate() {
            for j in 0..ALTS.len() {
                line.push(b',');
                push_fixed(&mut line, xs[a * ALTS.len() + j], at.decimals);
            }
        }
        line.push(b'\n');
        w.write_all(&line).map_err(|e| Error::io(path, e))?;
    }
    w.flush().map_err(|e| Error::io(path, e))
}

/// Writes `bench.csv` and `bench.toml` into `dir`; returns the spec's path.
pub fn write_set(dir: &Path, model: Model, n: usize) -> Result<PathBuf> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let data = dir.join("bench.csv");
    let spec = dir.join("bench.toml");
    write_data(&data, model, n)?;
    std::fs::write(&spec, spec_text(model, "bench.csv")).map_err(|e| Error::io(&spec, e))?;
    Ok(spec)
}

/// A field of /proc/self/status (or another process's) in bytes, e.g. `VmHWM`.
pub fn status_bytes(status: &str, field: &str) -> Option<u64> {
    let line = status
        .lines()
        .find(|l| l.starts_with(field) && l[field.len()..].starts_with(':'))?;
    let kb: u64 = line[field.len() + 1..]
        .split_whitespace()
        .next()?
        .parse()
        .ok()?;
    Some(kb * 1024)
}

/// Peak resident memory of this process so far (VmHWM), when /proc tells it.
pub fn peak_memory() -> Option<u64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    status_bytes(&s, "VmHWM")
}

/// Runs `f` on the folder `keep`, or on a temporary one named after `name`
/// that is removed afterwards.
pub(crate) fn in_folder(
    keep: Option<&Path>,
    name: &str,
    f: impl FnOnce(&Path) -> Result<ExitCode>,
) -> Result<ExitCode> {
    let dir = keep.map(Path::to_path_buf).unwrap_or_else(|| {
        std::env::temp_dir().join(format!("sharecast-bench-{name}-{}", std::process::id()))
    });
    let result = f(&dir);
    if keep.is_none() {
        let _ = std::fs::remove_dir_all(&dir);
    }
    result
}

pub(crate) fn median(mut v: Vec<f64>) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_by(|a, b| a.total_cmp(b));
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
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

/// This program's path (a rebuild while it runs leaves the old one " (deleted)").
pub(crate) fn own_path() -> Result<PathBuf> {
    let exe = std::env::current_exe().map_err(|e| Error::Usage(format!("bench: {e}")))?;
    let text = exe.to_string_lossy();
    Ok(match text.strip_suffix(" (deleted)") {
        Some(t) => PathBuf::from(t),
        None => exe,
    })
}

/// Runs `sharecast fit SPEC --json [extra]` as a separate process: wall seconds
/// and, polled from /proc every few milliseconds, its peak resident memory.
pub(crate) fn time_process(spec: &Path, extra: &[&str]) -> Result<(f64, Option<u64>, bool)> {
    let exe = own_path()?;
    let started = Instant::now();
    let mut child = Command::new(exe)
        .arg("fit")
        .arg(spec)
        .arg("--json")
        .args(extra)
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .map_err(|e| Error::Usage(format!("bench: could not start `sharecast fit`: {e}")))?;
    let status_path = format!("/proc/{}/status", child.id());
    let mut peak = None;
    let status = loop {
        if let Ok(s) = std::fs::read_to_string(&status_path) {
            if let Some(b) = status_bytes(&s, "VmHWM") {
                peak = Some(peak.map_or(b, |p: u64| p.max(b)));
            }
        }
        match child.try_wait() {
            Ok(Some(st)) => break st,
            Ok(None) => std::thread::sleep(Duration::from_millis(2)),
            Err(e) => return Err(Error::Usage(format!("bench: waiting for the fit: {e}"))),
        }
    };
    Ok((started.elapsed().as_secs_f64(), peak, status.success()))
}

pub(crate) fn mb(b: Option<u64>) -> String {
    b.map(|b| format!("{:.0} MB", b as f64 / 1e6))
        .unwrap_or_else(|| "n/a".into())
}

pub(crate) fn ms(s: f64) -> String {
    if s < 0.01 {
        format!("{:.3} ms", s * 1e3)
    } else if s < 1.0 {
        format!("{:.1} ms", s * 1e3)
    } else {
        format!("{:.2} s", s)
    }
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
