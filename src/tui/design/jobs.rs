//! The design workbench's work for the background worker: the search for
//! the design (its progress as the library's ticks) and a rehearsal (its
//! answers and spec written into a fresh folder of the system's temporary
//! directory, never over a file that exists; the fit's progress as steps).

use std::any::Any;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use crate::error::{Error, Result};
use crate::experiment::{self, rehearse, Outcome, Plan};
use crate::tui::worker::{Job, Report};

/// The name the search's jobs carry.
pub const SEARCH: &str = "design search";
/// The name the rehearsal's jobs carry.
pub const REHEARSAL: &str = "design rehearsal";

pub use crate::experiment::rehearse::MAX_RESPONDENTS;

/// The file names of a rehearsal inside its folder.
pub const ANSWERS: &str = "answers.csv";
pub const SPEC: &str = "spec.toml";

/// The search for the design of `plan`.
pub fn search(plan: Arc<Plan>, generation: u64) -> Job {
    Job::Part {
        view: SEARCH,
        index: 0,
        generation,
        work: Box::new(move |report| {
            let outcome = experiment::make(&plan, &|t| report(Report::Tick(t)))?;
            Ok(Box::new(outcome) as Box<dyn Any + Send>)
        }),
    }
}

/// A rehearsal of `outcome` with `respondents` simulated respondents.
pub fn rehearsal(plan: Arc<Plan>, outcome: Outcome, respondents: usize, generation: u64) -> Job {
    Job::Part {
        view: REHEARSAL,
        index: 0,
        generation,
        work: Box::new(move |report| {
            let folder = fresh_folder(&std::env::temp_dir())?;
            let (answers, spec) = (folder.join(ANSWERS), folder.join(SPEC));
            let recovery = rehearse::run(
                &plan,
                &outcome,
                respondents,
                (&answers, &spec),
                false,
                &|s| report(Report::Step(s)),
            )?;
            Ok(Box::new(recovery) as Box<dyn Any + Send>)
        }),
    }
}

/// A new, empty folder under `root` (`sharecast-rehearsal-<process>-<n>`,
/// the first `n` whose folder does not exist yet).
pub fn fresh_folder(root: &Path) -> Result<PathBuf> {
    let process = std::process::id();
    for n in 1..10_000 {
        let folder = root.join(format!("sharecast-rehearsal-{process}-{n}"));
        match std::fs::create_dir(&folder) {
            Ok(()) => return Ok(folder),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(Error::io(&folder, e)),
        }
    }
    Err(Error::Usage(format!(
        "no new folder for the rehearsal could be made in {}: remove old sharecast-rehearsal-* folders",
        root.display()
    )))
}
