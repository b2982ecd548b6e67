//! The workbench (`sharecast explore`): every view drawn on the demo model and
//! read back from ratatui's test backend; key sequences applied to `update`
//! checked against the library called directly; and the real binary driven
//! in tmux.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::{Arc, Mutex, OnceLock};
use std::time::{Duration, Instant};

use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::Terminal;
use sharecast::scenario::{self, Op, Scenario, Target};
use sharecast::tui::app::{update, App, Model, Msg, Prompt, Stage};
use sharecast::tui::compare::Compare;
use sharecast::tui::curve::{Curve, CurveView};
use sharecast::tui::theme::{Theme, ELASTICITY_CUTS};
use sharecast::tui::whatif::{WhatIf, WhatIfView};
use sharecast::tui::worker::{self, Job};
use sharecast::tui::{estimates, keys, levers, Bench};

use crate::common::*;

mod classes;
mod design;
mod design_run;
mod many;
mod tastes;

fn model(rel: &str) -> Model {
    static CACHE: OnceLock<Mutex<Vec<(String, Model)>>> = OnceLock::new();
    let cache = CACHE.get_or_init(|| Mutex::new(Vec::new()));
    let mut c = cache.lock().unwrap();
    if let Some((_, m)) = c.iter().find(|(r, _)| r == rel) {
        return m.clone();
    }
    let (spec, ds) = load(rel);
    let fit = fit_spec(&spec, &ds);
    let m = Model {
        path: PathBuf::from(rel),
        spec: Arc::new(spec),
        ds: Arc::new(ds),
        fit: Arc::new(fit),
        note: None,
    };
    c.push((rel.to_string(), m.clone()));
    m
}

/// Runs jobs as the worker would, feeding every message back through the
/// workbench's `update` (the model workbench's or a design's).
fn drain(bench: &mut impl Bench, jobs: Vec<Job>) {
    let mut queue = jobs;
    while !queue.is_empty() {
        let job = queue.remove(0);
        let out = Mutex::new(Vec::new());
        worker::execute(job, &|m| out.lock().unwrap().push(m));
        for m in out.into_inner().unwrap() {
            queue.extend(bench.update(m));
        }
    }
}

/// A workbench on the demo model with its analysis, band and curve computed.
fn demo(specs: &[&str]) -> App {
    let (mut app, jobs) =
        App::with_models(specs.iter().map(|s| model(s)).collect(), Theme::plain());
    drain(&mut app, jobs);
    app
}

fn press(app: &mut App, code: KeyCode) -> Vec<Job> {
    update(app, Msg::Key(KeyEvent::new(code, KeyModifiers::NONE)))
}

fn keys(app: &mut App, text: &str) -> Vec<Job> {
    text.chars()
        .flat_map(|c| press(app, KeyCode::Char(c)))
        .collect()
}

fn screen(app: &App, w: u16, h: u16) -> String {
    let mut term = Terminal::new(TestBackend::new(w, h)).unwrap();
    term.draw(|f| f.render_widget(app, f.area())).unwrap();
    let buf = term.backend().buffer();
    (0..h)
        .map(|y| {
            (0..w)
                .map(|x| buf[(x, y)].symbol().to_string())
                .collect::<String>()
                + "\n"
        })
        .collect()
}

#[track_caller]
fn has(text: &str, want: &[&str]) {
    for w in want {
        assert!(text.contains(w), "`{w}` not on the screen:\n{text}");
    }
}

fn point(rel: &str, sc: &Scenario) -> scenario::Forecast {
    let m = model(rel);
    let opts = scenario::Options {
        draws: 0,
        ..Default::default()
    };
    scenario::forecast(&m.spec, &m.fit, &m.ds, sc, &opts).unwrap()
}

/// The what-if view's state for the model shown.
fn whatif(app: &App) -> &WhatIf {
    let view = app.part::<WhatIfView>().unwrap();
    view.state(app.current).unwrap()
}

/// The curve view's state for the model shown.
fn curve(app: &App) -> &Curve {
    let view = app.part::<CurveView>().unwrap();
    view.state(app.current).unwrap()
}

fn whatif_shares(app: &App) -> Vec<(f64, f64)> {
    let f = whatif(app).point.as_ref().unwrap();
    f.shares.iter().map(|r| (r.base, r.scenario)).collect()
}

#[test]
fn overview_shows_the_data_the_fit_and_the_cautions() {
    let app = demo(&["specs/commute.toml"]);
    let s = screen(&app, 80, 24);
    let fit = &model("specs/commute.toml").fit;
    has(
        &s,
        &[
            "1 overview",
            "7 compare",
            "6000",
            "2000 decision makers",
            "car ◆",
            "walk",
        ],
    );
    has(
        &s,
        &[
            "0.2665",
            &format!("{:.3}", fit.stats.log_likelihood),
            "converged ✓",
        ],
    );
    has(
        &s,
        &[
            "diagnostics: none",
            "Cautions:",
            "specs/commute.toml · logit",
            "q quit",
        ],
    );
    let big = screen(&app, 120, 40);
    has(
        &big,
        &[
            "hit rate",
            "Transport appraisal",
            "independence from irrelevant",
        ],
    );
}

#[test]
fn estimates_are_grouped_by_term_with_errors_sort_and_ratios() {
    let mut app = demo(&["specs/commute.toml"]);
    keys(&mut app, "2");
    let s = screen(&app, 100, 40);
    has(
        &s,
        &[
            "▸ constants",
            "▸ attribute cost",
            "▸ characteristic age",
            "asc_bus",
            "-0.82712",
        ],
    );
    has(
        &s,
        &[
            "-0.82712 ± 0.16183",
            "3.2e-7",
            "< 1e-12",
            "value ± s.e. clustered by decision maker",
            "own scale per row",
            "├",
            "●",
            "┤",
            "value_of_time",
            "6.8838",
        ],
    );
    keys(&mut app, "e");
    has(
        &screen(&app, 100, 40),
        &["value ± s.e. from the Hessian", "-0.82712 ± 0.15317"],
    );
    keys(&mut app, "es");
    let s = screen(&app, 100, 40);
    let at = |n: &str| s.find(n).unwrap();
    assert!(
        at("asc_bike") < at("asc_bus")
            && at("asc_bus") < at("asc_walk")
            && at("asc_walk") < at("asc_rail"),
        "{s}"
    );
    keys(&mut app, "t");
    assert!(!screen(&app, 100, 40).contains("▸ constants"));
}

#[test]
fn classical_errors_on_a_clustered_fit_match_the_library_without_groups() {
    // The grouped fit shown with classical errors must agree with the library's own
    // rows for the same model fitted without `[data].group` (classical inference).
    let text = std::fs::read_to_string(path("specs/commute.toml")).unwrap();
    let spec = sharecast::model::parse_spec(
        &text.replace("group = \"person_id\"\n", ""),
        &path("specs/commute_ungrouped.toml"),
    )
    .unwrap();
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let plain = fit_spec(&spec, &ds);
    let grouped = model("specs/commute.toml").fit;
    for (g, p) in grouped.parameters.iter().zip(&plain.parameters) {
        let s = estimates::shown(g, false, true);
        for (what, got, want) in [
            ("t", s.t, p.t_stat),
            ("p", s.p, p.p_value),
            ("low", s.low, p.ci_low),
            ("high", s.high, p.ci_high),
        ] {
            assert_close(&format!("{} {what}", p.name), got, want, 1e-6);
        }
        assert_eq!(estimates::shown(g, true, true).t, g.t_stat);
    }
}

#[test]
fn elasticities_and_diversion_show_the_analysis_figures() {
    let mut app = demo(&["specs/commute.toml"]);
    let a = app.loaded().unwrap().analysis.ready().unwrap().clone();
    let own = |v: &str, k: &str| {
        a.elasticities
            .iter()
            .find(|r| r.variable == v && r.changed.as_deref() == Some(k) && r.affected == k)
            .unwrap()
            .clone()
    };
    keys(&mut app, "3");
    let s = screen(&app, 80, 24);
    has(
        &s,
        &[
            "elasticities of cost (1/6)",
            "cost of ↓ / share of →",
            &format!("{:+.3}", own("cost", "rail").value),
        ],
    );
    has(
        &s,
        &[
            "▓",
            "warm: share falls",
            "change in share per unit more of cost",
        ],
    );
    keys(&mut app, "la");
    has(
        &screen(&app, 80, 24),
        &[
            "elasticities of time (2/6)",
            "arc (+10%)",
            &format!("{:+.3}", own("time", "walk").arc),
        ],
    );
    keys(&mut app, "4");
    let s = screen(&app, 80, 24);
    let d = a
        .diversion
        .iter()
        .find(|r| r.removed == "rail" && r.to == "bus")
        .unwrap();
    let p = a
        .price_diversion
        .iter()
        .find(|r| r.changed == "car" && r.to == "rail")
        .unwrap();
    has(
        &s,
        &[
            "withdrawn ↓ / moves to →",
            &format!("{:.3}", d.share),
            &format!("{:.3}", p.ratio),
            "cost diversion ratios",
        ],
    );
}

#[test]
fn stepping_a_fare_gives_the_scenario_and_shares_of_the_library() {
    let rail_up = Scenario::from_file(
        &path("specs/scenarios/rail_fare_up.toml"),
        &model("specs/commute.toml").spec,
    )
    .unwrap();
    let want: Vec<(f64, f64)> = point("specs/commute.toml", &rail_up)
        .shares
        .iter()
        .map(|r| (r.base, r.scenario))
        .collect();
    // Three ways to the same what-if: a big step, ten small steps, a typed change.
    for how in ["L", "llllllllll", "\n+10%\n"] {
        let mut app = demo(&["specs/commute.toml"]);
        keys(&mut app, "5jjjjjj");
        for c in how.chars() {
            let code = if c == '\n' {
                KeyCode::Enter
            } else {
                KeyCode::Char(c)
            };
            let jobs = press(&mut app, code);
            drain(&mut app, jobs);
        }
        let l = app.loaded().unwrap();
        let sc = whatif(&app).scenario(&l.model.spec);
        assert_eq!(sc.changes.len(), 1, "{how}");
        assert_eq!(
            sc.changes[0].target,
            Target::Attribute {
                attribute: 0,
                alternative: 2
            }
        );
        assert_eq!(sc.changes[0].op, Op::Multiply(1.1), "{how}");
        assert_eq!(whatif_shares(&app), want, "{how}");
        let s = screen(&app, 80, 24);
        has(
            &s,
            &[
                "×1.10 (+10%)",
                "0.2329 → 0.2202",
                "band: 95% of 500 parameter draws",
            ],
        );
        let band = whatif(&app).band.as_ref().unwrap();
        assert!(band
            .shares
            .iter()
            .all(|r| r.low <= r.scenario && r.scenario <= r.high));
    }
}

#[test]
fn withdrawing_and_resetting_follow_the_library() {
    let mut app = demo(&["specs/commute.toml"]);
    keys(&mut app, "5jjw");
    let l = app.loaded().unwrap();
    assert_eq!(whatif(&app).removed, vec![1]);
    let sc =
        Scenario::from_str("remove = [\"bus\"]\n", Path::new("x.toml"), &l.model.spec).unwrap();
    let want: Vec<(f64, f64)> = point("specs/commute.toml", &sc)
        .shares
        .iter()
        .map(|r| (r.base, r.scenario))
        .collect();
    assert_eq!(whatif_shares(&app), want);
    assert_eq!(want[1].1, 0.0);
    has(&screen(&app, 80, 24), &["bus ✕", "bus withdrawn"]);
    keys(&mut app, "lr");
    assert_eq!(whatif(&app).changed(), 0);
    keys(&mut app, "lR");
    assert!(whatif(&app).removed.is_empty() && whatif(&app).changed() == 0);
    let base: Vec<(f64, f64)> = whatif_shares(&app);
    assert!(base.iter().all(|(b, s)| b == s));
}

#[test]
fn a_stale_band_is_dropped_and_the_current_one_kept() {
    let mut app = demo(&["specs/commute.toml"]);
    keys(&mut app, "5");
    let old = keys(&mut app, "l");
    let new = keys(&mut app, "l");
    drain(&mut app, old);
    assert!(whatif(&app).band.is_none(), "a stale band was kept");
    has(&screen(&app, 80, 24), &["drawing 500 parameter sets"]);
    drain(&mut app, new);
    assert_eq!(whatif(&app).band.as_ref().unwrap().draws, worker::DRAWS);
}

#[test]
fn parsing_and_stepping_changes() {
    assert_eq!(levers::parse_change("+10%"), Ok(Op::Multiply(1.1)));
    assert_eq!(levers::parse_change("-5%"), Ok(Op::Multiply(0.95)));
    assert_eq!(levers::parse_change("x1.2"), Ok(Op::Multiply(1.2)));
    assert_eq!(levers::parse_change(" +2 "), Ok(Op::Add(2.0)));
    assert_eq!(levers::parse_change("=3.5"), Ok(Op::Set(3.5)));
    assert_eq!(levers::parse_change("3.5"), Ok(Op::Set(3.5)));
    for bad in ["", "abc", "+", "x", "=inf", "NaN%", "=1e300", "x1e20"] {
        assert!(levers::parse_change(bad).is_err(), "{bad}");
    }
    assert_eq!(
        levers::stepped(None, false, false),
        Some(Op::Multiply(0.99))
    );
    assert_eq!(levers::stepped(Some(Op::Multiply(0.99)), true, false), None);
    assert_eq!(levers::stepped(Some(Op::Add(0.1)), false, false), None);
    assert_eq!(
        levers::stepped(Some(Op::Multiply(0.05)), false, true),
        Some(Op::Multiply(0.0))
    );
}

fn type_path(app: &mut App, key: char, file: &Path) {
    keys(app, &key.to_string());
    if let Some(Prompt::Line { text, .. }) = app.prompt.clone() {
        for _ in text.chars() {
            press(app, KeyCode::Backspace);
        }
    }
    keys(app, &file.display().to_string());
    press(app, KeyCode::Enter);
}

#[test]
fn saving_and_exporting_never_overwrite_without_y() {
    let dir = scratch("tui_save");
    let file = dir.join("what.toml");
    let mut app = demo(&["specs/commute.toml"]);
    keys(&mut app, "5jjjjjjL");
    type_path(&mut app, 's', &file);
    let spec = model("specs/commute.toml").spec;
    let back = Scenario::from_file(&file, &spec).unwrap();
    assert_eq!(back.changes, whatif(&app).scenario(&spec).changes);
    let first = std::fs::read_to_string(&file).unwrap();
    // simulate reads the saved file
    let (code, out, _) = run(&[
        "simulate",
        "specs/commute.toml",
        "--scenario",
        file.to_str().unwrap(),
        "--draws",
        "0",
    ]);
    assert_eq!(code, 0);
    assert!(out.contains("0.2202"), "{out}");

    keys(&mut app, "jw");
    type_path(&mut app, 's', &file);
    assert!(matches!(app.prompt, Some(Prompt::Overwrite { .. })));
    keys(&mut app, "n");
    assert!(app.status.as_ref().unwrap().text.starts_with("kept"));
    assert_eq!(
        std::fs::read_to_string(&file).unwrap(),
        first,
        "replaced without y"
    );
    type_path(&mut app, 's', &file);
    keys(&mut app, "y");
    let now = Scenario::from_file(&file, &spec).unwrap();
    assert_eq!(now.remove, vec![2]);

    let csv = dir.join("what.csv");
    type_path(&mut app, 'x', &dir.join("what.xlsx"));
    assert!(
        matches!(app.prompt, Some(Prompt::Line { .. })),
        "a bad extension keeps the prompt"
    );
    press(&mut app, KeyCode::Esc);
    type_path(&mut app, 'x', &csv);
    let body = std::fs::read_to_string(&csv).unwrap();
    assert!(
        body.starts_with("segment,alternative,base,scenario,change,low,high"),
        "{body}"
    );
    type_path(&mut app, 'x', &csv);
    assert!(matches!(app.prompt, Some(Prompt::Overwrite { .. })));
    update(
        &mut app,
        Msg::Key(KeyEvent::new(KeyCode::Char('c'), KeyModifiers::CONTROL)),
    );
    assert!(app.quit, "Ctrl-C quits even in a prompt");
}

#[test]
fn the_demand_curve_is_the_library_sweep() {
    let mut app = demo(&["specs/commute.toml"]);
    let jobs = keys(&mut app, "5jjjjjjc");
    assert_eq!(app.shown().title(), "curve");
    drain(&mut app, jobs);
    let l = app.loaded().unwrap();
    let m = &l.model;
    let req = sharecast::scenario::sweep::Request {
        attribute: "cost".into(),
        alternative: Some("rail".into()),
        from: 0.5,
        to: 1.5,
        steps: 21,
    };
    let want = sharecast::scenario::sweep::sweep(&m.spec, &m.fit, &m.ds, &req).unwrap();
    let got = curve(&app).sweep.as_ref().unwrap();
    assert_eq!(got.points.len(), 21);
    for (g, w) in got.points.iter().zip(&want.points) {
        assert_eq!(g.shares, w.shares);
    }
    let s = screen(&app, 80, 24);
    has(
        &s,
        &[
            "share of rail · cost of rail scaled",
            "×0.50",
            "×1.50",
            "at ×1.00: rail 0.2329",
        ],
    );
    keys(&mut app, "lll");
    has(&screen(&app, 80, 24), &["at ×1.15"]);
    let stale = keys(&mut app, "+");
    keys(&mut app, "-");
    drain(&mut app, stale);
    assert!(curve(&app).sweep.is_none(), "a stale curve was kept");
}

#[test]
fn compare_sets_two_specs_side_by_side() {
    let mut app = demo(&["specs/commute.toml"]);
    keys(&mut app, "7");
    has(
        &screen(&app, 80, 24),
        &[
            "One spec is open",
            "sharecast explore specs/commute.toml specs/commute_generic.toml",
        ],
    );
    let mut app = demo(&["specs/commute.toml", "specs/commute_generic.toml"]);
    keys(&mut app, "7");
    let s = screen(&app, 100, 40);
    has(
        &s,
        &[
            "M1 specs/commute.toml",
            "M2 specs/commute_generic.toml",
            "s.e. clustered by decision maker",
            "asc_bus",
            "-0.82712 ± 0.16183",
            "AIC (rank)",
            "rho² vs zero",
            "M2 nests in M1",
            "LR χ²",
        ],
    );
    assert!(!s.contains("<.0001") && !s.contains("[1]"), "{s}");
    has(&s, &["M1 of 2 models"]);
    keys(&mut app, &"j".repeat(200));
    let compare = app.part::<Compare>().unwrap();
    let most = compare.height(&app.ctx()) as u16;
    let at = compare.scroll.0;
    assert!(at < most && at > 0, "scrolled to {at}");
    keys(&mut app, "gm");
    has(
        &screen(&app, 100, 40),
        &["M2 of 2 models", "specs/commute_generic.toml · logit"],
    );
}

#[test]
fn help_lists_every_key_and_small_terminals_are_told_to_grow() {
    let mut app = demo(&["specs/commute.toml"]);
    keys(&mut app, "?");
    let s = screen(&app, 100, 30);
    let help = keys::help(&app.views);
    for (_, section) in &help {
        for (_, what) in section.iter() {
            has(&s, &[what]);
        }
    }
    let doc = std::fs::read_to_string(path("docs/workbench.md"))
        .unwrap()
        .replace("\\|", "|");
    for (name, section) in &help {
        for (k, what) in section.iter() {
            assert!(
                doc.contains(&format!("| `{k}` | {name} | {what} |")),
                "docs/workbench.md lacks {k}: {what}"
            );
        }
    }
    press(&mut app, KeyCode::Esc);
    assert!(!app.help);
    for (w, h) in [(79, 24), (80, 23), (40, 10)] {
        has(&screen(&app, w, h), &["enlarge the terminal"]);
    }
    keys(&mut app, "q");
    assert!(app.quit);
}

#[test]
fn the_progress_view_and_a_failure_are_shown() {
    let (mut app, jobs) = App::new(
        vec![PathBuf::from("specs/commute.toml")],
        None,
        Theme::plain(),
    );
    assert!(matches!(jobs[0], Job::Open { .. }));
    has(
        &screen(&app, 80, 24),
        &["fitting specs/commute.toml", "loading the data"],
    );
    let step = sharecast::estimate::Step {
        phase: "quasi-Newton",
        iteration: 7,
        log_likelihood: -7000.25,
        gradient_norm: 0.5,
    };
    update(&mut app, Msg::Progress { index: 0, step });
    has(
        &screen(&app, 80, 24),
        &["iteration", "-7000.250000", "5.000e-1"],
    );
    update(&mut app, Msg::Failed("specs/x.toml: no such file".into()));
    has(&screen(&app, 80, 24), &["could not open", "no such file"]);
    assert!(matches!(app.stage, Stage::Failed(_)));
}

#[test]
fn a_saved_fit_is_restored_when_its_fingerprint_matches() {
    let dir = scratch("tui_load");
    let saved = dir.join("fit.json");
    let (code, _, err) = run(&[
        "fit",
        "specs/commute.toml",
        "--save",
        saved.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let quiet = |_s: sharecast::estimate::Step| {};
    let m = worker::open_one(&path("specs/commute.toml"), Some(&saved), &quiet).unwrap();
    assert!(m
        .note
        .as_deref()
        .unwrap()
        .starts_with("estimates loaded from"));
    assert_close(
        "restored LL",
        m.fit.stats.log_likelihood,
        model("specs/commute.toml").fit.stats.log_likelihood,
        1e-12,
    );
    let other =
        worker::open_one(&path("specs/commute_generic.toml"), Some(&saved), &quiet).unwrap();
    assert!(other.note.as_deref().unwrap().contains("refitted"));
}

#[test]
fn heat_cells_carry_colour_and_symbols() {
    let colour = Theme { colour: true };
    assert!(colour.heat(-0.7, &ELASTICITY_CUTS).bg.is_some());
    assert_ne!(
        colour.heat(-0.7, &ELASTICITY_CUTS).bg,
        colour.heat(0.7, &ELASTICITY_CUTS).bg
    );
    let plain = Theme::plain().heat(-1.5, &ELASTICITY_CUTS);
    assert!(plain.bg.is_none() && plain.fg.is_none());
    assert_eq!(Theme::glyph(-1.5, &ELASTICITY_CUTS), "█");
    assert_eq!(Theme::glyph(0.01, &ELASTICITY_CUTS), " ");
}

/// A tmux server of its own, killed when the test ends however it ends.
struct Tmux(String);

impl Tmux {
    fn cmd(&self, args: &[&str]) -> String {
        let out = Command::new("tmux")
            .arg("-L")
            .arg(&self.0)
            .args(args)
            .output()
            .unwrap();
        String::from_utf8_lossy(&out.stdout).to_string()
    }
    fn wait(&self, what: &str, secs: u64) -> String {
        let t = Instant::now();
        loop {
            let s = self.cmd(&["capture-pane", "-p", "-t", "w"]);
            if s.contains(what) {
                return s;
            }
            assert!(
                t.elapsed() < Duration::from_secs(secs),
                "`{what}` did not appear:\n{s}"
            );
            std::thread::sleep(Duration::from_millis(100));
        }
    }
}

impl Tmux {
    /// Runs `shell` in a 120 × 40 window named `w`.
    fn start(&self, shell: &str) {
        self.cmd(&[
            "new-session",
            "-d",
            "-s",
            "w",
            "-x",
            "120",
            "-y",
            "40",
            shell,
        ]);
    }

    /// Sends `q` and waits for the shell to write the exit status to `status`: it must be 0.
    fn quit(&self, status: &Path) {
        self.cmd(&["send-keys", "-t", "w", "q"]);
        let start = Instant::now();
        while !std::fs::read_to_string(status).is_ok_and(|s| s.contains("EXIT=")) {
            assert!(
                start.elapsed() < Duration::from_secs(10),
                "the workbench did not quit"
            );
            std::thread::sleep(Duration::from_millis(100));
        }
        assert_eq!(std::fs::read_to_string(status).unwrap().trim(), "EXIT=0");
    }
}

impl Drop for Tmux {
    fn drop(&mut self) {
        let _ = Command::new("tmux")
            .args(["-L", &self.0, "kill-server"])
            .output();
    }
}

#[test]
fn the_real_binary_runs_in_tmux() {
    if Command::new("tmux").arg("-V").output().is_err() {
        eprintln!("note: tmux is not installed, so the end-to-end workbench test is skipped");
        return;
    }
    let dir = scratch("tui_tmux");
    let status = dir.join("exit");
    let t = Tmux(format!("sharecast-test-{}", std::process::id()));
    let shell = format!(
        "cd '{}' && '{}' explore specs/commute.toml; echo EXIT=$? > '{}'",
        root().display(),
        env!("CARGO_BIN_EXE_sharecast"),
        status.display()
    );
    t.start(&shell);
    t.wait("converged", 60);
    // Every registered view, by its number key: the status line names it.
    for (i, v) in sharecast::tui::views::all().iter().enumerate() {
        t.cmd(&["send-keys", "-t", "w", &(i + 1).to_string()]);
        let s = t.wait(&format!("‹{}›", v.title()), 10);
        assert!(!s.contains("panicked"), "{s}");
    }
    t.cmd(&["send-keys", "-t", "w", "2"]);
    t.wait("-0.82712", 10);
    t.cmd(&["send-keys", "-t", "w", "5"]);
    t.wait("0.2329 → 0.2329", 10);
    t.cmd(&["send-keys", "-t", "w", "j", "j", "j", "j", "j", "j", "L"]);
    t.wait("0.2329 → 0.2202", 10);
    t.wait("band: 95% of 500", 30);
    t.quit(&status);
}

#[test]
fn a_nested_model_shows_its_nests_and_the_pull_within_them() {
    // Overview lists the nests; the diversion view shows withdrawn rail's riders
    // going mostly to bus, its nest-mate (the library's removal figures).
    let mut app = demo(&["specs/commute_nested.toml"]);
    let s = screen(&app, 120, 40);
    has(
        &s,
        &[
            "nested",
            "nest transit: bus, rail",
            "nest active: bike, walk",
            "in no nest (scale 1): car",
        ],
    );
    keys(&mut app, "2");
    has(
        &screen(&app, 120, 60),
        &["nest scale transit  (t and p against 1)", "lambda_transit"],
    );
    keys(&mut app, "4");
    let s = screen(&app, 120, 40);
    let m = model("specs/commute_nested.toml");
    let names = m.spec.alternative_names();
    let d = sharecast::analysis::diversion::removal(
        &*m.fit.family,
        &m.fit.design,
        &m.fit.beta,
        None,
        (&names, &(0..names.len()).collect::<Vec<usize>>()),
    );
    let to = |n: &str| {
        d.iter()
            .find(|r| r.removed == "rail" && r.to == n)
            .unwrap()
            .share
    };
    assert!(to("bus") > to("car") && to("bus") > to("bike") && to("bus") > to("walk"));
    has(&s, &[&format!("{:.3}", to("bus"))]);
}

#[test]
fn an_ordered_model_says_which_views_do_not_apply() {
    let mut app = demo(&["specs/delivery_ratings.toml"]);
    has(
        &screen(&app, 120, 40),
        &["ordered-logit", "very_poor", "excellent"],
    );
    keys(&mut app, "4");
    has(
        &screen(&app, 120, 40),
        &["diversion does not apply to the ordered-logit family"],
    );
    keys(&mut app, "2");
    has(
        &screen(&app, 120, 60),
        &[
            "cut-points",
            "cut_very_poor",
            "wait_minutes",
            "cut-points on one axis of the latent index",
        ],
    );
    // The curve view sweeps the characteristics, for everyone at once.
    keys(&mut app, "6");
    has(
        &screen(&app, 120, 40),
        &["(everyone)", "wait_minutes of everyone scaled"],
    );
}

#[test]
fn a_message_goes_when_the_view_changes() {
    // Regression: a message said on one view stayed on screen on the next.
    let mut app = demo(&["specs/commute.toml"]);
    keys(&mut app, "2m");
    let text = app.status.as_ref().unwrap().text.clone();
    assert!(text.contains("one model is open"), "{text}");
    assert!(screen(&app, 100, 30).contains("one model is open"));
    keys(&mut app, "3");
    assert!(app.status.is_none());
    assert!(!screen(&app, 100, 30).contains("one model is open"));
    // the same view again keeps it
    keys(&mut app, "m3");
    assert!(app.status.is_some());
}

#[test]
fn a_mixed_model_shows_each_random_coefficient_and_simulated_what_ifs() {
    // The estimates view draws each random coefficient's distribution with the
    // share below zero from the library (`analysis::random::histogram`); the
    // what-if view says its figures are simulated.
    let mut app = demo(&["specs/express_survey.toml"]);
    has(
        &screen(&app, 120, 40),
        &[
            "mixed",
            "random coefficients: asc_rail normal, cost negative-lognormal",
        ],
    );
    keys(&mut app, "2");
    let s = screen(&app, 140, 60);
    has(
        &s,
        &[
            "random coefficients across decision makers",
            "asc_rail_spread",
        ],
    );
    // Its random coefficients are independent: no grid of correlations, and
    // it is in preference space: no units.
    for gone in ["correlated tastes", "price scale or value in"] {
        assert!(!s.contains(gone), "`{gone}` on the screen:\n{s}");
    }
    let m = model("specs/express_survey.toml");
    let terms = m.fit.family.random_coefficients();
    for t in &terms {
        let h = sharecast::analysis::random::histogram(t, &m.fit.beta, 20);
        has(&s, &[&format!("below 0: {:.1}%", 100.0 * h.below_zero)]);
    }
    // Zero is marked inside the time coefficient's range (a normal with a
    // small share above zero), not inside cost's (all below zero).
    let time_line = s
        .lines()
        .find(|l| l.contains("below 0") && l.contains("  time"))
        .unwrap();
    assert!(time_line.contains('┃'), "{time_line}");
    let cost_line = s.lines().find(|l| l.contains("below 0: 100.0%")).unwrap();
    assert!(!cost_line.contains('┃'), "{cost_line}");
    // The negative-lognormal cost's location is labelled as the mean of its
    // logarithm, with the coefficient's median (-exp(location), a fact of the
    // distribution) beside it.
    let k = m.fit.names.iter().position(|n| n == "cost").unwrap();
    let median = -m.fit.beta[k].exp();
    has(
        &s,
        &[
            "cost (mean of log)",
            &format!(
                "median across decision makers {}",
                sharecast::report::num(median, 0).trim()
            ),
        ],
    );
    keys(&mut app, "5j");
    let jobs = press(&mut app, KeyCode::Char('L'));
    drain(&mut app, jobs);
    has(
        &screen(&app, 120, 40),
        &["simulated: each decision maker's shares average over their draws"],
    );
}

#[test]
fn a_multinomial_probit_shows_its_error_structure_in_every_view() {
    // The overview names the structure; the estimates view lists the implied
    // correlations with their errors from the library's analysis; the
    // elasticity, diversion and what-if views open on the family.
    let mut app = demo(&["specs/express_probit.toml"]);
    has(
        &screen(&app, 120, 40),
        &["probit", "errors: full covariance"],
    );
    keys(&mut app, "2");
    let s = screen(&app, 140, 70);
    let m = model("specs/express_probit.toml");
    let a = sharecast::analysis::derived(&m.spec, &m.fit);
    let corr = a.iter().find(|r| r.name == "corr(rail, coach)").unwrap();
    has(
        &s,
        &[
            "correlation of the error differences against car",
            &format!("{:.4}", corr.value),
        ],
    );
    for view in ["3", "4", "5"] {
        keys(&mut app, view);
        let s = screen(&app, 120, 40);
        assert!(!s.contains("panicked"), "{s}");
    }
    has(&screen(&app, 120, 40), &["coach", "rail"]);
}

#[test]
fn every_registered_view_has_its_title_help_lines_and_keys() {
    // A view registered without a title, a line in the help's list of views,
    // or help for its own keys fails here; so does a command key that a
    // shared key shadows (it would never reach the view), and a view the
    // number keys cannot reach.
    use sharecast::tui::keys::{Action, Context};
    let app = demo(&["specs/commute.toml"]);
    let help = keys::help(&app.views);
    let listed = &help.iter().find(|(n, _)| n == "views").unwrap().1;
    assert!(app.views.len() <= 9, "the number keys reach nine views");
    let mut titles = Vec::new();
    for (i, v) in app.views.iter().enumerate() {
        assert!(!v.title().is_empty() && !v.about().is_empty(), "view {i}");
        assert!(
            !titles.contains(&v.title()),
            "two views titled {}",
            v.title()
        );
        titles.push(v.title());
        let line = (format!("{} {}", i + 1, v.title()), v.about().to_string());
        assert!(
            listed.contains(&line),
            "the help does not list {}",
            v.title()
        );
        let ctx = Context::View {
            keys: v.keys(),
            views: app.views.len(),
        };
        let digit = char::from_digit(i as u32 + 1, 10).unwrap();
        let press =
            |c: char| keys::action(ctx, KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE));
        assert_eq!(press(digit), Some(Action::GoTo(i)));
        for k in v.keys() {
            assert!(
                !k.label.is_empty() && !k.help.is_empty(),
                "{}: {k:?}",
                v.title()
            );
            for c in k.chars.chars() {
                assert_eq!(
                    press(c),
                    Some(Action::Command(c)),
                    "{}: `{c}` is shadowed",
                    v.title()
                );
            }
        }
        if !v.keys().is_empty() {
            let own = help.iter().find(|(n, _)| n == v.title());
            assert!(
                own.is_some_and(|(_, lines)| lines.len() == v.keys().len()),
                "{}",
                v.title()
            );
        }
    }
}

#[test]
fn the_analysis_shows_its_progress_while_it_runs() {
    // The worker's analysis job reports its phases (the library's progress
    // ticks) before its result; a view waiting on it names the phase.
    let (mut app, jobs) = App::with_models(vec![model("specs/commute.toml")], Theme::plain());
    let tick = sharecast::progress::Tick {
        phase: "elasticities",
        done: 3,
        total: 10,
    };
    update(&mut app, Msg::Ticked { index: 0, tick });
    has(&screen(&app, 100, 30), &["analysing: elasticities 3/10"]);
    keys(&mut app, "3");
    has(&screen(&app, 100, 30), &["analysing: elasticities 3/10"]);
    let analyse = jobs
        .into_iter()
        .find(|j| matches!(j, Job::Analyse { .. }))
        .unwrap();
    let out = Mutex::new(Vec::new());
    worker::execute(analyse, &|m| out.lock().unwrap().push(m));
    let msgs = out.into_inner().unwrap();
    let phases: Vec<&str> = msgs
        .iter()
        .filter_map(|m| match m {
            Msg::Ticked { tick, .. } => Some(tick.phase),
            _ => None,
        })
        .collect();
    assert!(phases.contains(&"elasticities"), "{phases:?}");
    assert!(matches!(msgs.last(), Some(Msg::Analysed { .. })));
    for m in msgs {
        update(&mut app, m);
    }
    assert!(!screen(&app, 100, 30).contains("analysing"));
}
