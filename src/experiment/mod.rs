//! The survey's experimental design (`sharecast design`): which choice tasks
//! to show respondents. `file.rs` the design file and its checks (`Plan`),
//! `tasks.rs` tasks as level indices, balanced starts and level counts,
//! `rules.rs` the refused tasks (`[[forbid]]`, dominance, repeats),
//! `info.rs` the logit's Fisher information and the D- and A-errors (the
//! logit family's probabilities), `search.rs` the swap search from several
//! starts, `outcome.rs` the results document, `rehearse.rs` simulated
//! answers fitted with a generated spec. Distinct from `design`, the
//! arrays the likelihood reads.

mod attributes;
pub mod file;
pub mod info;
pub mod outcome;
pub mod rehearse;
pub mod rules;
pub mod search;
pub mod tasks;

pub use file::{is_design_file, read, Plan};
pub use outcome::Outcome;

use crate::error::{Error, Result};
use crate::progress::Sink;

/// The most level combinations of one rule's columns tried when checking
/// whether a `[[forbid]]` rule refuses every task.
const RULE_COMBINATIONS: usize = 100_000;

/// Searches for the design of `plan` and gathers its document.
pub fn make(plan: &Plan, sink: Sink) -> Result<Outcome> {
    let clock = std::time::Instant::now();
    rules_leave_tasks(plan)?;
    let draws = info::Draws::of(plan);
    let reached = search::run(plan, &draws, sink);
    let best = search::best(&reached)
        .ok_or_else(|| Error::spec(&plan.path, "[design].starts: no start was run"))?;
    if best.breaches > 0 {
        let b = rules::Rules::new(plan).breaches(&best.tasks);
        return Err(Error::spec(
            &plan.path,
            format!(
                "no design meets the constraints with every attribute's levels balanced: the best of {} starts still has {}; loosen or remove those rules, or add levels or tasks",
                plan.starts,
                b.describe(plan)
            ),
        ));
    }
    let best_start = reached
        .iter()
        .position(|r| std::ptr::eq(r, best))
        .unwrap_or(0);
    let figures = outcome::SearchFigures {
        starts: plan.starts,
        best_start: best_start + 1,
        start_d_errors: reached.iter().map(|r| r.start_d_error).collect(),
        reached_d_errors: reached.iter().map(|r| r.d_error).collect(),
        sweeps: reached.iter().map(|r| r.sweeps).sum(),
        swaps_tried: reached.iter().map(|r| r.swaps_tried).sum(),
        seconds: clock.elapsed().as_secs_f64(),
        start_seconds: reached.iter().map(|r| r.seconds).collect(),
    };
    Ok(outcome::assemble(plan, &best.tasks, &draws, figures))
}

/// Refuses a `[[forbid]]` rule that matches every task: tried over every
/// combination of the levels of the columns it reads (when they are few).
fn rules_leave_tasks(plan: &Plan) -> Result<()> {
    let rules = rules::Rules::new(plan);
    for (i, f) in plan.forbids.iter().enumerate() {
        let sizes: Vec<usize> = f
            .reads
            .iter()
            .map(|&c| plan.columns[c].levels.len())
            .collect();
        let combos = sizes.iter().try_fold(1usize, |a, &s| a.checked_mul(s));
        if combos.is_none_or(|n| n > RULE_COMBINATIONS) {
            continue;
        }
        let mut t = tasks::Tasks {
            columns: plan.columns.len(),
            levels: vec![0; plan.columns.len()],
        };
        let mut any_allowed = false;
        for n in 0..combos.unwrap_or(0) {
            let mut rest = n;
            for (&c, &s) in f.reads.iter().zip(&sizes) {
                t.levels[c] = (rest % s) as u8;
                rest /= s;
            }
            if !rules.forbidden(&t, 0).contains(&i) {
                any_allowed = true;
                break;
            }
        }
        if !any_allowed {
            return Err(Error::spec(
                &plan.path,
                format!(
                    "[[forbid]] {}: `{}` matches every task (whatever the levels of the columns it reads), so no design can satisfy it",
                    i + 1,
                    crate::error::quote(&f.when)
                ),
            ));
        }
    }
    Ok(())
}
