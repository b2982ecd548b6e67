//! `sharecast bench --model design`: the survey design search on the
//! benchmark's case (3 alternatives, 5 attributes, 24 tasks in 3 blocks,
//! normal priors averaged over 1,000 draws): the whole search's time, the
//! D-error reached against time as the starts finish, and the random
//! level-balanced starts it began from.

use std::path::Path;
use std::process::ExitCode;
use std::time::Instant;

use super::in_folder;
use crate::error::Result;

/// What the benchmark runs.
#[derive(Clone, Debug)]
pub struct DesignOptions {
    pub draws: usize,
    pub starts: usize,
    pub keep: Option<std::path::PathBuf>,
    pub json: bool,
}

/// The benchmark's design file: invented attributes of a three-way choice.
pub fn design_text(draws: usize, starts: usize) -> String {
    format!(
        r#"title = "Benchmark: three alternatives, five attributes"
[design]
alternatives = ["A", "B", "C"]
tasks = 24
blocks = 3
seed = 11
draws = {draws}
starts = {starts}

[[attribute]]
name = "fare"
levels = [1, 2, 3, 4]
prior = {{ mean = -0.4, sd = 0.2 }}

[[attribute]]
name = "minutes"
levels = [10, 20, 30]
prior = {{ mean = -0.05, sd = 0.02 }}

[[attribute]]
name = "wifi"
levels = [0, 1]
prior = {{ mean = 0.5, sd = 0.3 }}

[[attribute]]
name = "legroom"
levels = [5, 10, 15, 20]
prior = {{ mean = 0.03, sd = 0.01 }}

[[attribute]]
name = "changes"
levels = [0, 1, 2]
prior = {{ mean = -0.3, sd = 0.2 }}
"#
    )
}

pub fn run(o: DesignOptions) -> Result<ExitCode> {
    in_folder(o.keep.as_deref(), "design", |dir| measure(dir, &o))
}

fn measure(dir: &Path, o: &DesignOptions) -> Result<ExitCode> {
    std::fs::create_dir_all(dir).map_err(|e| crate::error::Error::io(dir, e))?;
    let path = dir.join("design_bench.toml");
    crate::data::write::text(&path, true, &design_text(o.draws, o.starts))?;
    let plan = crate::experiment::read(&path)?;
    let clock = Instant::now();
    let outcome = crate::experiment::make(&plan, crate::progress::QUIET)?;
    let seconds = clock.elapsed().as_secs_f64();
    let s = &outcome.search;
    // The best D-error reached by each time a start finished.
    let mut order: Vec<usize> = (0..s.starts).collect();
    order.sort_by(|a, b| s.start_seconds[*a].total_cmp(&s.start_seconds[*b]));
    let mut best = f64::INFINITY;
    let curve: Vec<(f64, f64)> = order
        .iter()
        .map(|&i| {
            best = best.min(s.reached_d_errors[i]);
            (s.start_seconds[i], best)
        })
        .collect();
    let random = super::median(s.start_d_errors.clone());
    if o.json {
        let v = serde_json::json!({
            "draws": o.draws, "starts": o.starts, "seconds": seconds,
            "d_error": outcome.d_error, "random_start_median": random,
            "curve": curve.iter().map(|(t, d)| serde_json::json!({"seconds": t, "best_d_error": d})).collect::<Vec<_>>(),
            "swaps_tried": s.swaps_tried,
        });
        crate::outln!("{}", serde_json::to_string_pretty(&v).unwrap_or_default());
        return Ok(ExitCode::SUCCESS);
    }
    crate::outln!(
        "survey design: 3 alternatives, 5 attributes, 24 tasks in 3 blocks, {} prior draws, {} starts",
        o.draws,
        o.starts
    );
    crate::outln!(
        "  whole search {seconds:.1} s ({} swaps tried); Bayesian D-error {:.5} (random level-balanced starts: median {random:.5})",
        s.swaps_tried,
        outcome.d_error
    );
    for (n, (t, d)) in curve.iter().enumerate() {
        crate::outln!(
            "  after {:>5.1} s  {} start(s) done   best D-error {d:.5}",
            t,
            n + 1
        );
    }
    Ok(ExitCode::SUCCESS)
}
