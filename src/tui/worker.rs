//! The background worker: fits and the views' own jobs (parameter draws,
//! demand curves, a design's search and rehearsal) run here, one job at a
//! time, and report back as messages over a channel (a view's job may report
//! its progress first, `Msg::Report`); each analysis runs on a thread of its own, so that a long
//! one (many alternatives) holds up no view. A queued view job that a newer
//! one of the same view and model replaces is skipped; a panic inside a job
//! becomes an error message, not a crash.

use std::any::Any;
use std::collections::VecDeque;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::sync::mpsc::{self, Receiver, Sender};
use std::sync::Arc;

use super::app::Msg;
use crate::data::{Dataset, Extra};
use crate::error::Result;
use crate::estimate::{Fit, Progress, Step};
use crate::progress::Tick;
use crate::report::walk::Walk;
use crate::spec::Spec;

/// With many alternatives the workbench's analysis covers the 30 with the
/// largest predicted shares (its matrices show the top of them; the filter
/// picks among them). The command line's default is 10 (`fit --top`).
pub const WORKBENCH_TOP: usize = 30;

/// A fitted spec with its data: cheap to clone, shared by the state and the worker.
#[derive(Clone, Debug)]
pub struct Model {
    pub path: PathBuf,
    pub spec: Arc<Spec>,
    pub ds: Arc<Dataset>,
    pub fit: Arc<Fit>,
    /// How the fit was obtained when `--load` was given.
    pub note: Option<String>,
}

/// A result the worker is still computing.
#[derive(Clone, Debug)]
pub enum Pending<T> {
    Waiting,
    Ready(Box<T>),
    Failed(String),
}

impl<T> Pending<T> {
    pub fn ready(&self) -> Option<&T> {
        match self {
            Pending::Ready(t) => Some(t),
            _ => None,
        }
    }
}

/// Parameter draws behind the what-if uncertainty band.
pub const DRAWS: usize = 500;
/// Seed of those draws (the `simulate` command's default).
pub const SEED: u64 = 7;

/// Progress of a view's job as the library reports it: a phase's ticks
/// (a design's search) or a fit's steps (a rehearsal's fit).
#[derive(Clone, Copy, Debug)]
pub enum Report {
    Tick(Tick),
    Step(Step),
}

/// Where a view's job sends its progress (`Msg::Report`, tagged like its result).
pub type Reporter<'a> = &'a (dyn Fn(Report) + Sync);

/// A view's work for the worker: its progress and its result go back to the
/// view that asked.
pub type Work = Box<dyn FnOnce(Reporter) -> Result<Box<dyn Any + Send>> + Send>;

pub enum Job {
    /// Load and fit each spec in turn (restoring from `load` when its fingerprint matches).
    Open {
        paths: Vec<PathBuf>,
        load: Option<PathBuf>,
    },
    Analyse {
        index: usize,
        model: Model,
    },
    /// A view's job for model `index`, tagged with the view's generation.
    Part {
        view: &'static str,
        index: usize,
        generation: u64,
        work: Work,
    },
}

impl std::fmt::Debug for Job {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Job::Open { paths, .. } => write!(f, "Open({paths:?})"),
            Job::Analyse { index, .. } => write!(f, "Analyse({index})"),
            Job::Part {
                view,
                index,
                generation,
                ..
            } => write!(f, "Part({view}, {index}, {generation})"),
        }
    }
}

impl Job {
    /// A view's job is replaced by a newer one of the same view for the same model.
    fn supersedes(&self, older: &Job) -> bool {
        match (self, older) {
            (
                Job::Part {
                    view: a, index: i, ..
                },
                Job::Part {
                    view: b, index: j, ..
                },
            ) => a == b && i == j,
            _ => false,
        }
    }
}

/// Runs `f`, turning an error or a panic into a message.
fn guarded<T>(f: impl FnOnce() -> Result<T>) -> std::result::Result<T, String> {
    match catch_unwind(AssertUnwindSafe(f)) {
        Ok(Ok(t)) => Ok(t),
        Ok(Err(e)) => Err(e.to_string()),
        Err(p) => {
            let what = p
                .downcast_ref::<&str>()
                .map(|s| s.to_string())
                .or_else(|| p.downcast_ref::<String>().cloned())
                .unwrap_or_else(|| "unknown".into());
            Err(format!("internal error (please report it): {what}"))
        }
    }
}

/// Loads a spec and its data and fits it, or restores a saved fit whose fingerprint matches.
pub fn open_one(path: &Path, load: Option<&Path>, progress: Progress) -> Result<Model> {
    let (spec, ds) = crate::workspace::open(path, &Extra::default())?;
    let obs = Arc::new(ds.obs.clone());
    let (fit, note) = crate::workspace::fit_or_restore(&spec, obs, load, progress)?;
    Ok(Model {
        path: path.to_path_buf(),
        spec: Arc::new(spec),
        ds: Arc::new(ds),
        fit: Arc::new(fit),
        note,
    })
}

/// Runs one job, sending its messages (progress first, the result last).
pub fn execute(job: Job, send: &(dyn Fn(Msg) + Sync)) {
    match job {
        Job::Open { paths, load } => {
            for (index, path) in paths.iter().enumerate() {
                send(Msg::Loading {
                    index,
                    path: path.clone(),
                });
                let progress = |step: Step| send(Msg::Progress { index, step });
                match guarded(|| open_one(path, load.as_deref(), &progress)) {
                    Ok(model) => send(Msg::Opened { index, model }),
                    Err(e) => {
                        send(Msg::Failed(e));
                        return;
                    }
                }
            }
        }
        Job::Analyse { index, model } => {
            let ticks = |tick: crate::progress::Tick| send(Msg::Ticked { index, tick });
            let result = guarded(|| {
                let a = crate::analysis::analyse_with(
                    &model.spec,
                    &model.fit,
                    &model.ds,
                    &crate::analysis::Options {
                        top: Some(WORKBENCH_TOP),
                        ..Default::default()
                    },
                    &ticks,
                )?;
                // Walked here, not on the screen's thread: with many
                // alternatives the matrices are large.
                let walk = Walk::new(&model.spec, &model.fit, &a);
                Ok((Box::new(a), Box::new(walk)))
            });
            send(Msg::Analysed { index, result });
        }
        Job::Part {
            view,
            index,
            generation,
            work,
        } => {
            let report = |report: Report| {
                send(Msg::Report {
                    view,
                    index,
                    generation,
                    report,
                })
            };
            let result = guarded(|| work(&report));
            send(Msg::Done {
                view,
                index,
                generation,
                result,
            });
        }
    }
}

fn serve(jobs: Receiver<Job>, out: Sender<Msg>) {
    let sink = out.clone();
    let send = move |m: Msg| {
        let _ = sink.send(m);
    };
    let mut queue: VecDeque<Job> = VecDeque::new();
    loop {
        if queue.is_empty() {
            match jobs.recv() {
                Ok(j) => queue.push_back(j),
                Err(_) => return,
            }
        }
        queue.extend(jobs.try_iter());
        let Some(job) = queue.pop_front() else {
            continue;
        };
        if queue.iter().any(|newer| newer.supersedes(&job)) {
            continue;
        }
        if let Job::Analyse { index, .. } = job {
            // The analysis can take long (many alternatives): on a thread of
            // its own, it holds up no band or curve.
            let tx = out.clone();
            let spawned = std::thread::Builder::new()
                .name("sharecast-analysis".into())
                .spawn(move || {
                    execute(job, &move |m: Msg| {
                        let _ = tx.send(m);
                    })
                });
            if spawned.is_err() {
                let _ = out.send(Msg::Analysed {
                    index,
                    result: Err("the analysis could not start: no thread left".into()),
                });
            }
            continue;
        }
        execute(job, &send);
    }
}

/// Starts the worker thread; send it jobs on the returned channel.
pub fn spawn(out: Sender<Msg>) -> std::io::Result<Sender<Job>> {
    let (tx, rx) = mpsc::channel();
    std::thread::Builder::new()
        .name("sharecast-worker".into())
        .spawn(move || serve(rx, out))?;
    Ok(tx)
}
