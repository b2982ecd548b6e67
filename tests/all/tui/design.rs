//! The workbench on a survey design file: every design view drawn from a
//! real search's outcome (the D-error, A-error, tasks, level counts and
//! expected precision the library returned, formatted like the design's
//! reports), and a rehearsal run from the keys (its recovery equal to the
//! library's, its files in a fresh temporary folder, a stale one dropped).
//! The search's progress, the keys, help, refusals and the real binary are
//! in `design_run.rs`.

use std::path::{Path, PathBuf};

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use sharecast::experiment::{self, rehearse, Outcome};
use sharecast::report::experiment::{fig, level, people};
use sharecast::tui::app::Msg;
use sharecast::tui::design::{self, Desk};
use sharecast::tui::theme::Theme;
use sharecast::tui::worker::Job;

use super::{drain, has};
use crate::common::*;

/// A Bayesian design in two blocks (the cost prior has an sd).
pub(super) const BAYESIAN: &str = r#"title = "Express coach survey, second wave"
[design]
alternatives = ["A", "B"]
tasks = 16
blocks = 2
seed = 4
draws = 200
[[attribute]]
name = "cost"
levels = [2, 4, 6, 8]
prior = { mean = -0.3, sd = 0.1 }
[[attribute]]
name = "time"
levels = [20, 30, 40, 50]
prior = -0.05
"#;

/// A design with fixed priors, in one block.
pub(super) const FIXED: &str = r#"[design]
alternatives = ["left", "right"]
tasks = 12
seed = 9
[[attribute]]
name = "price"
levels = [1.5, 3, 4.5]
prior = -0.4
[[attribute]]
name = "wait"
levels = [5, 10, 15]
prior = -0.08
[[attribute]]
name = "comfort"
levels = [0, 1, 2]
prior = 0.3
"#;

pub(super) fn design_file(name: &str, body: &str) -> PathBuf {
    let dir = scratch(&format!("tui_design_{name}"));
    write(&dir, "survey.toml", body)
}

/// A desk on the design file with its search done.
pub(super) fn desk(file: &Path) -> Desk {
    let plan = experiment::read(file).unwrap();
    let (mut desk, jobs) = Desk::new(plan, Theme::plain());
    drain(&mut desk, jobs);
    assert!(
        desk.outcome().is_some(),
        "the search failed: {:?}",
        desk.stage
    );
    desk
}

pub(super) fn outcome(desk: &Desk) -> &Outcome {
    desk.outcome().unwrap()
}

pub(super) fn press(desk: &mut Desk, code: KeyCode) -> Vec<Job> {
    design::update(desk, Msg::Key(KeyEvent::new(code, KeyModifiers::NONE)))
}

pub(super) fn keys_in(desk: &mut Desk, text: &str) -> Vec<Job> {
    text.chars()
        .flat_map(|c| press(desk, KeyCode::Char(c)))
        .collect()
}

pub(super) fn screen(desk: &Desk, w: u16, h: u16) -> String {
    sharecast::tui::render_text(desk, w, h)
}

/// The first row of a panel on the screen whose first cell is `first`, split
/// into cells.
pub(super) fn find_row(s: &str, first: &str) -> Option<Vec<String>> {
    s.lines()
        .filter(|l| l.contains('│'))
        .flat_map(|l| l.split('│'))
        .map(|part| {
            part.split_whitespace()
                .map(str::to_string)
                .collect::<Vec<_>>()
        })
        .find(|cells| cells.first().is_some_and(|c| c == first))
}

pub(super) fn row_of(s: &str, first: &str) -> Vec<String> {
    find_row(s, first).unwrap_or_else(|| panic!("no row starting with `{first}`:\n{s}"))
}

#[test]
fn the_design_view_shows_the_outcome_s_criteria_and_search() {
    let file = design_file("summary", BAYESIAN);
    let desk = desk(&file);
    let o = outcome(&desk);
    // The worker's search is the library's, reproducible from the seed.
    let direct = experiment::make(
        &experiment::read(&file).unwrap(),
        sharecast::progress::QUIET,
    )
    .unwrap();
    assert_eq!(o.tasks, direct.tasks);
    assert_eq!(o.d_error, direct.d_error);
    let s = screen(&desk, 120, 40);
    assert_eq!(row_of(&s, "D-error").get(1), Some(&fig(o.d_error)), "{s}");
    assert_eq!(row_of(&s, "A-error").get(1), Some(&fig(o.a_error)), "{s}");
    has(
        &s,
        &[
            "1 design",
            "5 rehearsal",
            "Express coach survey, second wave",
            "16 in 2 blocks of 8",
            "cost, time",
            "Bayesian, 200 draws",
            &format!("{} at prior means", fig(o.d_error_at_means)),
            &format!("best: start {} ◆", o.search.best_start),
            &format!("{} swaps, {} sweeps", o.search.swaps_tried, o.search.sweeps),
            &format!("at least {}", people(o.respondents)),
            "one block each, t = 1.96",
            "‹design›",
        ],
    );
    // Each start's D-error before and after the search, the best marked.
    let best = o.search.best_start;
    let row = row_of(&s, &best.to_string());
    assert_eq!(
        row[1..],
        [
            fig(o.search.start_d_errors[best - 1]),
            fig(o.search.reached_d_errors[best - 1]),
            "◆".to_string()
        ]
    );
    let fixed = desk_with(FIXED, "summary_fixed");
    let f = outcome(&fixed);
    assert!(!f.bayesian);
    let s = screen(&fixed, 100, 30);
    assert_eq!(row_of(&s, "D-error").get(1), Some(&fig(f.d_error)), "{s}");
    has(&s, &["at the fixed priors", "12 in 1 block of 12"]);
    assert!(!s.contains("Bayesian"), "{s}");
}

pub(super) fn desk_with(body: &str, name: &str) -> Desk {
    desk(&design_file(name, body))
}

#[test]
fn the_tasks_view_lists_every_task_s_levels_and_scrolls() {
    let mut desk = desk_with(BAYESIAN, "tasks");
    keys_in(&mut desk, "2");
    let s = screen(&desk, 100, 30);
    let o = outcome(&desk).clone();
    let mut head = vec!["task".to_string(), "block".to_string()];
    head.extend(o.columns.iter().cloned());
    assert_eq!(row_of(&s, "task"), head, "{s}");
    let first = &o.tasks[0];
    let mut want = vec!["1".to_string(), "1".to_string()];
    want.extend(first.levels.iter().map(|v| level(*v)));
    assert_eq!(row_of(&s, "1"), want, "{s}");
    has(&s, &["16 in 2 blocks", "‹tasks›"]);
    // At the end, the last task is the first row and task 1 is scrolled away.
    let last = o.tasks.len().to_string();
    press(&mut desk, KeyCode::End);
    let s = screen(&desk, 80, 24);
    assert!(find_row(&s, "1").is_none(), "{s}");
    let mut want = vec![last.clone(), "2".to_string()];
    want.extend(o.tasks[15].levels.iter().map(|v| level(*v)));
    assert_eq!(row_of(&s, &last), want, "{s}");
}

#[test]
fn the_balance_view_shows_the_level_counts_per_block() {
    let mut desk = desk_with(BAYESIAN, "balance");
    keys_in(&mut desk, "3");
    let s = screen(&desk, 100, 40);
    let o = outcome(&desk);
    assert!(o.balanced);
    has(
        &s,
        &["balanced: every column's levels", "block 1", "block 2"],
    );
    let c = &o.level_counts[0];
    let mut want = vec![
        c.column.clone(),
        level(c.levels[0]),
        c.counts[0].to_string(),
    ];
    want.extend(c.by_block.iter().map(|b| b[0].to_string()));
    assert_eq!(row_of(&s, &c.column), want, "{s}");
    // The next level's row: its level and counts under the same column.
    let mut want = vec![level(c.levels[1]), c.counts[1].to_string()];
    want.extend(c.by_block.iter().map(|b| b[1].to_string()));
    assert_eq!(row_of(&s, &level(c.levels[1])), want, "{s}");
}

#[test]
fn the_precision_view_shows_each_parameter_s_expected_error() {
    let mut desk = desk_with(BAYESIAN, "precision");
    keys_in(&mut desk, "4");
    let s = screen(&desk, 100, 30);
    let o = outcome(&desk);
    for p in &o.standard_errors {
        let row = row_of(&s, &p.parameter);
        assert!(
            row.contains(&p.standard_error.map_or("—".into(), fig)),
            "{s}"
        );
        assert_eq!(
            row[row.len() - 2..],
            [people(p.sample_size), people(p.respondents)]
        );
    }
    has(
        &s,
        &[
            &format!("{} ± {}", fig(-0.3), fig(0.1)),
            &format!("the design needs at least {}", people(o.respondents)),
        ],
    );
}

/// Asks for a rehearsal of `n` respondents from the rehearsal view; returns its job.
fn ask_rehearsal(desk: &mut Desk, n: &str) -> Vec<Job> {
    keys_in(desk, "5r");
    for _ in 0..6 {
        press(desk, KeyCode::Backspace);
    }
    keys_in(desk, n);
    press(desk, KeyCode::Enter)
}

#[test]
fn a_rehearsal_runs_from_the_keys_and_shows_the_library_s_recovery() {
    let mut desk = desk_with(BAYESIAN, "rehearsal");
    keys_in(&mut desk, "5");
    has(&screen(&desk, 100, 30), &["No rehearsal yet: r runs one."]);
    keys_in(&mut desk, "r");
    has(
        &screen(&desk, 100, 30),
        &["respondents to simulate", "500▏"],
    );
    // A number of respondents below one per block is refused; the prompt stays.
    for _ in 0..3 {
        press(&mut desk, KeyCode::Backspace);
    }
    assert!(press(&mut desk, KeyCode::Enter).is_empty());
    assert!(desk.prompt.is_some());
    has(
        &screen(&desk, 100, 30),
        &["not a number of respondents from 2"],
    );
    press(&mut desk, KeyCode::Esc);
    let jobs = ask_rehearsal(&mut desk, "300");
    assert_eq!(jobs.len(), 1);
    has(
        &screen(&desk, 100, 30),
        &["rehearsing with 300 simulated respondents"],
    );
    drain(&mut desk, jobs);
    let r = outcome(&desk).rehearsal.clone().expect("no recovery");
    assert!(desk.rehearsing.is_none());
    // Its files are in a new folder of the temporary directory.
    let spec = PathBuf::from(&r.spec);
    let folder = spec.parent().unwrap().to_path_buf();
    assert!(
        folder.starts_with(std::env::temp_dir()),
        "{}",
        folder.display()
    );
    assert!(Path::new(&r.answers).is_file() && spec.is_file());
    // The library, called directly on the same outcome, recovers the same.
    let dir = scratch("tui_design_rehearsal_direct");
    let plan = desk.plan.clone();
    let mut bare = outcome(&desk).clone();
    bare.rehearsal = None;
    let quiet = |_s: sharecast::estimate::Step| {};
    let direct = rehearse::run(
        &plan,
        &bare,
        300,
        (&dir.join("a.csv"), &dir.join("s.toml")),
        false,
        &quiet,
    )
    .unwrap();
    let s = screen(&desk, 110, 30);
    for (got, want) in r.parameters.iter().zip(&direct.parameters) {
        assert_eq!(got.estimate, want.estimate);
        let row = row_of(&s, &want.parameter);
        let yes = if want.within { "yes" } else { "no" };
        assert_eq!(
            row[1..],
            [
                fig(want.truth),
                fig(want.estimate),
                fig(want.standard_error),
                format!("{:.2}", want.z),
                yes.to_string()
            ],
            "{s}"
        );
    }
    has(&s, &["within 3.5 s.e.", &r.answers, &r.spec]);
    has(
        &s,
        &[&format!(
            "rehearsed: answers and spec in {}",
            folder.display()
        )],
    );
    // A second rehearsal goes to another new folder.
    let again = ask_rehearsal(&mut desk, "300");
    drain(&mut desk, again);
    let second = outcome(&desk).rehearsal.clone().unwrap();
    assert_ne!(second.spec, r.spec);
    assert_eq!(second.parameters, r.parameters);
    for p in [&r.spec, &second.spec] {
        let _ = std::fs::remove_dir_all(Path::new(p).parent().unwrap());
    }
}

fn generation(jobs: &[Job]) -> u64 {
    match jobs {
        [Job::Part { generation, .. }] => *generation,
        _ => panic!("not one view job: {jobs:?}"),
    }
}

#[test]
fn a_stale_rehearsal_is_dropped_and_the_newest_kept() {
    let mut desk = desk_with(BAYESIAN, "stale");
    let older = generation(&ask_rehearsal(&mut desk, "200"));
    let newer = ask_rehearsal(&mut desk, "400");
    assert!(generation(&newer) > older);
    has(
        &screen(&desk, 100, 30),
        &["rehearsing with 400", "instead of the one under way"],
    );
    drain(&mut desk, newer);
    let r = outcome(&desk).rehearsal.clone().unwrap();
    assert_eq!(r.respondents, 400);
    // The older rehearsal's result arrives late: it is dropped.
    let mut late = r.clone();
    late.respondents = 200;
    design::update(
        &mut desk,
        Msg::Done {
            view: design::jobs::REHEARSAL,
            index: 0,
            generation: older,
            result: Ok(Box::new(late)),
        },
    );
    assert_eq!(outcome(&desk).rehearsal.as_ref().unwrap().respondents, 400);
    has(&screen(&desk, 100, 30), &["400 simulated respondents"]);
    let _ = std::fs::remove_dir_all(Path::new(&r.spec).parent().unwrap());
}

/// Three alternatives and four attributes: twelve design columns, more than
/// an 80-column screen holds.
const WIDE: &str = r#"[design]
alternatives = ["bus", "tram", "rail"]
tasks = 12
seed = 3
[[attribute]]
name = "fare"
levels = [1, 2, 3]
prior = -0.5
[[attribute]]
name = "minutes"
levels = [10, 20, 30]
prior = -0.04
[[attribute]]
name = "transfers"
levels = [0, 1, 2]
prior = -0.3
[[attribute]]
name = "crowding"
levels = [0, 1, 2]
prior = -0.2
"#;

#[test]
fn the_tasks_view_moves_over_columns_that_do_not_fit() {
    let mut desk = desk_with(WIDE, "wide");
    keys_in(&mut desk, "2");
    let o = outcome(&desk).clone();
    assert_eq!(o.columns.len(), 12);
    for first in [0, 2] {
        let s = screen(&desk, 80, 24);
        let head = row_of(&s, "task");
        let shown = &head[2..];
        assert!(!shown.is_empty() && shown.len() < 12, "{s}");
        assert_eq!(shown, &o.columns[first..first + shown.len()], "{s}");
        has(
            &s,
            &[&format!(
                "←→ columns {}–{} of 12",
                first + 1,
                first + shown.len()
            )],
        );
        let levels: Vec<String> = o.tasks[0].levels[first..first + shown.len()]
            .iter()
            .map(|v| level(*v))
            .collect();
        assert_eq!(row_of(&s, "1")[2..], levels, "{s}");
        keys_in(&mut desk, "ll");
    }
    // ← goes back; it stops at the first column.
    keys_in(&mut desk, "hhhhhh");
    assert_eq!(row_of(&screen(&desk, 80, 24), "task")[2], o.columns[0]);
}
