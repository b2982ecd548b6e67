//! `sharecast bench --model classes`: a simulated panel (invented data, fixed
//! seed) of households choosing among 4 delivery options of an invented
//! online grocer, drawn from 3 latent classes with distinct tastes and a
//! membership logit on 2 household columns, fitted as a latent class logit
//! with `[model].starts` random starts. It times loading, one pass (with and
//! without the Hessian), the whole `estimate::fit` split into the starts and
//! the search after them, the time per start and how many reached the best,
//! prints the recovery of the true parameters, and runs the independent
//! numpy/scipy latent class code on the same data (`bench/classes_peer.py`)
//! when python3 with numpy and scipy is there. `bench::classes_report`
//! prints the figures.

use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::{Arc, Mutex};
use std::time::Instant;

use serde_json::json;

use super::classes_report::{report, Figures, Recovered, Timeline};
use super::mixed::time_passes;
use super::{draw, median, pick, time_process};
use crate::data::write::{table, Values};
use crate::design::Design;
use crate::error::{Error, Result};
use crate::estimate::Step;
use crate::rng::Rng;

/// The benchmark's settings.
#[derive(Clone, Debug)]
pub struct ClassesOptions {
    pub decision_makers: usize,
    pub tasks: usize,
    /// `[model].starts` of the spec.
    pub starts: usize,
    pub repeats: usize,
    pub keep: Option<PathBuf>,
    pub no_process: bool,
    pub no_peer: bool,
    /// The peer stops starting new starts after this many seconds.
    pub peer_seconds: f64,
    pub json: bool,
    /// Only write the data and spec (with `keep`); time nothing.
    pub write_only: bool,
}

/// The delivery options; the first is the base.
pub const ALTS: [&str; 4] = ["locker", "standard", "evening", "express"];
/// Each class's utility terms, in the order of `TASTES`.
pub const TERMS: [&str; 6] = [
    "asc_standard",
    "asc_evening",
    "asc_express",
    "fee",
    "wait",
    "electric",
];
/// True tastes per class: thrifty, in a hurry, keen on electric vans
/// (fee in currency units, wait in hours, electric 0/1).
pub const TASTES: [[f64; 6]; 3] = [
    [0.4, 0.1, -0.3, -0.8, -0.03, 0.2],
    [0.6, 0.9, 1.2, -0.2, -0.12, 0.1],
    [0.3, 0.2, -0.4, -0.35, -0.04, 1.6],
];
/// The membership columns (constant within a household).
pub const MEMBERSHIP: [&str; 2] = ["household", "distance"];
/// True membership logit of classes 2 and 3: constant, household, distance.
pub const MEMBER: [[f64; 3]; 2] = [[-0.5, 0.15, -0.03], [-0.7, -0.12, 0.01]];
/// The goal for the whole fit at the default size (seconds).
pub const GOAL_SECONDS: f64 = 20.0;

/// The true value of a parameter of the spec, by name.
pub fn truth(name: &str) -> Option<f64> {
    for (c, tastes) in TASTES.iter().enumerate() {
        for (t, v) in TERMS.iter().zip(tastes) {
            if name == format!("{t}_class{}", c + 1) {
                return Some(*v);
            }
        }
    }
    for (c, m) in MEMBER.iter().enumerate() {
        let k = c + 2;
        if name == format!("member_class{k}") {
            return Some(m[0]);
        }
        for (col, v) in MEMBERSHIP.iter().zip(&m[1..]) {
            if name == format!("member_class{k}_{col}") {
                return Some(*v);
            }
        }
    }
    None
}

/// The spec of the panel.
pub fn spec_text(starts: usize) -> String {
    let cols = |x: &str, alts: &[&str]| -> String {
        let c: Vec<String> = alts.iter().map(|a| format!("{a} = \"{a}_{x}\"")).collect();
        c.join(", ")
    };
    format!(
        "title = \"sharecast bench: latent class panel (invented grocer's delivery options)\"\n\n\
         [data]\nfile = \"classes.csv\"\nlayout = \"wide\"\nchoice = \"choice\"\ngroup = \"household_id\"\n\n\
         [model]\nfamily = \"latent-class\"\nbase = \"locker\"\nclasses = 3\n\
         membership = [\"household\", \"distance\"]\nstarts = {starts}\nseed = 1\n\n\
         [alternatives.locker]\n[alternatives.standard]\n[alternatives.evening]\n[alternatives.express]\n\n\
         [[attribute]]\nname = \"fee\"\ncolumns = {{ {} }}\n\n\
         [[attribute]]\nname = \"wait\"\ncolumns = {{ {} }}\n\n\
         [[attribute]]\nname = \"electric\"\ncolumns = {{ {} }}\n",
        cols("fee", &ALTS),
        cols("wait", &ALTS),
        cols("electric", &ALTS[1..])
    )
}

/// The simulated panel's facts the figures need besides the file.
pub struct Simulated {
    pub spec: PathBuf,
    /// Per household: household size and distance to the depot.
    pub membership: Vec<[f64; 2]>,
}

/// Fee and wait ranges per option (currency units, hours).
const FEE: [(f64, f64); 4] = [(0.0, 1.5), (1.5, 4.5), (2.5, 6.0), (4.0, 9.0)];
const WAIT: [(f64, f64); 4] = [(4.0, 30.0), (12.0, 48.0), (6.0, 36.0), (1.0, 6.0)];

/// The class of a household with membership columns `z`.
fn draw_class(rng: &mut Rng, z: [f64; 2]) -> usize {
    let mut u = [0.0; 3];
    for (c, m) in MEMBER.iter().enumerate() {
        u[c + 1] = m[0] + m[1] * z[0] + m[2] * z[1];
    }
    pick(rng, &u, 1.0, 0..3)
}

/// Writes the panel (one row per task) and its spec into `dir`.
pub fn write_set(dir: &Path, o: &ClassesOptions) -> Result<Simulated> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let mut rng = Rng::new(20_261_205);
    let n = o.decision_makers * o.tasks;
    let (mut id, mut task, mut choice) = (Vec::new(), Vec::new(), Vec::new());
    let mut cols: Vec<Vec<f64>> = vec![Vec::with_capacity(n); 3 * ALTS.len() + 2];
    let mut membership = Vec::with_capacity(o.decision_makers);
    for p in 0..o.decision_makers {
        let z = [(1 + rng.below(6)) as f64, draw(&mut rng, 0.5, 25.0, 1).0];
        membership.push(z);
        // A class drawn by its membership logit (Gumbel draws: the logit).
        let b = &TASTES[draw_class(&mut rng, z)];
        for t in 0..o.tasks {
            let mut v = [0.0; 4];
            for (j, vj) in v.iter_mut().enumerate() {
                let fee = draw(&mut rng, FEE[j].0, FEE[j].1, 2).0;
                let wait = draw(&mut rng, WAIT[j].0, WAIT[j].1, 0).0;
                let electric = if j == 0 { 0.0 } else { rng.below(2) as f64 };
                *vj = if j == 0 { 0.0 } else { b[j - 1] } + b[3] * fee + b[4] * wait;
                *vj += b[5] * electric;
                cols[j].push(fee);
                cols[4 + j].push(wait);
                cols[8 + j].push(electric);
            }
            cols[12].push(z[0]);
            cols[13].push(z[1]);
            id.push(p as i64 + 1);
            task.push(t as i64 + 1);
            choice.push(ALTS[pick(&mut rng, &v, 1.0, 0..4)].to_string());
        }
    }
    let mut out = vec![
        ("household_id".to_string(), Values::Int(id)),
        ("task".to_string(), Values::Int(task)),
        ("choice".to_string(), Values::Text(choice)),
    ];
    for (k, x) in ["fee", "wait", "electric"].iter().enumerate() {
        for (j, a) in ALTS.iter().enumerate() {
            if !(k == 2 && j == 0) {
                out.push((
                    format!("{a}_{x}"),
                    Values::Num(std::mem::take(&mut cols[4 * k + j])),
                ));
            }
        }
    }
    for (c, name) in MEMBERSHIP.iter().enumerate() {
        out.push((
            name.to_string(),
            Values::Num(std::mem::take(&mut cols[12 + c])),
        ));
    }
    table(&dir.join("classes.csv"), true, &out)?;
    let spec = dir.join("classes.toml");
    std::fs::write(&spec, spec_text(o.starts)).map_err(|e| Error::io(&spec, e))?;
    Ok(Simulated { spec, membership })
}

pub fn run(o: ClassesOptions) -> Result<ExitCode> {
    if o.decision_makers < 2 || o.tasks == 0 || o.starts == 0 {
        return Err(Error::Usage(
            "--model classes: --decision-makers must be at least 2, --tasks and --starts at least 1"
                .into(),
        ));
    }
    crate::error::check_count("--decision-makers", o.decision_makers, 1_000_000, 0)?;
    crate::error::check_count("--tasks", o.tasks, 1_000, 0)?;
    crate::error::check_count("--starts", o.starts, 10_000, 0)?;
    // About 1 kB per situation: the CSV, the loaded columns and the design.
    crate::error::check_count(
        "--decision-makers x --tasks",
        o.decision_makers * o.tasks,
        super::MAX_SITUATIONS / 5,
        1000,
    )?;
    super::in_folder(o.keep.as_deref(), "classes", |dir| measure(&o, dir))
}

fn measure(o: &ClassesOptions, dir: &Path) -> Result<ExitCode> {
    let t = Instant::now();
    let sim = write_set(dir, o)?;
    let generate_s = t.elapsed().as_secs_f64();
    if o.write_only {
        crate::outln!(
            "wrote {} and its data ({:.1} s)",
            sim.spec.display(),
            generate_s
        );
        return Ok(ExitCode::SUCCESS);
    }
    let t = Instant::now();
    let (spec, ds) = crate::workspace::open(&sim.spec, &Default::default())?;
    let load_s = t.elapsed().as_secs_f64();
    let family = crate::model::for_spec(&spec)?;
    let obs = Arc::new(ds.obs);
    let d = Design::build(&spec, obs.clone());
    family
        .check_data(&spec, &d)
        .map_err(|m| Error::spec(&spec.path, m))?;
    let mut theta = Vec::with_capacity(spec.parameters.len());
    for p in &spec.parameters {
        theta.push(truth(&p.name).ok_or_else(|| {
            Error::Usage(format!("bench: no true value for parameter `{}`", p.name))
        })?);
    }
    let (first, _, pass_s, ll_only_s) = time_passes(&*family, &d, &theta, o.repeats);
    let hessian_s = median(
        (0..o.repeats.max(1))
            .map(|_| {
                let t = Instant::now();
                std::hint::black_box(family.evaluate(&d, &theta, true, true).ll);
                t.elapsed().as_secs_f64()
            })
            .collect(),
    );
    let true_shares = mean_shares(&*family, &d, &theta);
    let peer = if o.no_peer {
        Err("skipped (--no-peer)".to_string())
    } else {
        write_peer(&dir.join("peer"), &spec, &d, o, &sim.membership, &theta)?;
        super::run_peer("classes_peer.py", &dir.join("peer"), &[])
    };
    drop((family, d));
    let (timeline, rec) = fit_timed(&spec, obs, &theta)?;
    let (process_s, peak, process_ok) = if o.no_process {
        (f64::NAN, None, true)
    } else {
        time_process(&sim.spec, &["--no-analysis"])?
    };
    let figures = Figures {
        generate_s,
        load_s,
        pass_s,
        ll_only_s,
        hessian_s,
        ll_at_truth: first.ll,
        true_shares,
        timeline,
        recovered: rec,
        peer,
        process_s,
        peak,
        process_ok,
    };
    report(o, &figures)?;
    Ok(ExitCode::SUCCESS)
}

/// The sample's mean class shares (prior membership probabilities) at `beta`.
fn mean_shares(family: &dyn crate::model::Family, d: &Design, beta: &[f64]) -> Vec<f64> {
    let Some(p) = family.prior_classes(d, beta) else {
        return Vec::new();
    };
    let c = p.classes.max(1);
    let n = (p.probabilities.len() / c).max(1) as f64;
    let mut out = vec![0.0; c];
    for row in p.probabilities.chunks(c) {
        out.iter_mut().zip(row).for_each(|(a, b)| *a += b / n);
    }
    out
}

/// The whole `estimate::fit`, timed and split by its progress reports (the
/// first report comes once the starts are over), and its recovery of `theta`.
fn fit_timed(
    spec: &crate::spec::Spec,
    obs: Arc<crate::data::Observations>,
    theta: &[f64],
) -> Result<(Timeline, Recovered)> {
    let log: Mutex<Vec<f64>> = Mutex::new(Vec::new());
    let t = Instant::now();
    let record = |_: Step| {
        if let Ok(mut l) = log.lock() {
            l.push(t.elapsed().as_secs_f64());
        }
    };
    let fit = crate::estimate::fit(spec, obs, &record)?;
    let fit_s = t.elapsed().as_secs_f64();
    let steps = log.into_inner().unwrap_or_default();
    let starts = fit.stats.starts.clone();
    let start_seconds = starts
        .as_ref()
        .map(|s| s.seconds.clone())
        .unwrap_or_default();
    let starts_s: f64 = start_seconds.iter().sum();
    let first_report = steps.first().copied().unwrap_or(fit_s);
    let last_report = steps.last().copied().unwrap_or(fit_s);
    let timeline = Timeline {
        fit_s,
        before_starts_s: (first_report - starts_s).max(0.0),
        start_seconds,
        search_s: last_report - first_report,
        finish_s: fit_s - last_report,
        search_passes: fit.stats.passes,
        starts,
        log_likelihood: fit.stats.log_likelihood,
        converged: fit.stats.converged,
    };
    let rows: Vec<(String, f64, f64, f64)> = fit
        .parameters
        .iter()
        .zip(theta)
        .map(|(r, &v)| (r.name.clone(), v, r.estimate, r.std_error))
        .collect();
    let shares = mean_shares(&*fit.family, &fit.design, &fit.beta);
    Ok((timeline, Recovered { rows, shares }))
}

/// Writes the peer's folder: meta.json, x.f64 (S, J, terms) in `TERMS`
/// order, chosen.u32 (S) and w.f64 (N, 1 + membership columns).
fn write_peer(
    dir: &Path,
    spec: &crate::spec::Spec,
    d: &Design,
    o: &ClassesOptions,
    membership: &[[f64; 2]],
    theta: &[f64],
) -> Result<()> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let (j, nt) = (d.alternatives(), TERMS.len());
    // The term of each parameter a feature may name (any class's copy).
    let term: Vec<Option<usize>> = spec
        .parameters
        .iter()
        .map(|p| {
            TERMS.iter().position(|t| {
                p.name
                    .strip_prefix(t)
                    .is_some_and(|r| r.starts_with("_class"))
            })
        })
        .collect();
    let mut x = Vec::with_capacity(d.situations() * j * nt * 8);
    let mut row = vec![0.0; nt];
    for i in 0..d.situations() {
        for a in 0..j {
            row.iter_mut().for_each(|v| *v = 0.0);
            for f in &d.features[a] {
                if let Some(Some(t)) = term.get(f.param) {
                    row[*t] += d.value(i, a, f.value);
                }
            }
            row.iter()
                .for_each(|v| x.extend_from_slice(&v.to_le_bytes()));
        }
    }
    let chosen: Vec<u8> = d.obs.chosen.iter().flat_map(|c| c.to_le_bytes()).collect();
    let w: Vec<u8> = membership
        .iter()
        .flat_map(|z| [1.0, z[0], z[1]])
        .flat_map(|v: f64| v.to_le_bytes())
        .collect();
    let meta = json!({
        "N": o.decision_makers, "T": o.tasks, "J": j, "terms": TERMS, "classes": 3,
        "membership": MEMBERSHIP, "starts": o.starts, "seed": 1,
        "budget_seconds": o.peer_seconds, "truth": theta,
    });
    for (name, bytes) in [
        ("x.f64", x),
        ("chosen.u32", chosen),
        ("w.f64", w),
        ("meta.json", meta.to_string().into_bytes()),
    ] {
        let p = dir.join(name);
        std::fs::write(&p, bytes).map_err(|e| Error::io(&p, e))?;
    }
    Ok(())
}
