//! Progress reports of long work: a sink passed to the analysis, a banded
//! forecast, a streamed forecast and a demand curve sees each phase, with
//! done never past the total and every phase ending with all its steps done;
//! the figures are the same bit for bit with and without a sink; the command
//! line writes no progress line when stderr is not a terminal.

use std::collections::BTreeMap;
use std::path::Path;
use std::sync::Mutex;

use sharecast::analysis;
use sharecast::data::{self, Extra};
use sharecast::progress::{Phase, Tick, QUIET};
use sharecast::scenario::{self, sweep, Options, Scenario};

use crate::common::*;

/// A sink that keeps every tick.
#[derive(Default)]
struct Collect(Mutex<Vec<Tick>>);

impl Collect {
    fn sink(&self) -> impl Fn(Tick) + Sync + '_ {
        |t| self.0.lock().unwrap().push(t)
    }

    /// Checks every phase's ticks and returns the phases in the order begun.
    #[track_caller]
    fn phases(&self) -> Vec<&'static str> {
        let ticks = self.0.lock().unwrap();
        assert!(!ticks.is_empty(), "no tick at all");
        let mut order = Vec::new();
        let mut last: BTreeMap<&str, Tick> = BTreeMap::new();
        for t in ticks.iter() {
            assert!(t.done <= t.total, "{t:?}: done past the total");
            if let Some(prev) = last.get(t.phase) {
                assert_eq!(prev.total, t.total, "{t:?}: the total changed");
                assert!(
                    prev.done <= t.done || prev.done == prev.total,
                    "{t:?} after {prev:?}"
                );
            } else {
                order.push(t.phase);
                assert_eq!(t.done, 0, "{t:?}: a phase starts with none done");
            }
            last.insert(t.phase, *t);
        }
        for (phase, t) in &last {
            assert_eq!(t.done, t.total, "phase `{phase}` ended at {t:?}");
        }
        order
    }
}

#[test]
fn a_phase_counts_its_steps_and_ends_with_all_of_them() {
    // Fact of the type: start reports none done, steps never reach the total
    // (finish reports it), finish reports it once.
    let c = Collect::default();
    let sink = c.sink();
    let phase = Phase::start(&sink, "work", 3);
    phase.step();
    phase.advance(2);
    phase.finish();
    let ticks = c.0.lock().unwrap().clone();
    let done: Vec<usize> = ticks.iter().map(|t| t.done).collect();
    assert_eq!(done, vec![0, 1, 3]);
    assert!(ticks.iter().all(|t| t.phase == "work" && t.total == 3));
}

#[test]
fn the_analysis_reports_each_section_and_its_figures_do_not_change() {
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let opts = analysis::Options {
        draws: 500,
        ..Default::default()
    };
    let quiet = analysis::analyse(&spec, &fit, &ds, &opts).unwrap();
    let c = Collect::default();
    let watched = analysis::analyse_with(&spec, &fit, &ds, &opts, &c.sink()).unwrap();
    let phases = c.phases();
    for want in [
        "elasticities",
        "value ratios",
        "diversion",
        "validation",
        "tests",
        "derived figures",
    ] {
        assert!(phases.contains(&want), "no `{want}` in {phases:?}");
    }
    // The elasticities' differenced errors take a step per free parameter.
    let total =
        c.0.lock()
            .unwrap()
            .iter()
            .find(|t| t.phase == "elasticities")
            .unwrap()
            .total;
    assert_eq!(total, fit.free.len() + 2);
    assert_eq!(
        serde_json::to_string(&quiet).unwrap(),
        serde_json::to_string(&watched).unwrap()
    );
}

#[test]
fn a_random_ratio_reports_its_krinsky_robb_draws() {
    // The express survey's mixed logit on 50 draws per respondent, to be quick.
    let text = std::fs::read_to_string(path("specs/express_survey.toml")).unwrap();
    let data = path("demo-data/express_survey.csv");
    let text = text
        .replace("draws = 500", "draws = 50")
        .replace("../demo-data/express_survey.csv", data.to_str().unwrap());
    let spec_path = write(&scratch("progress_ratio"), "express.toml", &text);
    let spec = sharecast::model::read_spec(&spec_path).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    let draws = analysis::delta::draws(&fit, 300, 7);
    let c = Collect::default();
    let watched = analysis::ratios::ratios_with(&fit, &spec.ratios, draws.as_deref(), 7, &c.sink());
    let quiet = analysis::ratios::ratios(&fit, &spec.ratios, draws.as_deref(), 7);
    assert_eq!(c.phases(), vec!["value ratios", "Krinsky-Robb draws"]);
    assert_eq!(
        serde_json::to_string(&quiet).unwrap(),
        serde_json::to_string(&watched).unwrap()
    );
}

fn scenario_file(spec: &sharecast::spec::Spec) -> Scenario {
    Scenario::from_file(&path("specs/scenarios/rail_fare_up.toml"), spec).unwrap()
}

#[test]
fn a_banded_forecast_reports_a_step_per_draw_and_its_figures_do_not_change() {
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let sc = scenario_file(&spec);
    let opts = Options {
        draws: 60,
        ..Options::default()
    };
    let quiet = scenario::forecast(&spec, &fit, &ds, &sc, &opts).unwrap();
    let c = Collect::default();
    let watched = scenario::forecast_with(&spec, &fit, &ds, &sc, &opts, &c.sink()).unwrap();
    assert_eq!(c.phases(), vec!["forecast bands"]);
    let ticks = c.0.lock().unwrap().clone();
    assert!(ticks.iter().all(|t| t.total == 60));
    assert_eq!(
        ticks.len(),
        61,
        "one tick before the draws and one after each"
    );
    assert_eq!(
        serde_json::to_string(&quiet).unwrap(),
        serde_json::to_string(&watched).unwrap()
    );
}

#[test]
fn a_calibrated_forecast_reports_its_iterations_before_the_bands() {
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let sc = Scenario::from_file(&path("specs/scenarios/calibrated_walk_ban.toml"), &spec).unwrap();
    let opts = Options {
        draws: 20,
        ..Options::default()
    };
    let quiet = scenario::forecast(&spec, &fit, &ds, &sc, &opts).unwrap();
    let c = Collect::default();
    let watched = scenario::forecast_with(&spec, &fit, &ds, &sc, &opts, &c.sink()).unwrap();
    assert_eq!(c.phases(), vec!["calibration", "forecast bands"]);
    let iterations = quiet.calibration.as_ref().unwrap().iterations;
    let steps =
        c.0.lock()
            .unwrap()
            .iter()
            .filter(|t| t.phase == "calibration")
            .count();
    // A tick before, one per iteration (short of the limit) and the closing one.
    assert!(iterations > 0);
    assert_eq!(steps, iterations + 2);
    assert_eq!(
        serde_json::to_string(&quiet).unwrap(),
        serde_json::to_string(&watched).unwrap()
    );
}

#[test]
fn a_streamed_forecast_reports_the_file_read_and_its_figures_do_not_change() {
    let spec = sharecast::model::read_spec(&path("specs/commute.toml")).unwrap();
    let sc = scenario_file(&spec);
    let extra = Extra {
        numeric: sc.columns(),
        text: Vec::new(),
    };
    let ds = data::load(&spec, &extra).unwrap();
    let fit = fit_spec(&spec, &ds);
    let opts = Options {
        draws: 20,
        ..Options::default()
    };
    let file = path("demo-data/commute.csv");
    let run = |sink: sharecast::progress::Sink| {
        let mut chunks = data::stream::Chunks::open(&spec, &file, &extra, 700).unwrap();
        scenario::stream::forecast_with(&spec, &fit, &mut chunks, &sc, &opts, None, sink).unwrap()
    };
    let quiet = run(QUIET);
    let c = Collect::default();
    let watched = run(&c.sink());
    assert_eq!(c.phases(), vec!["forecast over the file"]);
    // 6,000 rows in chunks of 700: a tick before, one per chunk (the last
    // reaching the end of the file) and the closing one.
    let ticks = c.0.lock().unwrap().clone();
    assert!(ticks.len() >= 9, "{ticks:?}");
    assert_eq!(
        serde_json::to_string(&quiet).unwrap(),
        serde_json::to_string(&watched).unwrap()
    );
}

#[test]
fn a_demand_curve_reports_a_step_per_point() {
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let req = sweep::Request {
        attribute: "cost".into(),
        alternative: Some("rail".into()),
        from: 0.5,
        to: 1.5,
        steps: 7,
    };
    let c = Collect::default();
    let watched = sweep::sweep_with(&spec, &fit, &ds, &req, &c.sink()).unwrap();
    assert_eq!(c.phases(), vec!["demand curve"]);
    assert_eq!(c.0.lock().unwrap().len(), 8);
    let quiet = sweep::sweep(&spec, &fit, &ds, &req).unwrap();
    assert_eq!(
        serde_json::to_string(&quiet).unwrap(),
        serde_json::to_string(&watched).unwrap()
    );
}

#[test]
fn the_command_line_writes_no_progress_line_when_stderr_is_not_a_terminal() {
    // `run` captures stderr through a pipe, which is not a terminal.
    let dir = scratch("progress_no_tty");
    let out = dir.join("report.html");
    let out = out.to_str().unwrap();
    let (code, _, err) = run(&[
        "report",
        "specs/commute.toml",
        "--scenario",
        "specs/scenarios/rail_fare_up.toml",
        "--out",
        out,
        "--force",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains('\r'), "a progress line on a pipe: {err:?}");
    let (code, _, err) = run(&[
        "simulate",
        "specs/commute.toml",
        "--scenario",
        "specs/scenarios/rail_fare_up.toml",
        "--data",
        "demo-data/commute.csv",
        "--chunk-rows",
        "700",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains('\r'), "a progress line on a pipe: {err:?}");
    assert!(Path::new(out).exists());
}
