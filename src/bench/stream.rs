//! `sharecast bench --model stream`: a forecast over a population file larger
//! than the process holds. Writes the benchmark's full logit model (a sample
//! of `ESTIMATION` situations to fit on), a Parquet population of N situations
//! of the same columns (written a block at a time), and a scenario; then runs
//! `sharecast simulate SPEC --scenario S --data POPULATION --by age_band
//! --market N` as a separate process (under `/usr/bin/time -v` when it is
//! there, else polled from /proc) for its wall time, processor time and peak
//! memory, without bands and with a few band draws; and, in this process,
//! times reading the same columns in the same chunks with polars alone.

use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode, Stdio};
use std::time::{Duration, Instant};

use polars::prelude::*;
use serde_json::json;

use super::{draw, mb, own_path, pick, spec_text, status_bytes, Model, AGE, ALTS, ASC, INCOME};
use crate::data::write::{ParquetAppender, Values};
use crate::error::{Error, Result};
use crate::rng::Rng;

/// Situations of the estimation sample the model is fitted on.
pub const ESTIMATION: usize = 200_000;
/// Rows of the population generated (and written) at a time.
const BLOCK: usize = 1_000_000;

/// What the stream benchmark runs.
#[derive(Clone, Debug)]
pub struct StreamOptions {
    pub situations: usize,
    pub chunk_rows: usize,
    pub band_draws: usize,
    pub keep: Option<PathBuf>,
    pub write_only: bool,
    pub json: bool,
}

/// One run of a process: wall seconds, processor seconds (user + system),
/// peak resident bytes, success, and how the peak was measured.
struct Timed {
    wall: f64,
    cpu: Option<f64>,
    peak: Option<u64>,
    ok: bool,
    how: &'static str,
    stderr: String,
}

/// The population's columns for rows `from..from + n` (the bench's full model).
fn block(rng: &mut Rng, from: usize, n: usize) -> Vec<(String, Values)> {
    let attrs = Model::Full.attributes();
    let j = ALTS.len();
    let mut id = Vec::with_capacity(n);
    let mut choice = Vec::with_capacity(n);
    let mut income = Vec::with_capacity(n);
    let mut age = Vec::with_capacity(n);
    let mut age_band = Vec::with_capacity(n);
    let mut x: Vec<Vec<f64>> = vec![Vec::with_capacity(n); attrs.len() * j];
    let mut v = [0.0; 5];
    for i in 0..n {
        let (inc, _) = draw(rng, 10.0, 120.0, 1);
        let a = (18 + rng.below(63)) as f64;
        v.iter_mut().for_each(|x| *x = 0.0);
        for (k, at) in attrs.iter().enumerate() {
            for (l, vl) in v.iter_mut().enumerate() {
                let shift = at.shift * l as f64;
                let (value, _) = draw(rng, at.low + shift, at.high + shift, at.decimals);
                x[k * j + l].push(value);
                *vl += at.beta * value;
            }
        }
        for l in 1..j {
            v[l] += ASC[l - 1] + INCOME[l - 1] * inc + AGE[l - 1] * a;
        }
        id.push((from + i + 1) as i64);
        choice.push(pick(rng, &v, 1.0, 0..j) as i64 + 1);
        income.push(inc);
        age.push(a);
        age_band.push((a as i64 / 10) * 10);
    }
    let mut cols = vec![
        ("id".to_string(), Values::Int(id)),
        ("choice".to_string(), Values::Int(choice)),
        ("income".to_string(), Values::Num(income)),
        ("age".to_string(), Values::Num(age)),
        ("age_band".to_string(), Values::Int(age_band)),
    ];
    for (k, at) in attrs.iter().enumerate() {
        for (l, alt) in ALTS.iter().enumerate() {
            cols.push((
                format!("{}_{alt}", at.name),
                Values::Num(std::mem::take(&mut x[k * j + l])),
            ));
        }
    }
    cols
}

/// Writes the population, `BLOCK` rows at a time (one block held at once).
fn write_population(path: &Path, n: usize) -> Result<()> {
    let mut rng = Rng::new(super::SEED + 1);
    let mut file = std::fs::File::create(path).map_err(|e| Error::io(path, e))?;
    let mut writer: Option<ParquetAppender> = None;
    let mut from = 0;
    while from < n {
        let len = BLOCK.min(n - from);
        let cols = block(&mut rng, from, len);
        if writer.is_none() {
            writer = Some(ParquetAppender::new(path, &file, &cols)?);
        }
        if let Some(w) = writer.as_mut() {
            w.append(path, &cols)?;
        }
        from += len;
    }
    if let Some(w) = writer {
        w.finish(path)?;
    }
    file.flush().map_err(|e| Error::io(path, e))
}

const SCENARIO: &str = "# Written by `sharecast bench --model stream`: a3 10% dearer.\nname = \"a3 cost +10%\"\nprice = \"cost\"\n\n[[change]]\nattribute = \"cost\"\nalternative = \"a3\"\nmultiply = 1.10\n";

/// Runs the sharecast binary with `args`, measuring it.
fn timed(args: &[String]) -> Result<Timed> {
    let exe = own_path()?;
    let with_time = Path::new("/usr/bin/time").exists();
    let mut cmd = if with_time {
        let mut c = Command::new("/usr/bin/time");
        c.arg("-v").arg(&exe);
        c
    } else {
        Command::new(&exe)
    };
    let started = Instant::now();
    let mut child = cmd
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .map_err(|e| Error::Usage(format!("bench: could not start `sharecast simulate`: {e}")))?;
    let status_path = format!("/proc/{}/status", child.id());
    let mut polled = None;
    let mut pipe = child.stderr.take();
    let reader = std::thread::spawn(move || {
        let mut s = String::new();
        if let Some(p) = pipe.as_mut() {
            let _ = std::io::Read::read_to_string(p, &mut s);
        }
        s
    });
    let status = loop {
        if !with_time {
            if let Ok(s) = std::fs::read_to_string(&status_path) {
                if let Some(b) = status_bytes(&s, "VmHWM") {
                    polled = Some(polled.map_or(b, |p: u64| p.max(b)));
                }
            }
        }
        match child.try_wait() {
            Ok(Some(st)) => break st,
            Ok(None) => std::thread::sleep(Duration::from_millis(5)),
            Err(e) => return Err(Error::Usage(format!("bench: waiting for simulate: {e}"))),
        }
    };
    let wall = started.elapsed().as_secs_f64();
    let stderr = reader.join().unwrap_or_default();
    let field = |name: &str| -> Option<f64> {
        stderr
            .lines()
            .find_map(|l| l.trim().strip_prefix(name))
            .and_then(|rest| rest.trim().parse::<f64>().ok())
    };
    let (cpu, peak, how) = if with_time {
        let cpu = field("User time (seconds):")
            .zip(field("System time (seconds):"))
            .map(|(u, s)| u + s);
        let peak = field("Maximum resident set size (kbytes):").map(|k| (k * 1024.0) as u64);
        (cpu, peak, "/usr/bin/time -v")
    } else {
        (None, polled, "VmHWM polled from /proc")
    };
    Ok(Timed {
        wall,
        cpu,
        peak,
        ok: status.success(),
        how,
        stderr,
    })
}

/// Reads the columns the forecast reads, in the same chunks, with polars
/// alone (each chunk dropped once read): seconds.
fn polars_alone(path: &Path, n: usize, chunk: usize) -> Result<f64> {
    let mut cols = vec!["choice".to_string(), "income".into(), "age".into()];
    cols.push("age_band".into());
    for at in Model::Full.attributes() {
        for alt in ALTS {
            cols.push(format!("{}_{alt}", at.name));
        }
    }
    let started = Instant::now();
    let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let meta = ParquetReader::new(file)
        .get_metadata()
        .map_err(|e| Error::data(path, e.to_string()))?
        .clone();
    let mut from = 0;
    let mut rows = 0;
    while from < n {
        let len = chunk.min(n - from);
        let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
        let mut reader = ParquetReader::new(file);
        reader.set_metadata(meta.clone());
        let df = reader
            .read_parallel(ParallelStrategy::RowGroups)
            .with_columns(Some(cols.clone()))
            .with_slice(Some((from, len)))
            .finish()
            .map_err(|e| Error::data(path, e.to_string()))?;
        rows += df.height();
        from += len;
    }
    if rows != n {
        return Err(Error::data(path, format!("read {rows} rows of {n}")));
    }
    Ok(started.elapsed().as_secs_f64())
}

pub fn run(o: StreamOptions) -> Result<ExitCode> {
    let dir = match &o.keep {
        Some(d) => d.clone(),
        None => std::env::temp_dir().join(format!("sharecast-bench-stream-{}", std::process::id())),
    };
    std::fs::create_dir_all(&dir).map_err(|e| Error::io(&dir, e))?;
    let result = run_in(&o, &dir);
    if o.keep.is_none() {
        let _ = std::fs::remove_dir_all(&dir);
    }
    result
}

fn run_in(o: &StreamOptions, dir: &Path) -> Result<ExitCode> {
    let spec = dir.join("bench.toml");
    let population = dir.join("population.parquet");
    let scenario = dir.join("scenario.toml");
    let t = Instant::now();
    super::write_data(&dir.join("bench.csv"), Model::Full, ESTIMATION)?;
    std::fs::write(&spec, spec_text(Model::Full, "bench.csv")).map_err(|e| Error::io(&spec, e))?;
    std::fs::write(&scenario, SCENARIO).map_err(|e| Error::io(&scenario, e))?;
    // The estimation sample needs the segment column too.
    add_age_band(&dir.join("bench.csv"))?;
    write_population(&population, o.situations)?;
    let write_s = t.elapsed().as_secs_f64();
    let size = std::fs::metadata(&population).map(|m| m.len()).unwrap_or(0);
    if o.write_only {
        crate::outln!(
            "wrote {}, {} and {} ({} situations, {:.0} MB)",
            spec.display(),
            population.display(),
            scenario.display(),
            o.situations,
            size as f64 / 1e6
        );
        return Ok(ExitCode::SUCCESS);
    }
    let args = |draws: usize| -> Vec<String> {
        [
            "simulate",
            &spec.display().to_string(),
            "--scenario",
            &scenario.display().to_string(),
            "--data",
            &population.display().to_string(),
            "--chunk-rows",
            &o.chunk_rows.to_string(),
            "--by",
            "age_band",
            "--market",
            "1000000",
            "--draws",
            &draws.to_string(),
        ]
        .iter()
        .map(|s| s.to_string())
        .collect()
    };
    let point = timed(&args(0))?;
    if !point.ok {
        return Err(Error::Usage(format!(
            "bench: `sharecast simulate` failed: {}",
            point.stderr.trim()
        )));
    }
    let bands = if o.band_draws > 0 {
        Some(timed(&args(o.band_draws))?)
    } else {
        None
    };
    let read = polars_alone(&population, o.situations, o.chunk_rows)?;
    report(o, size, write_s, &point, bands.as_ref(), read)
}

/// Prints (or writes as JSON) the benchmark's figures.
fn report(
    o: &StreamOptions,
    size: u64,
    write_s: f64,
    point: &Timed,
    bands: Option<&Timed>,
    read: f64,
) -> Result<ExitCode> {
    let cores = std::thread::available_parallelism().map_or(1, |c| c.get());
    let n = o.situations as f64;
    let per_core = point.cpu.map(|c| n / c);
    let load = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
    if o.json {
        let v = json!({
            "situations": o.situations,
            "chunk_rows": o.chunk_rows,
            "cores": cores,
            "population_bytes": size,
            "write_seconds": write_s,
            "simulate_seconds": point.wall,
            "simulate_cpu_seconds": point.cpu,
            "simulate_peak_bytes": point.peak,
            "situations_per_second": n / point.wall,
            "situations_per_cpu_second": per_core,
            "polars_read_seconds": read,
            "simulate_over_read": point.wall / read,
            "band_draws": o.band_draws,
            "bands_seconds": bands.map(|b| b.wall),
            "bands_peak_bytes": bands.and_then(|b| b.peak),
            "measured_with": point.how,
            "load_average": load.split_whitespace().take(3).collect::<Vec<_>>().join(" "),
        });
        crate::outln!("{}", serde_json::to_string_pretty(&v).unwrap_or_default());
        return Ok(ExitCode::SUCCESS);
    }
    crate::outln!(
        "sharecast bench --model stream: a population of {} situations x 5 alternatives (Parquet, {:.0} MB), chunks of {} rows, {cores} cores",
        o.situations,
        size as f64 / 1e6,
        o.chunk_rows
    );
    crate::outln!("  write the sample and the population   {:.1} s", write_s);
    crate::outln!(
        "  `sharecast simulate --data` (no bands) {:.1} s wall, {} processor, peak {} ({})",
        point.wall,
        point.cpu.map_or("n/a".into(), |c| format!("{c:.1} s")),
        mb(point.peak),
        point.how
    );
    crate::outln!(
        "  throughput                            {:.0} situations/s, {} situations per processor-second",
        n / point.wall,
        per_core.map_or("n/a".into(), |p| format!("{p:.0}"))
    );
    crate::outln!(
        "  the same columns read by polars alone  {:.1} s  (simulate / read {:.2}x)",
        read,
        point.wall / read
    );
    if let Some(b) = bands {
        crate::outln!(
            "  with {} band draws                    {:.1} s wall, peak {} ({:.1} s per draw beyond the point pass)",
            o.band_draws,
            b.wall,
            mb(b.peak),
            (b.wall - point.wall) / o.band_draws as f64
        );
    }
    crate::outln!("  load average at the end               {}", load.trim());
    Ok(ExitCode::SUCCESS)
}

/// Adds the `age_band` column (age rounded down to ten years) to the
/// estimation sample's CSV, which `simulate --by` also reads.
fn add_age_band(path: &Path) -> Result<()> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
    let mut out = String::with_capacity(text.len() + text.len() / 10);
    let mut age_at = None;
    for (k, line) in text.lines().enumerate() {
        out.push_str(line);
        if k == 0 {
            age_at = line.split(',').position(|c| c == "age");
            out.push_str(",age_band\n");
            continue;
        }
        let age: f64 = age_at
            .and_then(|a| line.split(',').nth(a))
            .and_then(|v| v.parse().ok())
            .unwrap_or(0.0);
        out.push_str(&format!(",{}\n", (age as i64 / 10) * 10));
    }
    std::fs::write(path, out).map_err(|e| Error::io(path, e))
}
