//! `sharecast bench --model probit`: a simulated data set for the multinomial
//! probit (invented data, fixed seed): situations of 5 alternatives (the last
//! not always available), 4 constants and 2 shared attributes, errors with a
//! full covariance of the differences against the base (9 Cholesky
//! parameters), fitted with the GHK simulator. It times one simulated
//! log-likelihood+gradient pass, one log-likelihood pass, and the whole
//! `sharecast fit` as a separate process with its peak memory.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::Arc;
use std::time::Instant;

use serde_json::json;

use super::{mb, median, ms, time_process};
use crate::data::write::{table, Values};
use crate::design::Design;
use crate::error::{Error, Result};
use crate::rng::Rng;

/// The benchmark's settings.
#[derive(Clone, Debug)]
pub struct ProbitOptions {
    pub situations: usize,
    pub draws: usize,
    pub repeats: usize,
    pub keep: Option<PathBuf>,
    pub no_process: bool,
    pub json: bool,
    pub write_only: bool,
}

const ALTS: [&str; 5] = ["a1", "a2", "a3", "a4", "a5"];
/// Generating constants of a2..a5 and the two attributes' coefficients.
const ASC: [f64; 4] = [0.3, -0.2, 0.1, -0.4];
const COST: f64 = -0.6;
const TIME: f64 = -0.8;
/// The generating Cholesky factor of the differences' covariance (a2..a5).
const L: [[f64; 4]; 4] = [
    [1.0, 0.0, 0.0, 0.0],
    [0.6, 0.8, 0.0, 0.0],
    [0.2, -0.3, 0.9, 0.0],
    [0.0, 0.4, 0.3, 0.8],
];

fn spec_text(draws: usize) -> String {
    let mut s = String::from(
        "title = \"sharecast bench: multinomial probit\"\n\n[data]\nfile = \"probit.csv\"\nlayout = \"wide\"\nchoice = \"choice\"\n\n[model]\nfamily = \"probit\"\nbase = \"a1\"\n\n[errors]\nstructure = \"full\"\n\n",
    );
    for a in ALTS {
        let _ = writeln!(s, "[alternatives.{a}]");
        if a == "a5" {
            let _ = writeln!(s, "available = \"a5_open\"");
        }
    }
    for x in ["cost", "time"] {
        let cols: Vec<String> = ALTS.iter().map(|a| format!("{a} = \"{a}_{x}\"")).collect();
        let _ = write!(
            s,
            "\n[[attribute]]\nname = \"{x}\"\ncolumns = {{ {} }}\n",
            cols.join(", ")
        );
    }
    let _ = write!(
        s,
        "\n[simulation]\ndraws = {draws}\nsequence = \"halton\"\nseed = 7\n"
    );
    s
}

/// Writes the data (one row per situation) and its spec into `dir`.
fn write_set(dir: &Path, o: &ProbitOptions) -> Result<PathBuf> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let mut rng = Rng::new(20_261_202);
    let n = o.situations;
    let mut choice = Vec::with_capacity(n);
    let mut open = Vec::with_capacity(n);
    let mut cols: Vec<Vec<f64>> = vec![Vec::with_capacity(n); 2 * ALTS.len()];
    for _ in 0..n {
        let avail5 = rng.uniform() < 0.7;
        let z: Vec<f64> = (0..4).map(|_| rng.normal()).collect();
        let mut best = (0, f64::NEG_INFINITY);
        for j in 0..ALTS.len() {
            let cost = (100.0 * (0.5 + 2.0 * rng.uniform())).round() / 100.0;
            let time = (100.0 * (0.5 + 1.5 * rng.uniform())).round() / 100.0;
            cols[2 * j].push(cost);
            cols[2 * j + 1].push(time);
            let mut u = COST * cost + TIME * time;
            if j > 0 {
                u += ASC[j - 1] + (0..4).map(|k| L[j - 1][k] * z[k]).sum::<f64>();
            }
            if j == 4 && !avail5 {
                continue;
            }
            if u > best.1 {
                best = (j, u);
            }
        }
        choice.push(ALTS[best.0].to_string());
        open.push(i64::from(avail5));
    }
    let mut out = vec![
        ("choice".to_string(), Values::Text(choice)),
        ("a5_open".to_string(), Values::Int(open)),
    ];
    for (j, a) in ALTS.iter().enumerate() {
        for (k, x) in ["cost", "time"].iter().enumerate() {
            out.push((
                format!("{a}_{x}"),
                Values::Num(std::mem::take(&mut cols[2 * j + k])),
            ));
        }
    }
    table(&dir.join("probit.csv"), true, &out)?;
    let spec = dir.join("probit.toml");
    std::fs::write(&spec, spec_text(o.draws)).map_err(|e| Error::io(&spec, e))?;
    Ok(spec)
}

/// Runs the benchmark (a temporary folder unless `keep`).
pub fn run(o: ProbitOptions) -> Result<ExitCode> {
    if o.situations == 0 || o.draws == 0 {
        return Err(Error::Usage(
            "--situations and --draws must each be at least 1".into(),
        ));
    }
    crate::error::check_count("--situations", o.situations, 10_000_000, 0)?;
    super::in_folder(o.keep.as_deref(), "probit", |dir| measure(&o, dir))
}

fn measure(o: &ProbitOptions, dir: &Path) -> Result<ExitCode> {
    let t = Instant::now();
    let spec_path = write_set(dir, o)?;
    let generate_s = t.elapsed().as_secs_f64();
    if o.write_only {
        crate::outln!(
            "wrote {} and its data ({:.1} s)",
            spec_path.display(),
            generate_s
        );
        return Ok(ExitCode::SUCCESS);
    }
    let (spec, ds) = crate::workspace::open(&spec_path, &Default::default())?;
    let family = crate::model::for_spec(&spec)?;
    let d = Design::build(&spec, Arc::new(ds.obs));
    family
        .check_data(&spec, &d)
        .map_err(|m| Error::spec(&spec.path, m))?;
    let theta: Vec<f64> = spec.parameters.iter().map(|p| p.start).collect();
    let t = Instant::now();
    let first = family.evaluate(&d, &theta, true, false);
    let first_s = t.elapsed().as_secs_f64();
    let time = |grad: bool| {
        let v: Vec<f64> = (0..o.repeats.max(1))
            .map(|_| {
                let t = Instant::now();
                std::hint::black_box(family.evaluate(&d, &theta, grad, false).ll);
                t.elapsed().as_secs_f64()
            })
            .collect();
        median(v)
    };
    let (pass_s, ll_only_s) = (time(true), time(false));
    let (fit_s, peak, ok) = if o.no_process {
        (f64::NAN, None, true)
    } else {
        time_process(&spec_path, &["--no-analysis"])?
    };
    let cores = std::thread::available_parallelism()
        .map(|c| c.get())
        .unwrap_or(1);
    if o.json {
        let doc = json!({
            "situations": d.situations(), "alternatives": d.alternatives(), "draws": o.draws,
            "parameters": d.params, "cores": cores, "generate_seconds": generate_s,
            "first_pass_seconds": first_s, "pass_seconds": pass_s, "ll_only_pass_seconds": ll_only_s,
            "log_likelihood": first.ll, "fit_process_seconds": fit_s,
            "fit_process_peak_bytes": peak, "fit_converged": ok,
        });
        crate::outln!("{doc}");
        return Ok(ExitCode::SUCCESS);
    }
    crate::outln!(
        "multinomial probit: {} situations x {} alternatives, full error covariance, {} parameters, {} Halton draws per situation; {} cores",
        d.situations(), d.alternatives(), d.params, o.draws, cores
    );
    crate::outln!("  data written            {}", ms(generate_s));
    crate::outln!("  first pass (with draws) {}", ms(first_s));
    crate::outln!("  one pass, ll + gradient {}", ms(pass_s));
    crate::outln!("  one pass, ll only       {}", ms(ll_only_s));
    if fit_s.is_finite() {
        crate::outln!(
            "  `sharecast fit` process {}   peak memory {}{}",
            ms(fit_s),
            mb(peak),
            if ok { "" } else { " (did not converge)" }
        );
    }
    Ok(ExitCode::SUCCESS)
}
