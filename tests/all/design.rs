//! Survey designs (`src/experiment`): the D- and A-errors, standard errors
//! and sample sizes against the independent numpy reference
//! (tests/reference/design_reference.py), the known optimum of Hadamard's
//! bound, the search against random starts, and the rules a design keeps.

use std::path::Path;

use sharecast::experiment::info::{criteria, standard_errors, Draws};
use sharecast::experiment::rules::Rules;
use sharecast::experiment::tasks::{balanced, level_counts, Tasks};
use sharecast::experiment::{self, Plan};
use sharecast::progress::QUIET;

use crate::common::{assert_close, path, scratch, write};

fn reference() -> serde_json::Value {
    let text =
        std::fs::read_to_string(path("tests/fixtures/design/design_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn numbers(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap_or(f64::NAN))
        .collect()
}

/// A plan read from a design file's text.
pub fn plan_of(dir: &Path, name: &str, text: &str) -> Plan {
    experiment::read(&write(dir, name, text)).unwrap()
}

#[test]
fn criteria_equal_the_numpy_reference_fixed_and_bayesian() {
    // Source: tests/reference/design_reference.py (numpy), the logit's Fisher
    // information Σ X'(diag P − PP')X (Huber & Zwerina 1996), D-error
    // det(I⁻¹)^(1/K), A-error trace(I⁻¹)/K, their means over prior draws
    // (Kessels et al. 2006), s.e. sqrt(diag I⁻¹) and n = (1.96 se/|β|)²
    // (Rose & Bliemer 2013), on the reference's own draws.
    let dir = scratch("design_reference");
    let r = reference();
    for case in r["cases"].as_array().unwrap() {
        let name = case["name"].as_str().unwrap();
        let plan = plan_of(
            &dir,
            &format!("{name}.toml"),
            case["design_toml"].as_str().unwrap(),
        );
        let columns: Vec<String> = plan.columns.iter().map(|c| c.name.clone()).collect();
        let want: Vec<String> = case["columns"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c.as_str().unwrap().to_string())
            .collect();
        assert_eq!(columns, want, "{name}: columns");
        let params: Vec<String> = case["parameters"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c.as_str().unwrap().to_string())
            .collect();
        assert_eq!(plan.parameters(), params, "{name}: parameters");
        let rows: Vec<Vec<f64>> = case["tasks"]
            .as_array()
            .unwrap()
            .iter()
            .map(numbers)
            .collect();
        let tasks = Tasks::from_values(&plan, &rows).unwrap();
        let betas: Vec<f64> = case["betas"]
            .as_array()
            .unwrap()
            .iter()
            .flat_map(numbers)
            .collect();
        let draws = Draws {
            k: params.len(),
            betas,
        };
        let c = criteria(&plan, &tasks, &draws);
        assert_close(
            &format!("{name}: d_error"),
            c.d_error,
            case["d_error"].as_f64().unwrap(),
            1e-9,
        );
        assert_close(
            &format!("{name}: a_error"),
            c.a_error,
            case["a_error"].as_f64().unwrap(),
            1e-9,
        );
        let at_means = criteria(&plan, &tasks, &Draws::means(&plan));
        let want = case["d_error_at_means"].as_f64().unwrap();
        assert_close(
            &format!("{name}: d_error_at_means"),
            at_means.d_error,
            want,
            1e-9,
        );
        let se = standard_errors(&plan, &tasks).unwrap();
        for (k, want) in numbers(&case["standard_errors"]).iter().enumerate() {
            assert_close(&format!("{name}: se {}", params[k]), se[k], *want, 1e-9);
        }
    }
}

#[test]
fn the_documents_figures_are_those_of_its_tasks_and_sample_sizes_follow() {
    // The document's D-error is the criterion of the tasks it lists (the
    // formula is checked against numpy above); sample sizes are
    // (1.96 se / |prior|)² (Rose & Bliemer 2013), none for a zero prior.
    let dir = scratch("design_document");
    let r = reference();
    let case = &r["cases"][3];
    let plan = plan_of(&dir, "three.toml", case["design_toml"].as_str().unwrap());
    let out = experiment::make(&plan, QUIET).unwrap();
    let rows: Vec<Vec<f64>> = out.tasks.iter().map(|t| t.levels.clone()).collect();
    let tasks = Tasks::from_values(&plan, &rows).unwrap();
    let c = criteria(&plan, &tasks, &Draws::means(&plan));
    assert_close("d_error", out.d_error, c.d_error, 1e-12);
    assert_close("a_error", out.a_error, c.a_error, 1e-12);
    for p in &out.standard_errors {
        let se = p.standard_error.unwrap();
        match p.sample_size {
            Some(n) => assert_close(
                &p.parameter,
                n,
                (1.96 * se / p.prior.mean.abs()).powi(2),
                1e-12,
            ),
            None => assert_eq!(p.prior.mean, 0.0, "{}: no sample size", p.parameter),
        }
        if let (Some(n), Some(m)) = (p.sample_size, p.respondents) {
            assert_close("respondents", m, n * plan.blocks as f64, 1e-12);
        }
    }
    // The search beats the reference's own repaired random design.
    assert!(
        out.d_error < case["d_error"].as_f64().unwrap(),
        "{} vs {}",
        out.d_error,
        case["d_error"]
    );
}

const HADAMARD: &str = r#"title = "six binary attributes"
[design]
alternatives = ["A", "B"]
tasks = 8
seed = 3
starts = 20
[[attribute]]
name = "a1"
levels = [0, 1]
[[attribute]]
name = "a2"
levels = [0, 1]
[[attribute]]
name = "a3"
levels = [0, 1]
[[attribute]]
name = "a4"
levels = [0, 1]
[[attribute]]
name = "a5"
levels = [0, 1]
[[attribute]]
name = "a6"
levels = [0, 1]
"#;

#[test]
fn the_search_reaches_hadamards_bound_for_six_binary_attributes_in_eight_tasks() {
    // With zero priors each task's information is d d'/4 (d the difference of
    // the two profiles); by Hadamard's inequality the D-error is at least
    // 4 / (N (l1 − l0)²) = 0.5, attained by foldover pairs whose differences
    // form an orthogonal array (Street & Burgess 2007).
    let dir = scratch("design_hadamard");
    let plan = plan_of(&dir, "h.toml", HADAMARD);
    let out = experiment::make(&plan, QUIET).unwrap();
    assert!((out.d_error - 0.5).abs() < 1e-9, "D-error {}", out.d_error);
    for d in out
        .search
        .start_d_errors
        .iter()
        .chain(&out.search.reached_d_errors)
    {
        assert!(*d >= 0.5 - 1e-12, "a design below Hadamard's bound: {d}");
    }
    // Every task is a foldover: B is A with each level flipped.
    for t in &out.tasks {
        for k in 0..6 {
            assert_eq!(
                t.levels[2 * k] + t.levels[2 * k + 1],
                1.0,
                "task {}",
                t.task
            );
        }
    }
}

pub const WAVE: &str = r#"title = "Express coach survey, second wave"
[design]
alternatives = ["A", "B"]
tasks = 16
blocks = 2
seed = 4
draws = 300
[[attribute]]
name = "cost"
levels = [2, 4, 6, 8]
prior = { mean = -0.3, sd = 0.1 }
[[attribute]]
name = "time"
levels = [20, 30, 40, 50]
prior = -0.05
[[attribute]]
name = "headway"
levels = [10, 20, 30]
prior = -0.02
[[forbid]]
when = "cost_A > 6 && time_A > 40"
"#;

#[test]
fn the_search_beats_random_balanced_starts_and_keeps_every_rule() {
    let dir = scratch("design_rules");
    let plan = plan_of(&dir, "wave.toml", WAVE);
    let out = experiment::make(&plan, QUIET).unwrap();
    let mut starts = out.search.start_d_errors.clone();
    starts.sort_by(|a, b| a.total_cmp(b));
    let median = starts[starts.len() / 2];
    // Figures recorded in docs/design.md: a clear margin over random
    // level-balanced designs (common practice: efficient designs need markedly
    // fewer respondents than random ones).
    assert!(
        out.d_error < 0.75 * median,
        "{} vs random median {median}",
        out.d_error
    );
    let rows: Vec<Vec<f64>> = out.tasks.iter().map(|t| t.levels.clone()).collect();
    let tasks = Tasks::from_values(&plan, &rows).unwrap();
    assert!(balanced(&level_counts(&plan, &tasks)));
    assert!(out.balanced);
    let rules = Rules::new(&plan);
    assert_eq!(rules.breaches(&tasks).total(), 0);
    for (i, t) in out.tasks.iter().enumerate() {
        let (cost_a, time_a) = (t.levels[0], t.levels[2]);
        assert!(
            !(cost_a > 6.0 && time_a > 40.0),
            "task {} is forbidden",
            i + 1
        );
        // Dominance, checked here from the levels: with every prior negative,
        // A dominates B when no level of A is larger (and B likewise).
        let a: Vec<f64> = t.levels.iter().step_by(2).copied().collect();
        let b: Vec<f64> = t.levels.iter().skip(1).step_by(2).copied().collect();
        let a_dom = a.iter().zip(&b).all(|(x, y)| x <= y);
        let b_dom = a.iter().zip(&b).all(|(x, y)| y <= x);
        assert!(
            !a_dom && !b_dom,
            "task {} has a dominant alternative",
            i + 1
        );
        for u in &out.tasks[..i] {
            assert_ne!(u.levels, t.levels, "task {} repeats task {}", i + 1, u.task);
            let swapped: Vec<f64> = t.levels.chunks(2).flat_map(|p| [p[1], p[0]]).collect();
            assert_ne!(
                u.levels,
                swapped,
                "task {} repeats task {} swapped",
                i + 1,
                u.task
            );
        }
    }
    // Each block has 8 tasks, each level of cost twice.
    for c in &out.level_counts {
        for b in &c.by_block {
            let (lo, hi) = (b.iter().min().unwrap(), b.iter().max().unwrap());
            assert!(hi - lo <= 1, "{}: {b:?}", c.column);
        }
    }
}

#[test]
fn the_same_seed_gives_the_same_design() {
    let dir = scratch("design_seed");
    let plan = plan_of(&dir, "wave.toml", WAVE);
    let a = experiment::make(&plan, QUIET).unwrap();
    let b = experiment::make(&plan, QUIET).unwrap();
    assert_eq!(a.tasks, b.tasks);
    assert_eq!(a.d_error.to_bits(), b.d_error.to_bits());
    let other = plan_of(&dir, "wave5.toml", &WAVE.replace("seed = 4", "seed = 5"));
    let c = experiment::make(&other, QUIET).unwrap();
    assert_ne!(a.tasks, c.tasks, "another seed, another search");
}
