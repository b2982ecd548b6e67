//! `sharecast bench --model destinations`: destination choice over a table
//! of zones and a table of pairs (invented data from a known logit, fixed
//! seed): the whole `sharecast fit --no-analysis` on sampled sets as a
//! separate process with its peak memory, and a forecast over the full sets
//! of every trip (situations x zones utilities) streamed in chunks by
//! `sharecast simulate --data`, with its time per situation.

use std::path::Path;
use std::process::ExitCode;
use std::time::Instant;

use super::{in_folder, mb, time_command};
use crate::data::write::{table, Values};
use crate::error::{Error, Result};
use crate::rng::Rng;

/// The true values: per minute of time, the size term of work trips, the mix.
pub const TRUTH: [(&str, f64); 3] = [("time", -0.06), ("jobs_work", 0.9), ("mix", 0.5)];

/// What the benchmark runs.
#[derive(Clone, Debug)]
pub struct DestinationOptions {
    pub situations: usize,
    pub zones: usize,
    /// Alternatives drawn per trip besides the chosen one.
    pub sampled: usize,
    pub keep: Option<std::path::PathBuf>,
    pub write_only: bool,
    pub json: bool,
    /// Rows of the population read at a time by the forecast.
    pub chunk_rows: usize,
}

/// Zones on a square: coordinates, log jobs, mix.
fn zones(n: usize, rng: &mut Rng) -> (Vec<(f64, f64)>, Vec<f64>, Vec<f64>) {
    let side = 30.0;
    let xy: Vec<(f64, f64)> = (0..n)
        .map(|_| (rng.uniform() * side, rng.uniform() * side))
        .collect();
    let jobs: Vec<f64> = xy
        .iter()
        .map(|(x, y)| {
            let d = ((x - 15.0).powi(2) + (y - 15.0).powi(2)).sqrt();
            (1.0 + 2000.0 * (-d / 6.0).exp() * (0.5 + rng.uniform())).ln()
        })
        .collect();
    let mix: Vec<f64> = (0..n).map(|_| rng.uniform()).collect();
    (xy, jobs, mix)
}

fn minutes(a: (f64, f64), b: (f64, f64)) -> f64 {
    3.0 + 2.2 * ((a.0 - b.0).powi(2) + (a.1 - b.1).powi(2)).sqrt()
}

/// Writes zones.csv, pairs.parquet, trips.parquet (the population and the
/// estimation data), sample.csv (its first 2,000 trips, the forecast's fit),
/// the two specs and a scenario.
fn write(dir: &Path, o: &DestinationOptions) -> Result<()> {
    let mut rng = Rng::new(super::SEED ^ 0xDE57);
    let n = o.zones;
    let (xy, jobs, mix) = zones(n, &mut rng);
    let ids: Vec<String> = (0..n).map(|j| format!("z{j:04}")).collect();
    table(
        &dir.join("zones.csv"),
        true,
        &[
            ("zone".into(), Values::Text(ids.clone())),
            ("log_jobs".into(), Values::Num(jobs.clone())),
            (
                "jobs".into(),
                Values::Num(jobs.iter().map(|l| l.exp()).collect()),
            ),
            ("mix".into(), Values::Num(mix.clone())),
        ],
    )?;
    let time: Vec<f64> = (0..n * n).map(|c| minutes(xy[c / n], xy[c % n])).collect();
    table(
        &dir.join("pairs.parquet"),
        true,
        &[
            (
                "origin".into(),
                Values::Text((0..n * n).map(|c| ids[c / n].clone()).collect()),
            ),
            (
                "zone".into(),
                Values::Text((0..n * n).map(|c| ids[c % n].clone()).collect()),
            ),
            ("time".into(), Values::Num(time.clone())),
        ],
    )?;
    let (origin, work, dest) = trips(o.situations, (&ids, &time), (&jobs, &mix), &mut rng);
    let head = o.situations.min(2_000);
    let cols = |k: usize| -> Vec<(String, Values)> {
        vec![
            ("origin".into(), Values::Text(origin[..k].to_vec())),
            ("work".into(), Values::Num(work[..k].to_vec())),
            ("dest".into(), Values::Text(dest[..k].to_vec())),
        ]
    };
    table(&dir.join("sample.csv"), true, &cols(head))?;
    table(&dir.join("trips.parquet"), true, &cols(o.situations))?;
    let spec = |file: &str, sampling: &str| {
        format!("[data]\nfile = \"{file}\"\nlayout = \"tables\"\nchoice = \"dest\"\n[data.alternatives]\nfile = \"zones.csv\"\nid = \"zone\"\n[data.pairs]\nfile = \"pairs.parquet\"\nfrom = \"origin\"\nid = \"zone\"\n[model]\nconstants = false\n[[attribute]]\nname = \"time\"\ncolumn = \"time\"\n[[attribute]]\nname = \"jobs_work\"\ncolumn = \"log_jobs\"\ntimes = \"work\"\n[[attribute]]\nname = \"mix\"\ncolumn = \"mix\"\n{sampling}")
    };
    let sampling = format!(
        "[sampling]\nalternatives = {}\nscheme = \"weighted\"\nweight = \"jobs\"\nseed = 3\n",
        o.sampled
    );
    let io = |p: &Path, e: std::io::Error| Error::io(p, e);
    let w = |name: &str, text: String| {
        std::fs::write(dir.join(name), text).map_err(|e| io(&dir.join(name), e))
    };
    w("destinations.toml", spec("trips.parquet", &sampling))?;
    w("forecast.toml", spec("sample.csv", ""))?;
    w("scenario.toml", "name = \"Ten per cent slower everywhere\"\n[[change]]\nattribute = \"time\"\nwhere = \"mix >= 0\"\nmultiply = 1.1\n".into())?;
    Ok(())
}

fn timed(args: &[&str], dir: &Path) -> Result<(f64, Option<u64>, bool)> {
    time_command(args, Some(dir))
}

pub fn run(o: DestinationOptions) -> Result<ExitCode> {
    in_folder(o.keep.as_deref(), "destinations", |dir| {
        let t = Instant::now();
        write(dir, &o)?;
        let written = t.elapsed().as_secs_f64();
        if o.write_only {
            crate::outln!(
                "wrote the destination benchmark's files into {} ({written:.1} s)",
                dir.display()
            );
            return Ok(ExitCode::SUCCESS);
        }
        let fit = timed(
            &["fit", "destinations.toml", "--no-analysis", "--json"],
            dir,
        )?;
        let rows = o.chunk_rows.to_string();
        let forecast = timed(
            &[
                "simulate",
                "forecast.toml",
                "--scenario",
                "scenario.toml",
                "--data",
                "trips.parquet",
                "--draws",
                "0",
                "--chunk-rows",
                &rows,
                "--json",
            ],
            dir,
        )?;
        let per = forecast.0 / o.situations.max(1) as f64;
        if o.json {
            let v = serde_json::json!({
                "situations": o.situations, "zones": o.zones, "sampled": o.sampled,
                "write_seconds": written,
                "fit": {"seconds": fit.0, "peak_bytes": fit.1, "ok": fit.2},
                "forecast": {"seconds": forecast.0, "peak_bytes": forecast.1, "ok": forecast.2,
                    "utilities": o.situations as f64 * o.zones as f64, "seconds_per_situation": per, "chunk_rows": o.chunk_rows},
            });
            crate::outln!("{}", serde_json::to_string_pretty(&v).unwrap_or_default());
        } else {
            crate::outln!("destination choice: {} trips over {} zones (pairs {} x {}), {} sampled per trip; files written in {written:.1} s", o.situations, o.zones, o.zones, o.zones, o.sampled);
            crate::outln!(
                "  fit --no-analysis (sampled sets, a process)   {:.1} s   peak {}{}",
                fit.0,
                mb(fit.1),
                if fit.2 { "" } else { "   FAILED" }
            );
            crate::outln!("  forecast over the full sets (simulate --data, chunks of {} rows)   {:.1} s   peak {}   {:.2} µs per trip{}", o.chunk_rows, forecast.0, mb(forecast.1), per * 1e6, if forecast.2 { "" } else { "   FAILED" });
        }
        Ok(ExitCode::SUCCESS)
    })
}

/// Trips drawn from the true logit: origin, work (0/1) and the chosen zone.
fn trips(
    count: usize,
    (ids, time): (&[String], &[f64]),
    (jobs, mix): (&[f64], &[f64]),
    rng: &mut Rng,
) -> (Vec<String>, Vec<f64>, Vec<String>) {
    let n = ids.len();
    // Exact logit draws: each (origin, work) has one probability vector.
    let cdf: Vec<Vec<f64>> = (0..2 * n)
        .map(|ow| {
            let (o, work) = (ow / 2, (ow % 2) as f64);
            let v: Vec<f64> = (0..n)
                .map(|j| {
                    TRUTH[0].1 * time[o * n + j] + TRUTH[1].1 * jobs[j] * work + TRUTH[2].1 * mix[j]
                })
                .collect();
            let m = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let mut c = 0.0;
            v.iter()
                .map(|x| {
                    c += (x - m).exp();
                    c
                })
                .collect()
        })
        .collect();
    let (mut origin, mut work, mut dest) = (Vec::new(), Vec::new(), Vec::new());
    for _ in 0..count {
        let (or, w) = (rng.below(n), usize::from(rng.uniform() < 0.5));
        let c = &cdf[2 * or + w];
        let u = rng.uniform() * c[n - 1];
        let j = c.partition_point(|&x| x <= u).min(n - 1);
        origin.push(ids[or].clone());
        work.push(w as f64);
        dest.push(ids[j].clone());
    }
    (origin, work, dest)
}
