//! Mixed logit: recovery of generating means and spreads on a simulated panel
//! (consistency of simulated maximum likelihood as draws and decision makers
//! grow; Train, Discrete Choice Methods with Simulation, 2nd ed., ch. 10), a
//! Monte Carlo of interval coverage (ignored: slow), random characteristics,
//! and the spec errors of the family, each naming its key.

use std::sync::Arc;

use sharecast::data::Observations;
use sharecast::estimate::{self, Fit, Step};
use sharecast::rng::Rng;
use sharecast::spec::Spec;

use crate::common::*;

/// asc_b, asc_c fixed; time normal (mean, s.d.); cost negative-lognormal
/// (location and spread of the log of minus it).
const TRUTH: [(&str, f64); 6] = [
    ("asc_b", 0.4),
    ("asc_c", -0.3),
    ("cost", -0.6),
    ("time", -0.8),
    ("cost_spread", 0.5),
    ("time_spread", 0.6),
];

fn spec(draws: usize) -> Spec {
    let text = format!(
        "[data]\nfile = \"never-read.csv\"\nlayout = \"wide\"\nchoice = \"alt\"\ngroup = \"person\"\n\
         [model]\nfamily = \"mixed\"\nbase = \"a\"\n\
         [alternatives.a]\n[alternatives.b]\n[alternatives.c]\n\
         [[attribute]]\nname = \"cost\"\ncolumns = {{ a = \"ca\", b = \"cb\", c = \"cc\" }}\nrandom = \"negative-lognormal\"\n\
         [[attribute]]\nname = \"time\"\ncolumns = {{ a = \"ta\", b = \"tb\", c = \"tc\" }}\nrandom = \"normal\"\n\
         [simulation]\ndraws = {draws}\n"
    );
    sharecast::model::parse_spec(&text, std::path::Path::new("/nowhere/mixed-recovery.toml"))
        .unwrap()
}

/// A panel of `people` x `tasks` drawn from the mixed logit: each person's
/// coefficients drawn once, each choice the largest utility plus a Gumbel draw
/// (written apart from the estimator's code).
fn simulate(people: usize, tasks: usize, rng: &mut Rng) -> Observations {
    let t = |n: &str| TRUTH.iter().find(|x| x.0 == n).unwrap().1;
    let n = people * tasks;
    let (mut cost, mut time) = (Vec::with_capacity(3 * n), Vec::with_capacity(3 * n));
    let (mut chosen, mut group) = (Vec::with_capacity(n), Vec::with_capacity(n));
    for p in 0..people {
        let bc = -(t("cost") + t("cost_spread") * rng.normal()).exp();
        let bt = t("time") + t("time_spread") * rng.normal();
        for _ in 0..tasks {
            let mut best = (0, f64::NEG_INFINITY);
            for j in 0..3 {
                let c = 0.5 + 3.0 * rng.uniform();
                let tm = 0.2 + 2.0 * rng.uniform();
                cost.push(c);
                time.push(tm);
                let asc = [0.0, t("asc_b"), t("asc_c")][j];
                let u = asc + bc * c + bt * tm + rng.gumbel();
                if u > best.1 {
                    best = (j, u);
                }
            }
            chosen.push(best.0 as u32);
            group.push(p as u32);
        }
    }
    Observations {
        offset: None,
        tables: None,
        situations: n,
        alternatives: 3,
        chosen,
        available: vec![true; 3 * n],
        weight: vec![1.0; n],
        weight_total: n as f64,
        group: Some(group),
        groups: people,
        attributes: vec![cost, time],
        characteristics: vec![],
        first_row: (1..=n).collect(),
    }
}

fn fit(spec: &Spec, obs: Observations) -> Fit {
    let quiet = |_s: Step| {};
    estimate::fit(spec, Arc::new(obs), &quiet).unwrap()
}

#[test]
fn a_simulated_panel_gives_back_its_means_and_spreads() {
    let spec = spec(200);
    let mut rng = Rng::new(20_261_205);
    let f = fit(&spec, simulate(2500, 6, &mut rng));
    assert!(f.stats.converged);
    for (name, truth) in TRUTH {
        let row = f.parameters.iter().find(|r| r.name == name).unwrap();
        let z = (row.estimate.abs() - truth.abs()) / row.std_error;
        // Spreads are compared in size: their sign carries no meaning.
        let z = if name.ends_with("_spread") {
            z
        } else {
            (row.estimate - truth) / row.std_error
        };
        assert!(
            z.abs() < 3.5,
            "{name} = {} (s.e. {}), truth {truth}",
            row.estimate,
            row.std_error
        );
    }
}

#[test]
#[ignore = "Monte Carlo, about a minute: cargo test --release -- --ignored mixed_monte_carlo"]
fn mixed_monte_carlo_coverage_of_95_percent_intervals() {
    // Pooled over parameters, the 95% intervals (robust, clustered by person)
    // should cover the truth near 95% of the time (fact of the method, up to
    // simulation bias with 100 draws and sampling noise of 200 replications: the binomial standard error of the pooled coverage is about 0.6 points).
    let spec = spec(100);
    let reps = 200;
    let mut covered = vec![0usize; TRUTH.len()];
    let mut rng = Rng::new(20_261_206);
    for r in 0..reps {
        let f = fit(&spec, simulate(600, 6, &mut rng));
        assert!(f.stats.converged, "replication {r}");
        for (p, (name, truth)) in TRUTH.iter().enumerate() {
            let row = f.parameters.iter().find(|x| x.name == *name).unwrap();
            let est = if name.ends_with("_spread") {
                row.estimate.abs()
            } else {
                row.estimate
            };
            let half = (row.ci_high - row.ci_low) / 2.0;
            if (est - truth).abs() <= half {
                covered[p] += 1;
            }
        }
    }
    let pooled = covered.iter().sum::<usize>() as f64 / (reps * TRUTH.len()) as f64;
    let per: Vec<String> = TRUTH
        .iter()
        .zip(&covered)
        .map(|((n, _), c)| format!("{n} {:.3}", *c as f64 / reps as f64))
        .collect();
    println!(
        "mixed Monte Carlo: {reps} replications of 600 people x 6 tasks, 100 Halton draws; pooled 95% coverage {pooled:.4}; {}",
        per.join(", ")
    );
    assert!((0.88..=0.99).contains(&pooled), "pooled coverage {pooled}");
}

#[test]
fn a_random_characteristic_varies_each_of_its_coefficients() {
    let text = std::fs::read_to_string(path("specs/express_survey.toml"))
        .unwrap()
        .replace("random_constants = [\"rail\"]", "")
        .replace(
            "[[attribute]]\nname = \"headway\"",
            "[[characteristic]]\nname = \"owner\"\ncolumn = \"car_owner\"\nalternatives = [\"rail\"]\nrandom = \"normal\"\n\n[[attribute]]\nname = \"headway\"",
        )
        .replace("draws = 500", "draws = 50");
    let dir = scratch("mixed-characteristic");
    std::fs::copy(
        path("demo-data/express_survey.csv"),
        dir.join("express_survey.csv"),
    )
    .unwrap();
    let text = text.replace("../demo-data/express_survey.csv", "express_survey.csv");
    let p = write(&dir, "spec.toml", &text);
    let spec = sharecast::model::read_spec(&p).unwrap();
    let names: Vec<&str> = spec.parameters.iter().map(|p| p.name.as_str()).collect();
    assert!(
        names.contains(&"owner_rail") && names.contains(&"owner_rail_spread"),
        "{names:?}"
    );
    let family = sharecast::model::for_spec(&spec).unwrap();
    let random: Vec<&str> = family
        .random_coefficients()
        .iter()
        .map(|t| spec.parameters[t.location].name.as_str())
        .collect();
    assert_eq!(random, ["cost", "time", "owner_rail"]);
}

#[test]
fn mixed_spec_errors_name_their_key() {
    let base = std::fs::read_to_string(path("specs/express_survey.toml")).unwrap();
    let dir = scratch("mixed-errors");
    let cases: Vec<(String, &str)> = vec![
        (
            base.replace("random = \"normal\"", "random = \"gamma\""),
            "[[attribute]] time: random: \"gamma\" is not a distribution",
        ),
        (
            base.replace("family = \"mixed\"", "family = \"logit\"")
                .replace("random_constants = [\"rail\"]", "")
                .replace(
                    "[simulation]\ndraws = 500\nsequence = \"halton\"\nseed = 7\n",
                    "",
                ),
            "[[attribute]] cost: random: coefficients that vary",
        ),
        (
            base.replace("family = \"mixed\"", "family = \"logit\"")
                .replace("random_constants = [\"rail\"]", ""),
            "`simulation` belongs to family \"probit\" or \"mixed\"",
        ),
        (
            base.replace("draws = 500", "draws = 0"),
            "[simulation].draws: at least 1",
        ),
        (
            base.replace("draws = 500", "draws = 1000000"),
            "[simulation].draws: 1000000 is more than",
        ),
        (
            base.replace("sequence = \"halton\"", "sequence = \"sobol\""),
            "[simulation].sequence: \"sobol\" is not known",
        ),
        (
            base.replace(
                "random_constants = [\"rail\"]",
                "random_constants = [\"car\"]",
            ),
            "[model].random_constants: `car` is the base",
        ),
        (
            base.replace(
                "random_constants = [\"rail\"]",
                "random_constants = [\"tram\"]",
            ),
            "[model].random_constants: `tram` is not an alternative",
        ),
        (
            base.replace("seed = 7", "seed = 7\nthreads = 2"),
            "[simulation]: unknown key `threads`",
        ),
        (
            base.replace("random_constants = [\"rail\"]", "")
                .replace("random = \"negative-lognormal\"", "")
                .replace("random = \"normal\"", ""),
            "needs at least one random coefficient",
        ),
    ];
    for (k, (text, want)) in cases.iter().enumerate() {
        let p = write(&dir, &format!("bad{k}.toml"), text);
        let err = sharecast::model::read_spec(&p)
            .map(|_| ())
            .unwrap_err()
            .to_string();
        assert!(err.contains(want), "case {k}: {err}");
    }
    // Draws that would not fit in memory are refused when the data are known,
    // with the amount they would need.
    // (Without the grouping each of the 4,800 situations is a decision maker:
    // 4,800 x 3 x 100,000 draws would take 11.5 GB.)
    let text = base
        .replace("draws = 500", "draws = 100000")
        .replace("group = \"respondent\"", "");
    let p = dir.join("huge.toml");
    std::fs::write(
        &p,
        text.replace("../demo-data", &path("demo-data").display().to_string()),
    )
    .unwrap();
    let (code, _, err) = run(&["fit", &p.display().to_string(), "--no-analysis"]);
    assert_ne!(code, 0);
    assert!(err.contains("GB of memory for the draws"), "{err}");
}

#[test]
fn a_fixed_lognormal_location_stays_where_the_spec_puts_it() {
    let dir = scratch("mixed-fixed-location");
    std::fs::copy(
        path("demo-data/express_survey.csv"),
        dir.join("express_survey.csv"),
    )
    .unwrap();
    let text = std::fs::read_to_string(path("specs/express_survey.toml"))
        .unwrap()
        .replace("../demo-data/express_survey.csv", "express_survey.csv")
        .replace("draws = 500", "draws = 50")
        + "\n[parameters]\ncost = { fixed = -1.2 }\n";
    let p = write(&dir, "spec.toml", &text);
    let spec = sharecast::model::read_spec(&p).unwrap();
    let ds = sharecast::data::load(&spec, &Default::default()).unwrap();
    let f = fit(&spec, ds.obs);
    let row = f.parameters.iter().find(|r| r.name == "cost").unwrap();
    assert!(row.fixed);
    assert_eq!(row.estimate, -1.2);
}

#[test]
fn a_model_without_standard_errors_still_reports_and_the_draws_check_says_so() {
    // Car is never available: its constant-free utility cannot be told apart,
    // the covariance is singular. The report still comes (the family's own
    // test is left out) and the simulation check cannot judge.
    let dir = scratch("mixed-no-errors");
    let csv = std::fs::read_to_string(path("demo-data/express_survey.csv")).unwrap();
    let mut lines = csv.lines();
    let header = lines.next().unwrap();
    let mut out = format!("{header}\n");
    for l in lines {
        let (rest, _) = l.rsplit_once(',').unwrap();
        if !l.contains(",car,") {
            out.push_str(&format!("{rest},0\n"));
        }
    }
    write(&dir, "express_survey.csv", &out);
    let text = std::fs::read_to_string(path("specs/express_survey.toml"))
        .unwrap()
        .replace("../demo-data/express_survey.csv", "express_survey.csv")
        .replace("draws = 500", "draws = 30");
    let p = write(&dir, "spec.toml", &text);
    let (code, out, err) = run(&[
        "fit",
        &p.display().to_string(),
        "--allow-unconverged",
        "--draws-check",
        "--draws",
        "0",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("Cautions"), "{out}");
    assert!(out.contains("cannot be judged"), "{out}");
}
