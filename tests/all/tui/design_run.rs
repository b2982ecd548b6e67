//! The design workbench beyond its views: the search's progress while it
//! runs, a design that cannot be made, the key map and help of the design
//! views (against docs/workbench.md), specs and design files refused
//! together, and the real binary opening a design file in tmux.

use std::path::{Path, PathBuf};
use std::sync::Mutex;

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use sharecast::experiment;
use sharecast::report::experiment::fig;
use sharecast::tui::app::Msg;
use sharecast::tui::design::{self, Desk, Stage};
use sharecast::tui::keys::{self, Action, Context};
use sharecast::tui::theme::Theme;
use sharecast::tui::worker;
use sharecast::tui::Bench;

use super::design::{design_file, desk_with, keys_in, press, screen, BAYESIAN};
use super::drain;
use super::{has, Tmux};
use crate::common::*;

#[test]
fn the_search_shows_its_progress_while_it_runs() {
    let file = design_file("progress", BAYESIAN);
    let (mut desk, jobs) = Desk::new(experiment::read(&file).unwrap(), Theme::plain());
    assert!(matches!(desk.stage, Stage::Searching(_)));
    has(
        &screen(&desk, 100, 30),
        &["searching for the design of", "starting…"],
    );
    // Keys other than help and quit wait for the search.
    assert!(keys_in(&mut desk, "5r").is_empty());
    assert!(desk.prompt.is_none());
    let out = Mutex::new(Vec::new());
    for j in jobs {
        worker::execute(j, &|m| out.lock().unwrap().push(m));
    }
    let msgs = out.into_inner().unwrap();
    let ticks = msgs
        .iter()
        .filter(|m| matches!(m, Msg::Report { .. }))
        .count();
    assert!(ticks > 0);
    assert!(matches!(msgs.last(), Some(Msg::Done { .. })));
    let mut msgs = msgs.into_iter();
    for m in msgs.by_ref().take(ticks / 2 + 1) {
        design::update(&mut desk, m);
    }
    has(
        &screen(&desk, 100, 30),
        &["searching for the design (starts)", " of 8 "],
    );
    for m in msgs {
        design::update(&mut desk, m);
    }
    has(&screen(&desk, 100, 30), &["D-error", "‹design›"]);
}

#[test]
fn a_design_that_cannot_be_made_says_why() {
    let bad = BAYESIAN.to_string() + "[[forbid]]\nwhen = \"cost_A > 0\"\n";
    let file = design_file("failed", &bad);
    let (mut desk, jobs) = Desk::new(experiment::read(&file).unwrap(), Theme::plain());
    drain(&mut desk, jobs);
    assert!(desk.failure().is_some());
    // Wide enough that the message, led by the file's path (of any length
    // where the tests run), does not wrap inside the words looked for.
    let s = screen(&desk, 400, 30);
    has(
        &s,
        &["no design", "matches every task", "Fix the design file"],
    );
}

#[test]
fn the_design_views_keys_and_help_are_listed() {
    let mut desk = desk_with(BAYESIAN, "help");
    let help = desk.help();
    let listed = &help.iter().find(|(n, _)| n == "design views").unwrap().1;
    let doc = std::fs::read_to_string(path("docs/workbench.md"))
        .unwrap()
        .replace("\\|", "|");
    for (name, section) in &help {
        for (k, what) in section {
            assert!(
                doc.contains(&format!("| `{k}` | {name} | {what} |")),
                "docs/workbench.md lacks {k}: {what} ({name})"
            );
        }
    }
    let views = sharecast::tui::views::all();
    for (i, v) in desk.views.iter().enumerate() {
        assert!(
            !views.iter().any(|m| m.title() == v.title()),
            "{}",
            v.title()
        );
        let line = (format!("{} {}", i + 1, v.title()), v.about().to_string());
        assert!(listed.contains(&line), "{}", v.title());
        let ctx = Context::View {
            keys: v.keys(),
            views: desk.views.len(),
        };
        let press =
            |c: char| keys::action(ctx, KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE));
        assert_eq!(
            press(char::from_digit(i as u32 + 1, 10).unwrap()),
            Some(Action::GoTo(i))
        );
        for k in v.keys() {
            for c in k.chars.chars() {
                assert_eq!(press(c), Some(Action::Command(c)), "`{c}` is shadowed");
            }
        }
    }
    keys_in(&mut desk, "?");
    let s = screen(&desk, 100, 40);
    has(&s, &["design views", "1 design", "simulate, fit, compare"]);
    assert!(!s.contains("next model"), "{s}");
    press(&mut desk, KeyCode::Esc);
    keys_in(&mut desk, "q");
    assert!(desk.quit);
}

#[test]
fn specs_and_a_design_file_are_not_opened_together() {
    let file = design_file("mixed", BAYESIAN);
    let other = file.with_file_name("other.toml");
    std::fs::write(&other, BAYESIAN).unwrap();
    let spec = path("specs/commute.toml");
    let given = |p: &[&Path], load: Option<&Path>| {
        let paths: Vec<PathBuf> = p.iter().map(|p| p.to_path_buf()).collect();
        sharecast::tui::design_given(&paths, load)
    };
    assert_eq!(given(&[&file], None).unwrap(), Some(file.clone()));
    assert_eq!(given(&[&spec], None).unwrap(), None);
    for (paths, load) in [
        (vec![spec.as_path(), file.as_path()], None),
        (vec![file.as_path(), spec.as_path()], None),
        (vec![file.as_path(), other.as_path()], None),
        (vec![file.as_path()], Some(spec.as_path())),
    ] {
        let e = given(&paths, load).unwrap_err().to_string();
        assert!(e.contains(&file.display().to_string()), "{e}");
    }
    // The binary says so before it needs a terminal.
    let (code, _, err) = run(&["explore", "specs/commute.toml", file.to_str().unwrap()]);
    assert_ne!(code, 0);
    assert!(err.contains("is a design file"), "{err}");
    assert!(err.contains(&file.display().to_string()), "{err}");
}

#[test]
fn the_real_binary_opens_a_design_file_in_tmux() {
    if std::process::Command::new("tmux")
        .arg("-V")
        .output()
        .is_err()
    {
        eprintln!("note: tmux is not installed, so the end-to-end design test is skipped");
        return;
    }
    let file = design_file("tmux", BAYESIAN);
    let dir = file.parent().unwrap().to_path_buf();
    let status = dir.join("exit");
    let o = experiment::make(
        &experiment::read(&file).unwrap(),
        sharecast::progress::QUIET,
    )
    .unwrap();
    let t = Tmux(format!("sharecast-design-test-{}", std::process::id()));
    let shell = format!(
        "cd '{}' && TMPDIR='{}' '{}' explore survey.toml; echo EXIT=$? > '{}'",
        dir.display(),
        dir.display(),
        env!("CARGO_BIN_EXE_sharecast"),
        status.display()
    );
    t.start(&shell);
    let s = t.wait("A-error", 60);
    let d = s
        .lines()
        .find(|l| l.contains("│ D-error "))
        .unwrap_or_default();
    assert!(d.contains(&fig(o.d_error)), "{s}");
    for (i, v) in design::views::all().iter().enumerate() {
        t.cmd(&["send-keys", "-t", "w", &(i + 1).to_string()]);
        let s = t.wait(&format!("‹{}›", v.title()), 10);
        assert!(!s.contains("panicked"), "{s}");
    }
    t.cmd(&["send-keys", "-t", "w", "r", "Enter"]);
    t.wait("within 3.5 s.e.", 60);
    t.wait(&format!("{}/sharecast-rehearsal-", dir.display()), 10);
    t.quit(&status);
}
