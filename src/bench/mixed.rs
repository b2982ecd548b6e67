//! `sharecast bench --model mixed`: a simulated stated-choice panel (invented
//! data, fixed seed) of decision makers x tasks x 4 alternatives with 4 random
//! and 3 fixed coefficients, fitted with Halton draws. It times one simulated
//! log-likelihood+gradient pass against its floor (the exponentials it must
//! evaluate times the measured cost of one), the same pass written plainly
//! in numpy (`bench/mixed_peer.py`, on the same data and draws, when python3
//! with numpy and scipy is there), and the whole `sharecast fit` as a separate
//! process with its peak memory.

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
use crate::model::draws::Simulation;
use crate::rng::Rng;

/// The benchmark's settings.
#[derive(Clone, Debug)]
pub struct MixedOptions {
    pub decision_makers: usize,
    pub tasks: usize,
    pub draws: usize,
    pub repeats: usize,
    pub keep: Option<PathBuf>,
    pub no_process: bool,
    pub no_peer: bool,
    pub json: bool,
    /// Only write the data and spec (with `keep`); time nothing.
    pub write_only: bool,
    /// Simulate correlated tastes and fit the model with and without the
    /// correlation (`bench::correlated`).
    pub correlated: bool,
}

/// Generating values: 3 fixed constants, then 4 random attributes' locations,
/// then their spreads (cost is negative-lognormal: the log's location).
pub const TRUTH: &[(&str, f64)] = &[
    ("asc_a2", 0.3),
    ("asc_a3", -0.2),
    ("asc_a4", 0.1),
    ("x1", -0.5),
    ("x2", 0.4),
    ("x3", -0.3),
    ("cost", -0.7),
    ("x1_spread", 0.4),
    ("x2_spread", 0.3),
    ("x3_spread", 0.5),
    ("cost_spread", 0.6),
];

const ALTS: [&str; 4] = ["a1", "a2", "a3", "a4"];
pub(crate) const ATTRS: [&str; 4] = ["x1", "x2", "x3", "cost"];

pub(crate) fn truth(name: &str) -> f64 {
    TRUTH
        .iter()
        .find(|t| t.0 == name)
        .map(|t| t.1)
        .unwrap_or(0.0)
}

/// The spec: with `correlated`, the four random coefficients' normals are
/// jointly normal (`correlated = true`).
pub(crate) fn spec_text(draws: usize, correlated: bool) -> String {
    let mut s = format!(
        "title = \"sharecast bench: mixed logit panel\"\n\n[data]\nfile = \"mixed.csv\"\nlayout = \"wide\"\nchoice = \"choice\"\ngroup = \"person\"\n\n[model]\nfamily = \"mixed\"\nbase = \"a1\"\n{}\n",
        if correlated { "correlated = true\n" } else { "" }
    );
    for a in ALTS {
        let _ = writeln!(s, "[alternatives.{a}]");
    }
    for (k, x) in ATTRS.iter().enumerate() {
        let cols: Vec<String> = ALTS.iter().map(|a| format!("{a} = \"{a}_{x}\"")).collect();
        let dist = if k == 3 {
            "negative-lognormal"
        } else {
            "normal"
        };
        let _ = write!(
            s,
            "\n[[attribute]]\nname = \"{x}\"\ncolumns = {{ {} }}\nrandom = \"{dist}\"\n",
            cols.join(", ")
        );
    }
    let _ = write!(
        s,
        "\n[simulation]\ndraws = {draws}\nsequence = \"halton\"\nseed = 7\n"
    );
    s
}

/// Writes the panel (one row per task) and its spec into `dir`: the tastes'
/// normals are the locations plus `chol` (lower-triangular, rows in `ATTRS`
/// order) times independent standard normals; the diagonal alone (the
/// spreads) gives the independent model.
pub(crate) fn write_set(dir: &Path, o: &MixedOptions, chol: &[[f64; 4]; 4]) -> Result<PathBuf> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let mut rng = Rng::new(20_261_204);
    let n = o.decision_makers * o.tasks;
    let mut person = Vec::with_capacity(n);
    let mut choice = Vec::with_capacity(n);
    let mut cols: Vec<Vec<f64>> = vec![Vec::with_capacity(n); ALTS.len() * ATTRS.len()];
    for p in 0..o.decision_makers {
        let z: [f64; 4] = std::array::from_fn(|_| rng.normal());
        let mut b = [0.0; 4];
        for (k, x) in ATTRS.iter().enumerate() {
            let mixed = (0..=k).fold(0.0, |acc, j| acc + chol[k][j] * z[j]);
            let m = truth(x);
            b[k] = if k == 3 {
                -(m + mixed).exp()
            } else {
                m + mixed
            };
        }
        for _ in 0..o.tasks {
            let mut best = (0, f64::NEG_INFINITY);
            for (j, a) in ALTS.iter().enumerate() {
                let mut v = if j == 0 {
                    0.0
                } else {
                    truth(&format!("asc_{a}"))
                };
                for (k, _) in ATTRS.iter().enumerate() {
                    let x = if k == 3 {
                        (1.0 + 4.0 * rng.uniform() * 100.0).round() / 100.0
                    } else {
                        (2.0 * rng.uniform() * 100.0).round() / 100.0
                    };
                    cols[j * ATTRS.len() + k].push(x);
                    v += b[k] * x;
                }
                let u = v + rng.gumbel();
                if u > best.1 {
                    best = (j, u);
                }
            }
            person.push(p as i64 + 1);
            choice.push(ALTS[best.0].to_string());
        }
    }
    let mut out = vec![
        ("person".to_string(), Values::Int(person)),
        ("choice".to_string(), Values::Text(choice)),
    ];
    for (j, a) in ALTS.iter().enumerate() {
        for (k, x) in ATTRS.iter().enumerate() {
            out.push((
                format!("{a}_{x}"),
                Values::Num(std::mem::take(&mut cols[j * ATTRS.len() + k])),
            ));
        }
    }
    table(&dir.join("mixed.csv"), true, &out)?;
    let spec = dir.join("mixed.toml");
    std::fs::write(&spec, spec_text(o.draws, false)).map_err(|e| Error::io(&spec, e))?;
    Ok(spec)
}

/// The independent model's Cholesky factor: the spreads on the diagonal.
pub(crate) fn diagonal() -> [[f64; 4]; 4] {
    let mut l = [[0.0; 4]; 4];
    for (k, x) in ATTRS.iter().enumerate() {
        l[k][k] = truth(&format!("{x}_spread"));
    }
    l
}

/// Nanoseconds per vectorised exponential on one core (the pass's kind).
fn exp_cost() -> f64 {
    let n = 1 << 20;
    let x: Vec<f64> = (0..n).map(|i| -((i % 1000) as f64) / 100.0).collect();
    let mut y = vec![0.0; n];
    let mut best = f64::INFINITY;
    for _ in 0..20 {
        let t = Instant::now();
        crate::model::logit::fastmath::exp_slice(&x, &mut y);
        best = best.min(t.elapsed().as_secs_f64());
        std::hint::black_box(&y);
    }
    best * 1e9 / n as f64
}

/// Writes the numpy peer's folder: meta.json, x.f64 (N, T, J, K), chosen.u32
/// (N, T) and u.f64 (N, R, D): the same data, parameters and uniform draws.
fn write_peer(
    dir: &Path,
    d: &Design,
    o: &MixedOptions,
    theta: &[f64],
    random: &[usize],
) -> Result<()> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let (j, k) = (d.alternatives(), random.len() + 3);
    let mut x = Vec::with_capacity(d.situations() * j * k * 8);
    for i in 0..d.situations() {
        for a in 0..j {
            let mut row = vec![0.0; k];
            for f in &d.features[a] {
                row[f.param] += d.value(i, a, f.value);
            }
            row.iter()
                .for_each(|v| x.extend_from_slice(&v.to_le_bytes()));
        }
    }
    let chosen: Vec<u8> = d.obs.chosen.iter().flat_map(|c| c.to_le_bytes()).collect();
    let sim = Simulation {
        draws: o.draws,
        ..Simulation::default()
    };
    let dims = random.len();
    let u = sim.uniforms(o.decision_makers, dims);
    let mut ub = Vec::with_capacity(u.len() * 8);
    for n in 0..o.decision_makers {
        for r in 0..o.draws {
            for dim in 0..dims {
                ub.extend_from_slice(&u[(n * dims + dim) * o.draws + r].to_le_bytes());
            }
        }
    }
    let meta = json!({
        "N": o.decision_makers, "T": o.tasks, "J": j, "K": k, "R": o.draws,
        "random": random,
        "dist": ["normal", "normal", "normal", "negative-lognormal"],
        "theta": theta,
    });
    for (name, bytes) in [
        ("x.f64", x),
        ("chosen.u32", chosen),
        ("u.f64", ub),
        ("meta.json", meta.to_string().into_bytes()),
    ] {
        let p = dir.join(name);
        std::fs::write(&p, bytes).map_err(|e| Error::io(&p, e))?;
    }
    Ok(())
}

pub fn run(o: MixedOptions) -> Result<ExitCode> {
    if o.decision_makers == 0 || o.tasks == 0 || o.draws == 0 {
        return Err(Error::Usage(
            "--decision-makers, --tasks and --draws must each be at least 1".into(),
        ));
    }
    crate::error::check_count("--decision-makers", o.decision_makers, 1_000_000, 0)?;
    crate::error::check_count("--tasks", o.tasks, 1_000, 0)?;
    if o.correlated {
        return super::in_folder(o.keep.as_deref(), "correlated", |dir| {
            super::correlated::measure(&o, dir)
        });
    }
    super::in_folder(o.keep.as_deref(), "mixed", |dir| measure(&o, dir))
}

fn measure(o: &MixedOptions, dir: &Path) -> Result<ExitCode> {
    let t = Instant::now();
    let spec_path = write_set(dir, o, &diagonal())?;
    let generate_s = t.elapsed().as_secs_f64();
    if o.write_only {
        crate::outln!(
            "wrote {} and its data ({:.1} s)",
            spec_path.display(),
            generate_s
        );
        return Ok(ExitCode::SUCCESS);
    }
    let t = Instant::now();
    let (spec, ds) = crate::workspace::open(&spec_path, &Default::default())?;
    let load_s = t.elapsed().as_secs_f64();
    let family = crate::model::for_spec(&spec)?;
    family
        .check_data(&spec, &Design::build(&spec, Arc::new(ds.obs.clone())))
        .map_err(|m| Error::spec(&spec.path, m))?;
    let d = Design::build(&spec, Arc::new(ds.obs));
    let theta: Vec<f64> = spec.parameters.iter().map(|p| truth(&p.name)).collect();
    let (first, draws_s, pass_s, ll_only_s) = time_passes(&*family, &d, &theta, o.repeats);
    let cores = std::thread::available_parallelism()
        .map(|c| c.get())
        .unwrap_or(1);
    let exps = (d.situations() * o.draws * d.alternatives()) as f64;
    let ns_exp = exp_cost();
    let floor_s = exps * ns_exp * 1e-9 / cores as f64;
    let random: Vec<usize> = family
        .random_coefficients()
        .iter()
        .map(|t| t.location)
        .collect();
    let peer = if o.no_peer {
        Err("skipped (--no-peer)".to_string())
    } else {
        let pdir = dir.join("peer");
        write_peer(&pdir, &d, o, &theta, &random)?;
        super::run_peer("mixed_peer.py", &pdir, &["--repeats", "3"])
    };
    let (fit_s, peak, ok) = if o.no_process {
        (f64::NAN, None, true)
    } else {
        time_process(&spec_path, &["--no-analysis"])?
    };
    report(
        o,
        &d,
        Figures {
            generate_s,
            load_s,
            draws_s,
            pass_s,
            ll_only_s,
            floor_s,
            ns_exp,
            exps,
            cores,
            ll: first.ll,
            grad: first.grad,
            peer,
            fit_s,
            peak,
            ok,
        },
    )?;
    Ok(ExitCode::SUCCESS)
}

/// The first pass at `theta` (with its time, which includes making the
/// draws), then the median times of passes with and without the gradient.
pub(crate) fn time_passes(
    family: &dyn crate::model::Family,
    d: &Design,
    theta: &[f64],
    repeats: usize,
) -> (crate::model::Eval, f64, f64, f64) {
    let t = Instant::now();
    let first = family.evaluate(d, theta, true, false);
    let draws_s = t.elapsed().as_secs_f64(); // includes making the draws
    let mut pass_t = Vec::new();
    for _ in 0..repeats.max(1) {
        let t = Instant::now();
        std::hint::black_box(family.evaluate(d, theta, true, false).ll);
        pass_t.push(t.elapsed().as_secs_f64());
    }
    let pass_s = median(pass_t);
    let mut ll_t = Vec::new();
    for _ in 0..repeats.max(1) {
        let t = Instant::now();
        std::hint::black_box(family.evaluate(d, theta, false, false).ll);
        ll_t.push(t.elapsed().as_secs_f64());
    }
    (first, draws_s, pass_s, median(ll_t))
}

struct Figures {
    generate_s: f64,
    load_s: f64,
    draws_s: f64,
    pass_s: f64,
    ll_only_s: f64,
    floor_s: f64,
    ns_exp: f64,
    exps: f64,
    cores: usize,
    ll: f64,
    grad: Vec<f64>,
    peer: std::result::Result<serde_json::Value, String>,
    fit_s: f64,
    peak: Option<u64>,
    ok: bool,
}

fn report(o: &MixedOptions, d: &Design, f: Figures) -> Result<()> {
    let peer_s = f.peer.as_ref().ok().and_then(|p| p["seconds"].as_f64());
    let peer_ll = f.peer.as_ref().ok().and_then(|p| p["ll"].as_f64());
    let ll_rel = peer_ll.map(|p| ((f.ll - p) / p).abs());
    let grad_rel = f
        .peer
        .as_ref()
        .ok()
        .and_then(|p| p["grad"].as_array())
        .map(|g| {
            g.iter()
                .zip(&f.grad)
                .filter_map(|(a, b)| a.as_f64().map(|a| (a - b).abs() / a.abs().max(1.0)))
                .fold(0.0, f64::max)
        });
    if o.json {
        let doc = json!({
            "decision_makers": o.decision_makers, "tasks": o.tasks, "situations": d.situations(),
            "alternatives": d.alternatives(), "draws": o.draws, "cores": f.cores,
            "generate_seconds": f.generate_s, "load_seconds": f.load_s,
            "first_pass_seconds": f.draws_s, "pass_seconds": f.pass_s,
            "ll_only_pass_seconds": f.ll_only_s,
            "exponentials_per_pass": f.exps, "ns_per_exponential": f.ns_exp,
            "floor_seconds": f.floor_s, "log_likelihood": f.ll,
            "peer": f.peer.as_ref().ok(), "peer_note": f.peer.as_ref().err(),
            "peer_ll_relative_difference": ll_rel, "peer_gradient_relative_difference": grad_rel,
            "peer_ratio": peer_s.map(|p| p / f.pass_s),
            "fit_process_seconds": f.fit_s, "fit_process_peak_bytes": f.peak, "fit_converged": f.ok,
        });
        crate::outln!("{doc}");
        return Ok(());
    }
    crate::outln!(
        "mixed logit panel: {} decision makers x {} tasks x {} alternatives, 4 random + 3 fixed coefficients, {} Halton draws; {} cores",
        o.decision_makers, o.tasks, d.alternatives(), o.draws, f.cores
    );
    crate::outln!("  data written            {}", ms(f.generate_s));
    crate::outln!("  spec and data loaded    {}", ms(f.load_s));
    crate::outln!("  first pass (with draws) {}", ms(f.draws_s));
    crate::outln!(
        "  one pass, ll + gradient {}   floor {} ({:.0} million exponentials x {:.2} ns / {} cores) = {:.1}x the floor",
        ms(f.pass_s),
        ms(f.floor_s),
        f.exps / 1e6,
        f.ns_exp,
        f.cores,
        f.pass_s / f.floor_s
    );
    crate::outln!("  one pass, ll only       {}", ms(f.ll_only_s));
    match (&f.peer, peer_s) {
        (Ok(p), Some(ps)) => {
            crate::outln!(
                "  numpy peer, same pass   {}   sharecast is {:.1}x faster · log-likelihood differs by {:.1e} relative, gradient by {:.1e}",
                ms(ps),
                ps / f.pass_s,
                ll_rel.unwrap_or(f64::NAN),
                grad_rel.unwrap_or(f64::NAN)
            );
            crate::outln!(
                "                          (numpy {}, {})",
                p["numpy"].as_str().unwrap_or("?"),
                p["blas"].as_str().unwrap_or("?")
            );
        }
        (Err(why), _) => crate::outln!("  numpy peer              not run: {why}"),
        (Ok(_), None) => crate::outln!("  numpy peer              printed no timing"),
    }
    if f.fit_s.is_finite() {
        crate::outln!(
            "  `sharecast fit` process {}   peak memory {}{}",
            ms(f.fit_s),
            mb(f.peak),
            if f.ok { "" } else { " (did not converge)" }
        );
    }
    Ok(())
}
