//! The workbench with many alternatives, on the 40 zones of the tables-layout
//! fixture (tests/fixtures/destinations/): the overview gives the count and
//! the largest few by share, `/` narrows the what-if's shares and levers to
//! the zones whose name contains the typed text (case-insensitive) and Esc
//! clears it, and the elasticity and diversion matrices show at most the
//! top rows and columns, the filter selecting the rows.

use std::path::PathBuf;

use ratatui::crossterm::event::KeyCode;
use sharecast::tui::app::App;
use sharecast::tui::filter::MOST;
use sharecast::tui::whatif::WhatIfView;

use super::{demo, has, keys, model, press, screen, whatif};

/// The fixture's tables as a spec in a scratch folder (as the destination
/// tests write it), opened once per test run.
fn zones() -> String {
    static SPEC: std::sync::OnceLock<PathBuf> = std::sync::OnceLock::new();
    let p = SPEC.get_or_init(|| {
        let (dir, _) = crate::destinations::tables_spec("tui-many", "");
        dir.join("spec.toml")
    });
    p.display().to_string()
}

fn app() -> App {
    demo(&[&zones()])
}

/// The zone names (a01 ... a40) on a screen.
fn zones_on(s: &str) -> Vec<String> {
    let names = model(&zones()).spec.alternative_names();
    names
        .into_iter()
        .filter(|n| s.contains(&format!(" {n} ")))
        .collect()
}

/// The lines of a screen that start (inside a frame) with a zone's name.
fn zone_rows(s: &str) -> usize {
    s.lines()
        .filter(|l| {
            let t = l.trim_start_matches('│').trim_start_matches([' ', '›']);
            t.len() > 3 && t.starts_with('a') && t[1..3].chars().all(|c| c.is_ascii_digit())
        })
        .count()
}

/// The zone with the largest predicted share.
fn largest() -> String {
    let m = model(&zones());
    let best = m
        .fit
        .shares
        .iter()
        .max_by(|a, b| a.predicted.total_cmp(&b.predicted))
        .unwrap();
    best.alternative.clone()
}

#[test]
fn the_overview_gives_the_count_and_the_largest_few() {
    let app = app();
    let s = screen(&app, 100, 30);
    has(&s, &["40 alternatives", "the 5 largest", "(tables layout)"]);
    let shown = zones_on(&s);
    assert!(shown.len() <= 5, "{shown:?}\n{s}");
    assert!(shown.contains(&largest()), "{s}");
}

#[test]
fn typing_a_filter_narrows_the_what_if_to_matching_zones() {
    let mut app = app();
    keys(&mut app, "5");
    let all = screen(&app, 120, 40);
    has(&all, &["showing rows 1–12 of 40, largest shares first"]);
    assert!(zone_rows(&all) > 0);
    // PgDn scrolls the shares by the rows shown; PgUp back.
    press(&mut app, KeyCode::PageDown);
    has(&screen(&app, 120, 40), &["showing rows 13–24 of 40"]);
    press(&mut app, KeyCode::PageUp);
    has(&screen(&app, 120, 40), &["showing rows 1–12 of 40"]);
    keys(&mut app, "/A0");
    let s = screen(&app, 120, 40);
    has(&s, &["/ A0", "9 of 40 alternatives match", "Esc clears"]);
    let shown = zones_on(&s);
    assert!(!shown.is_empty(), "{s}");
    assert!(shown.iter().all(|z| z.starts_with("a0")), "{shown:?}\n{s}");
    // While the line is open, letters type: q does not quit.
    keys(&mut app, "q");
    assert!(!app.quit);
    press(&mut app, KeyCode::Backspace);
    press(&mut app, KeyCode::Enter);
    // The lever cursor moves among the levers the filter keeps.
    for _ in 0..5 {
        press(&mut app, KeyCode::Down);
        let spec = &model(&zones()).spec;
        let w = whatif(&app);
        let k = w.lever().and_then(|l| l.alternative).unwrap();
        assert!(spec.alternatives[k].name.starts_with("a0"));
    }
    has(&screen(&app, 120, 40), &["/ edits"]);
    press(&mut app, KeyCode::Esc);
    let view = app.part::<WhatIfView>().unwrap();
    assert!(!view.filter.active() && !view.filter.typing());
    assert!(zones_on(&screen(&app, 120, 40)).len() > 9);
}

#[test]
fn matrices_show_at_most_the_top_rows_and_the_filter_picks_them() {
    let mut app = app();
    keys(&mut app, "3");
    let s = screen(&app, 140, 50);
    has(
        &s,
        &["showing rows ", " of 30 · columns ", "largest shares first"],
    );
    assert!(zone_rows(&s) <= 2 * MOST, "{s}");
    let header = s.lines().find(|l| l.contains("of ↓ / share of →")).unwrap();
    assert!(header.contains(&largest()), "{header}");
    keys(&mut app, "4");
    let s = screen(&app, 140, 50);
    has(&s, &["withdrawn ↓ / moves to →", "showing rows "]);
    let rows = zone_rows(&s);
    assert!(rows > 0 && rows <= 2 * MOST, "{s}");
    keys(&mut app, "/a1");
    press(&mut app, KeyCode::Enter);
    let s = screen(&app, 140, 50);
    has(&s, &["10 of 40 alternatives match"]);
    for line in s.lines() {
        let t = line.trim_start_matches('│').trim_start();
        if t.len() > 3 && t.starts_with('a') && t[1..3].chars().all(|c| c.is_ascii_digit()) {
            assert!(t.starts_with("a1"), "{line}\n{s}");
        }
    }
}
