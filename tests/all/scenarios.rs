//! Scenario simulation against closed forms, the facts of the logit model,
//! calibration, bands and exports.

use std::path::Path;

use sharecast::data::{self, load::read, Extra};
use sharecast::rng::Rng;
use sharecast::scenario::{self, calibrate, export, prepare, Options, Scenario};
use sharecast::spec::Spec;

use crate::common::*;

fn scenario(text: &str, spec: &Spec) -> Scenario {
    Scenario::from_str(text, Path::new("scenario.toml"), spec).unwrap()
}

#[test]
fn binary_logit_shares_follow_the_logistic_function() {
    // Textbook formula: P(go) = 1 / (1 + exp(-(V_go - V_stay))), hand-computed case with
    // all parameters fixed: asc_go = 0.5, price = -0.2; prices 3 (go) and 1 (stay).
    let dir = scratch("binary_closed_form");
    write(&dir, "d.csv", "choice,p_stay,p_go\nstay,1,3\ngo,1,3\n");
    let spec_text = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"choice\"\n[model]\nfamily = \"logit\"\nbase = \"stay\"\n[alternatives.stay]\n[alternatives.go]\n[[attribute]]\nname = \"price\"\ncolumns = { stay = \"p_stay\", go = \"p_go\" }\n[parameters]\nasc_go = { fixed = 0.5 }\nprice = { fixed = -0.2 }\n";
    let spec = sharecast::model::parse_spec(spec_text, &dir.join("s.toml")).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let fit = fit_spec(&spec, &ds);
    let sc = scenario(
        "[[change]]\nattribute = \"price\"\nalternative = \"go\"\nadd = 2.0\n",
        &spec,
    );
    let f = scenario::forecast(
        &spec,
        &fit,
        &ds,
        &sc,
        &Options {
            draws: 0,
            ..Options::default()
        },
    )
    .unwrap();
    let logistic = |v: f64| 1.0 / (1.0 + (-v).exp());
    // base: V_go - V_stay = 0.5 - 0.2*3 + 0.2*1 = 0.1; scenario: 0.1 - 0.4 = -0.3
    assert!((f.shares[1].base - logistic(0.1)).abs() < 1e-15);
    assert!((f.shares[1].scenario - logistic(-0.3)).abs() < 1e-15);
    assert!((f.shares[0].scenario - (1.0 - logistic(-0.3))).abs() < 1e-15);
}

#[test]
fn changing_nothing_reproduces_the_base_exactly() {
    // Fact of the method: a scenario that changes nothing forecasts the base.
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    for text in [
        "name = \"nothing\"\n",
        "[[change]]\nattribute = \"cost\"\nalternative = \"rail\"\nmultiply = 1.0\n",
        "[[change]]\nattribute = \"time\"\nalternative = \"bus\"\nadd = 0.0\n",
        "[[change]]\nattribute = \"income\"\nmultiply = 1.0\n",
    ] {
        let f = scenario::forecast(
            &spec,
            &fit,
            &ds,
            &scenario(text, &spec),
            &Options {
                draws: 0,
                ..Options::default()
            },
        )
        .unwrap();
        for r in &f.shares {
            assert_eq!(r.base, r.scenario, "{text}: {}", r.alternative);
        }
        assert!(f.switching.is_empty(), "{text}: nobody switches");
    }
}

#[test]
fn removal_redistributes_in_proportion_in_every_situation() {
    // Fact of the method (IIA): withdrawing k gives P'_j = P_j / (1 - P_k) in each situation.
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let sc = scenario("remove = [\"rail\"]\n", &spec);
    let prep = prepare::prepare(&spec, &fit, &ds.table, &sc).unwrap();
    let dir = scratch("removal_iia");
    let out = dir.join("p.csv");
    export::per_situation(&out, false, &*fit.family, &fit.design, &fit.beta, &prep).unwrap();
    let names: Vec<String> = ["car", "bus", "rail", "bike", "walk"]
        .iter()
        .flat_map(|a| [format!("base_{a}"), format!("scenario_{a}")])
        .collect();
    let t = read(&out, &names, &[]).unwrap();
    let col = |n: &str| t.raw_numbers(n).unwrap();
    for i in 0..t.nrows {
        let pk = col("base_rail")[i];
        for a in ["car", "bus", "bike", "walk"] {
            let want = col(&format!("base_{a}"))[i] / (1.0 - pk);
            let got = col(&format!("scenario_{a}"))[i];
            assert!((got - want).abs() < 1e-12, "row {i} {a}: {got} vs {want}");
        }
        assert_eq!(col("scenario_rail")[i], 0.0);
    }
}

#[test]
fn calibration_reaches_the_targets_and_keeps_the_other_parameters() {
    // Common practice: asc_j += ln(target_j / predicted_j) until shares match.
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let targets = vec![(0, 0.30), (1, 0.20), (2, 0.22), (3, 0.09), (4, 0.19)];
    let c = calibrate::calibrate(
        &spec,
        &fit.design,
        &*fit.family,
        &fit.beta,
        &targets,
        1e-8,
        1000,
    )
    .unwrap();
    let s = sharecast::analysis::simulate::shares(&*fit.family, &fit.design, &c.beta);
    for (j, t) in &targets {
        assert!((s[*j] - t).abs() < 1e-8, "{j}: {} vs {t}", s[*j]);
    }
    for (k, p) in spec.parameters.iter().enumerate() {
        if p.term != sharecast::spec::Term::Constant {
            assert_eq!(c.beta[k], fit.beta[k], "{} moved", p.name);
        }
    }
    assert!(c.iterations > 0);
}

fn simulated(n: usize, seed: u64) -> (Spec, data::Dataset) {
    let dir = scratch(&format!("bands_{n}"));
    let mut rng = Rng::new(seed);
    let mut csv = String::from("choice,ca,cb,cc\n");
    for _ in 0..n {
        let c = [
            rng.uniform() * 4.0,
            rng.uniform() * 4.0,
            rng.uniform() * 4.0,
        ];
        let v = [0.0 - 0.8 * c[0], 0.3 - 0.8 * c[1], -0.2 - 0.8 * c[2]];
        let u: Vec<f64> = v.iter().map(|x| x + rng.gumbel()).collect();
        let best = (0..3).fold(0, |b, j| if u[j] > u[b] { j } else { b });
        csv.push_str(&format!(
            "{},{:.4},{:.4},{:.4}\n",
            ["a", "b", "c"][best],
            c[0],
            c[1],
            c[2]
        ));
    }
    write(&dir, "d.csv", &csv);
    let text = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"choice\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[alternatives.c]\n[[attribute]]\nname = \"cost\"\ncolumns = { a = \"ca\", b = \"cb\", c = \"cc\" }\n";
    let spec = sharecast::model::parse_spec(text, &dir.join("s.toml")).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    (spec, ds)
}

#[test]
fn bands_shrink_toward_the_point_as_the_sample_grows() {
    // Sampling theory: parameter uncertainty falls like 1/sqrt(N), and so do the bands.
    let mut widths = Vec::new();
    for n in [400, 40_000] {
        let (spec, ds) = simulated(n, 99);
        let fit = fit_spec(&spec, &ds);
        let sc = scenario(
            "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nmultiply = 1.2\n",
            &spec,
        );
        let f = scenario::forecast(
            &spec,
            &fit,
            &ds,
            &sc,
            &Options {
                draws: 400,
                ..Options::default()
            },
        )
        .unwrap();
        let b = &f.shares[1];
        assert!(b.low <= b.scenario && b.scenario <= b.high, "{b:?}");
        widths.push(b.high - b.low);
    }
    assert!(widths[1] < widths[0] / 5.0, "widths {widths:?}");
}

#[test]
fn exports_read_back_equal_the_json_figures() {
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let sc = Scenario::from_file(&path("specs/scenarios/rail_fare_up.toml"), &spec).unwrap();
    let f = scenario::forecast(
        &spec,
        &fit,
        &ds,
        &sc,
        &Options {
            draws: 50,
            ..Options::default()
        },
    )
    .unwrap();
    let dir = scratch("exports");
    for ext in ["csv", "parquet"] {
        let out = dir.join(format!("f.{ext}"));
        export::forecast(&out, false, &f).unwrap();
        let nums: Vec<String> = ["base", "scenario", "change", "low", "high"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        let t = read(
            &out,
            &nums,
            &["alternative".to_string(), "segment".to_string()],
        )
        .unwrap();
        assert_eq!(t.nrows, f.shares.len());
        let alts = t.keys("alternative", "test").unwrap();
        for (i, r) in f.shares.iter().enumerate() {
            assert_eq!(alts[i], r.alternative);
            for (n, want) in [
                ("base", r.base),
                ("scenario", r.scenario),
                ("change", r.change),
                ("low", r.low),
                ("high", r.high),
            ] {
                let got = t.raw_numbers(n).unwrap()[i];
                assert!(
                    (got - want).abs() <= 1e-15 * want.abs().max(1.0),
                    "{ext} {n} {}: {got} vs {want}",
                    r.alternative
                );
            }
        }
        // never overwritten without force
        assert!(export::forecast(&out, false, &f).is_err());
        assert!(export::forecast(&out, true, &f).is_ok());
    }
    // no temporary files left behind
    let leftovers: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty());
}

#[test]
fn new_alternative_borrows_its_model_and_saved_scenarios_round_trip() {
    let (spec, ds) = load("specs/commute.toml");
    let fit = fit_spec(&spec, &ds);
    let sc = Scenario::from_file(&path("specs/scenarios/tram_line.toml"), &spec).unwrap();
    let f = scenario::forecast(
        &spec,
        &fit,
        &ds,
        &sc,
        &Options {
            draws: 0,
            ..Options::default()
        },
    )
    .unwrap();
    let tram = f.shares.iter().find(|r| r.alternative == "tram").unwrap();
    assert!(tram.scenario > 0.0 && tram.base == 0.0);
    let total: f64 = f.shares.iter().map(|r| r.scenario).sum();
    assert!((total - 1.0).abs() < 1e-12);
    // written back out, the scenario reads in as the same scenario
    let again = Scenario::from_str(&sc.to_toml(&spec), Path::new("x.toml"), &spec).unwrap();
    assert_eq!(again, sc);
    let sc2 = Scenario::from_file(&path("specs/scenarios/east_bus_lane.toml"), &spec).unwrap();
    assert_eq!(
        Scenario::from_str(&sc2.to_toml(&spec), Path::new("x.toml"), &spec).unwrap(),
        sc2
    );
}

#[test]
fn scenario_errors_name_the_key() {
    let (spec, _) = load("specs/commute.toml");
    let cases = [
        ("[[change]]\nattribute = \"fare\"\nalternative = \"rail\"\nmultiply = 1.1\n", "`fare`"),
        ("[[change]]\nattribute = \"cost\"\nalternative = \"ferry\"\nmultiply = 1.1\n", "`ferry`"),
        ("[[change]]\nattribute = \"cost\"\nalternative = \"rail\"\nmultiply = 1.1\nadd = 1\n", "exactly one of"),
        ("[[change]]\nattribute = \"cost\"\nalternative = \"rail\"\nmultiply = 1.1\nwhere = \"district === 3\"\n", "at character"),
        ("[[change]]\nattribute = \"cost\"\nmultiply = 1.1\n", "name the `alternative`"),
        ("remove = [\"hovercraft\"]\n", "remove"),
        ("[[new_alternative]]\nname = \"tram\"\nlike = \"rail\"\nattributes = { colour = 1 }\n", "colour"),
        ("speed = 3\n", "speed"),
    ];
    for (text, word) in cases {
        let e = Scenario::from_str(text, Path::new("bad.toml"), &spec)
            .unwrap_err()
            .to_string();
        assert!(e.contains("bad.toml") && e.contains(word), "{text}: {e}");
    }
}

#[test]
fn simulate_command_writes_and_refuses_to_overwrite() {
    let dir = scratch("simulate_cli");
    let out = dir.join("forecast.csv");
    let out_s = out.to_str().unwrap();
    let args = [
        "simulate",
        "specs/commute.toml",
        "--scenario",
        "specs/scenarios/rail_fare_up.toml",
        "--draws",
        "20",
        "--out",
        out_s,
    ];
    let (code, stdout, err) = run(&args);
    assert_eq!(code, 0, "{err}");
    assert!(stdout.contains("Rail fare +10%") && stdout.contains("Cautions"));
    let before = std::fs::read(&out).unwrap();
    let (code, _, err) = run(&args);
    assert_ne!(code, 0);
    assert!(err.contains("--force"), "{err}");
    assert_eq!(std::fs::read(&out).unwrap(), before);
    let (code, json, _) = run(&[
        "simulate",
        "specs/commute.toml",
        "--scenario",
        "specs/scenarios/rail_fare_up.toml",
        "--draws",
        "20",
        "--json",
    ]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    for key in [
        "scenario",
        "draws",
        "seed",
        "shares",
        "switching",
        "segments",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    let (code, json, _) = run(&[
        "sweep",
        "specs/commute.toml",
        "--attribute",
        "cost",
        "--alternative",
        "rail",
        "--from",
        "0.8",
        "--to",
        "1.4",
        "--steps",
        "13",
        "--json",
    ]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let pts = v["points"].as_array().unwrap();
    assert_eq!(pts.len(), 13);
    // rail's share falls as its cost rises (a negative cost coefficient)
    let rail = |p: &serde_json::Value| p["shares"][2].as_f64().unwrap();
    assert!(rail(&pts[0]) > rail(&pts[12]));
}
