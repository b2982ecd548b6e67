//! Measuring helpers of the benchmarks: peak memory from /proc, a program run
//! as a separate process with its peak memory polled, the folder the data
//! go in, and how figures are printed.

use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode, Stdio};
use std::time::{Duration, Instant};

use crate::error::{Error, Result};

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
    let spec = spec.to_string_lossy();
    let mut args = vec!["fit", spec.as_ref(), "--json"];
    args.extend_from_slice(extra);
    time_command(&args, None)
}

/// Runs `sharecast ARGS` (in `dir`, when given) as a separate process: wall
/// seconds, its peak resident memory polled from /proc every few
/// milliseconds, and whether it succeeded.
pub(crate) fn time_command(args: &[&str], dir: Option<&Path>) -> Result<(f64, Option<u64>, bool)> {
    let exe = own_path()?;
    let started = Instant::now();
    let mut command = Command::new(exe);
    if let Some(d) = dir {
        command.current_dir(d);
    }
    let mut child = command
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .map_err(|e| Error::Usage(format!("bench: could not start sharecast: {e}")))?;
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
            Err(e) => return Err(Error::Usage(format!("bench: waiting for sharecast: {e}"))),
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

/// Runs the numpy peer `bench/<script>` on `dir` with `args`: the JSON of
/// its last line, or why it could not run.
pub(crate) fn run_peer(
    script: &str,
    dir: &Path,
    args: &[&str],
) -> std::result::Result<serde_json::Value, String> {
    let rel = PathBuf::from("bench").join(script);
    let path = [
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(&rel),
        rel.clone(),
    ]
    .into_iter()
    .find(|p| p.exists())
    .ok_or_else(|| format!("{} not found", rel.display()))?;
    let out = Command::new("python3")
        .arg(&path)
        .arg(dir)
        .args(args)
        .stdin(Stdio::null())
        .output()
        .map_err(|e| format!("python3 did not start: {e}"))?;
    if !out.status.success() {
        let err = String::from_utf8_lossy(&out.stderr);
        return Err(format!(
            "the numpy peer failed: {}",
            err.lines().last().unwrap_or("")
        ));
    }
    let text = String::from_utf8_lossy(&out.stdout);
    serde_json::from_str(text.lines().last().unwrap_or("")).map_err(|e| e.to_string())
}
