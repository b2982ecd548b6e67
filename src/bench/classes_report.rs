//! The figures of `sharecast bench --model classes` (`bench::classes`) and
//! how they are printed: as text, or as one JSON document with `--json`.

use serde::Serialize;
use serde_json::json;

use super::classes::{ClassesOptions, GOAL_SECONDS, MEMBERSHIP};
use super::{mb, median, ms};
use crate::error::Result;

/// Where the whole fit's time went.
#[derive(Clone, Debug, Serialize)]
pub struct Timeline {
    pub fit_s: f64,
    /// From the fit's start to the first start: the pooled logit, the
    /// design, the scales (the fit's first report less the starts' time).
    pub before_starts_s: f64,
    pub start_seconds: Vec<f64>,
    /// The search from the best start (first to last progress report).
    pub search_s: f64,
    /// After the search: covariances, statistics, the reference models.
    pub finish_s: f64,
    /// Passes the fit counted (the search after the starts).
    pub search_passes: usize,
    pub starts: Option<crate::model::Starts>,
    pub log_likelihood: f64,
    pub converged: bool,
}

/// The estimates against the truth: (name, truth, estimate, standard
/// error) per parameter, and the estimated sample class shares.
#[derive(Clone, Debug)]
pub struct Recovered {
    pub rows: Vec<(String, f64, f64, f64)>,
    pub shares: Vec<f64>,
}

impl Recovered {
    fn ratios(&self) -> Vec<f64> {
        self.rows.iter().map(|r| (r.2 - r.1) / r.3).collect()
    }

    /// The largest |estimate - truth| / s.e. and the parameter it belongs to.
    fn worst(&self) -> (f64, &str) {
        self.ratios()
            .iter()
            .zip(&self.rows)
            .map(|(t, r)| (t.abs(), r.0.as_str()))
            .fold(
                (0.0, ""),
                |a, b| if b.0 > a.0 || b.0.is_nan() { b } else { a },
            )
    }

    fn within(&self, k: f64) -> usize {
        self.ratios().iter().filter(|t| t.abs() <= k).count()
    }
}

/// Everything the benchmark measured.
pub struct Figures {
    pub generate_s: f64,
    pub load_s: f64,
    pub pass_s: f64,
    pub ll_only_s: f64,
    pub hessian_s: f64,
    pub ll_at_truth: f64,
    pub true_shares: Vec<f64>,
    pub timeline: Timeline,
    pub recovered: Recovered,
    pub peer: std::result::Result<serde_json::Value, String>,
    pub process_s: f64,
    pub peak: Option<u64>,
    pub process_ok: bool,
}

fn cores() -> usize {
    std::thread::available_parallelism()
        .map(|c| c.get())
        .unwrap_or(1)
}

pub fn report(o: &ClassesOptions, f: &Figures) -> Result<()> {
    if o.json {
        return json_report(o, f);
    }
    let tl = &f.timeline;
    crate::outln!(
        "latent class panel: {} households x {} tasks x 4 delivery options, 3 classes ({} parameters), membership on {}, {} starts; {} cores",
        o.decision_makers,
        o.tasks,
        f.recovered.rows.len(),
        MEMBERSHIP.join(" and "),
        o.starts,
        cores()
    );
    crate::outln!("  data written                {}", ms(f.generate_s));
    crate::outln!("  spec and data loaded        {}", ms(f.load_s));
    crate::outln!(
        "  one pass, ll + gradient     {}   (ll only {}; with the log-likelihood's Hessian {})",
        ms(f.pass_s),
        ms(f.ll_only_s),
        ms(f.hessian_s)
    );
    let goal = if o.decision_makers == 5_000 && o.tasks == 10 && o.starts == 20 {
        format!(
            "   goal {GOAL_SECONDS:.0} s at this size: {}",
            if tl.fit_s <= GOAL_SECONDS {
                "met"
            } else {
                "missed"
            }
        )
    } else {
        String::new()
    };
    crate::outln!("  whole fit (estimate::fit)   {}{goal}", ms(tl.fit_s));
    print_timeline(tl, f.hessian_s)?;
    print_recovery(f)?;
    print_peer(f)?;
    if f.process_s.is_finite() {
        crate::outln!(
            "  `sharecast fit` process     {}   peak memory {}{}",
            ms(f.process_s),
            mb(f.peak),
            if f.process_ok { "" } else { " (failed)" }
        );
    }
    Ok(())
}

fn print_timeline(tl: &Timeline, hessian_s: f64) -> Result<()> {
    let secs = &tl.start_seconds;
    let total: f64 = secs.iter().sum();
    let per = median(secs.clone());
    crate::outln!(
        "    before the starts         {}   (checks, design, pooled logit, scales)",
        ms(tl.before_starts_s)
    );
    crate::outln!(
        "    {:<2} starts                 {}   per start: median {}, fastest {}, slowest {} (median about {:.0} Hessian passes' time)",
        secs.len(),
        ms(total),
        ms(per),
        ms(secs.iter().copied().fold(f64::INFINITY, f64::min)),
        ms(secs.iter().copied().fold(0.0, f64::max)),
        per / hessian_s
    );
    if let Some(s) = &tl.starts {
        crate::outln!(
            "    reached the best          {} of {} (within {:.3} of the best log-likelihood); {} ran off; the search went on from start {}",
            s.reached_best,
            s.tried,
            s.tolerance,
            s.ran_off,
            s.best + 1
        );
    }
    crate::outln!(
        "    search from the best start {}  ({} passes counted)",
        ms(tl.search_s),
        tl.search_passes
    );
    crate::outln!(
        "    after the search          {}   (covariances, statistics)",
        ms(tl.finish_s)
    );
    crate::outln!(
        "    log-likelihood            {:.4}{}",
        tl.log_likelihood,
        if tl.converged { "" } else { " (not converged)" }
    );
    Ok(())
}

fn print_recovery(f: &Figures) -> Result<()> {
    let r = &f.recovered;
    let (worst, at) = r.worst();
    crate::outln!(
        "  recovery: {} of {} parameters within 2 s.e. of the truth, {} within 3; largest |estimate - truth| / s.e. {:.2} ({at})",
        r.within(2.0),
        r.rows.len(),
        r.within(3.0),
        worst
    );
    crate::outln!(
        "    class shares              true {}   estimated {}   (log-likelihood at the truth {:.4})",
        shares(&f.true_shares),
        shares(&r.shares),
        f.ll_at_truth
    );
    crate::outln!(
        "    {:<30} {:>9} {:>10} {:>9} {:>7}",
        "parameter",
        "truth",
        "estimate",
        "s.e.",
        "gap/se"
    );
    for (row, t) in r.rows.iter().zip(r.ratios()) {
        crate::outln!(
            "    {:<30} {:>9.4} {:>10.4} {:>9.4} {:>7.2}",
            row.0,
            row.1,
            row.2,
            row.3,
            t
        );
    }
    Ok(())
}

fn shares(s: &[f64]) -> String {
    let v: Vec<String> = s.iter().map(|x| format!("{x:.3}")).collect();
    v.join(" / ")
}

fn print_peer(f: &Figures) -> Result<()> {
    let p = match &f.peer {
        Ok(p) => p,
        Err(why) => {
            crate::outln!("  numpy peer                  not run: {why}");
            return Ok(());
        }
    };
    let secs: Vec<f64> = p["start_seconds"]
        .as_array()
        .map(|a| a.iter().filter_map(|x| x.as_f64()).collect())
        .unwrap_or_default();
    let per = median(secs.clone());
    let ours = median(f.timeline.start_seconds.clone());
    crate::outln!(
        "  numpy peer                  {} of {} starts in {} (a budget of {:.0} s): per start median {} (EM then BFGS) = {:.0}x sharecast's {} per start",
        secs.len(),
        p["starts_asked"].as_u64().unwrap_or(0),
        ms(secs.iter().sum()),
        p["budget_seconds"].as_f64().unwrap_or(f64::NAN),
        ms(per),
        per / ours,
        ms(ours)
    );
    crate::outln!(
        "    pooled logit {} · one pass (ll, scores, posteriors) {} · best log-likelihood {:.4}, {} of its starts within 0.01 of it · numpy {}, scipy {}",
        ms(p["pooled_seconds"].as_f64().unwrap_or(f64::NAN)),
        ms(p["pass_seconds"].as_f64().unwrap_or(f64::NAN)),
        p["best_log_likelihood"].as_f64().unwrap_or(f64::NAN),
        p["reached_best"].as_u64().unwrap_or(0),
        p["numpy"].as_str().unwrap_or("?"),
        p["scipy"].as_str().unwrap_or("?")
    );
    Ok(())
}

fn json_report(o: &ClassesOptions, f: &Figures) -> Result<()> {
    let r = &f.recovered;
    let tl = &f.timeline;
    let (worst, at) = r.worst();
    let peer_per = f.peer.as_ref().ok().and_then(|p| {
        let s: Vec<f64> = p["start_seconds"]
            .as_array()?
            .iter()
            .filter_map(|x| x.as_f64())
            .collect();
        (!s.is_empty()).then(|| median(s))
    });
    let per = median(tl.start_seconds.clone());
    let rows: Vec<serde_json::Value> = r
        .rows
        .iter()
        .map(|x| json!({"name": x.0, "truth": x.1, "estimate": x.2, "std_error": x.3}))
        .collect();
    let doc = json!({
        "decision_makers": o.decision_makers, "tasks": o.tasks,
        "situations": o.decision_makers * o.tasks, "alternatives": 4, "classes": 3,
        "membership": MEMBERSHIP, "starts": o.starts, "cores": cores(),
        "generate_seconds": f.generate_s, "load_seconds": f.load_s,
        "pass_seconds": f.pass_s, "ll_only_pass_seconds": f.ll_only_s,
        "hessian_pass_seconds": f.hessian_s,
        "fit": tl, "start_median_seconds": per,
        "start_median_hessian_passes": per / f.hessian_s,
        "goal_seconds": GOAL_SECONDS, "goal_met": tl.fit_s <= GOAL_SECONDS,
        "log_likelihood_at_truth": f.ll_at_truth,
        "recovery": {
            "parameters": rows, "worst_ratio": worst, "worst_parameter": at,
            "within_2_se": r.within(2.0), "within_3_se": r.within(3.0),
            "true_shares": f.true_shares, "estimated_shares": r.shares,
        },
        "peer": f.peer.as_ref().ok(), "peer_note": f.peer.as_ref().err(),
        "peer_start_ratio": peer_per.map(|p| p / per),
        "fit_process_seconds": f.process_s, "fit_process_peak_bytes": f.peak,
        "fit_process_ok": f.process_ok,
    });
    crate::outln!("{doc}");
    Ok(())
}
