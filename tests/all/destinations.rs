//! Destination choice over tables of alternatives and pairs (layout
//! "tables"), full and sampled sets, against the independent numpy/scipy
//! implementation in tests/reference/destinations_reference.py (fixture
//! tests/fixtures/destinations_reference.json, invented data in
//! tests/fixtures/destinations/): the full-set logit, and the logit on the
//! same sampled sets, uniform and weighted with its correction. The tables
//! layout is also checked against the same data written in the long layout.

use std::path::Path;
use std::sync::Arc;

use serde_json::Value;
use sharecast::data::tables::sample::{self, Sets, EMPTY};
use sharecast::data::{self, Extra};
use sharecast::estimate::{self, Fit, Step};
use sharecast::spec::Spec;

use crate::common::*;

fn fixture() -> Value {
    let text = std::fs::read_to_string(path("tests/fixtures/destinations_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn case<'a>(r: &'a Value, name: &str) -> &'a Value {
    r["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == name)
        .unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

/// The fixture's attributes, in the reference's parameter order.
pub const ATTRIBUTES: &str = r#"
[[attribute]]
name = "time"
column = "time"

[[attribute]]
name = "time_shop"
column = "time"
times = "shop"

[[attribute]]
name = "jobs"
column = "log_jobs"

[[attribute]]
name = "intrazonal"
column = "intrazonal"
"#;

/// A spec over the fixture's tables in a scratch folder, with `extra` lines.
pub fn tables_spec(name: &str, extra: &str) -> (std::path::PathBuf, Spec) {
    let dir = scratch(&format!("destinations-{name}"));
    let data = path("tests/fixtures/destinations");
    let text = format!(
        "title = \"fixture destinations\"\n[data]\nfile = \"{}/trips.csv\"\nlayout = \"tables\"\nchoice = \"dest\"\n[data.alternatives]\nfile = \"{}/zones.csv\"\nid = \"zone\"\n[data.pairs]\nfile = \"{}/pairs.csv\"\nfrom = \"origin\"\nid = \"zone\"\n\n[model]\nconstants = false\n{ATTRIBUTES}\n{extra}",
        data.display(),
        data.display(),
        data.display()
    );
    let p = write(&dir, "spec.toml", &text);
    let spec = sharecast::model::read_spec(&p).unwrap();
    (dir, spec)
}

fn quiet(_s: Step) {}

fn fit_obs(spec: &Spec, obs: data::Observations) -> Fit {
    estimate::fit(spec, Arc::new(obs), &quiet).unwrap()
}

#[track_caller]
fn assert_all(what: &str, got: &[f64], want: &[f64], tol: f64) {
    assert_eq!(got.len(), want.len(), "{what}");
    for (k, (g, w)) in got.iter().zip(want).enumerate() {
        assert!(
            (g - w).abs() <= tol * w.abs().max(1.0),
            "{what}[{k}]: got {g}, want {w} (tolerance {tol})"
        );
    }
}

fn errors(fit: &Fit) -> Vec<f64> {
    fit.parameters.iter().map(|p| p.std_error).collect()
}

#[test]
fn the_full_sets_match_the_numpy_reference() {
    // Source: tests/reference/destinations_reference.py, case "full".
    let r = fixture();
    let c = case(&r, "full");
    let (_, spec) = tables_spec("full", "");
    let ds = data::load(&spec, &Extra::default()).unwrap();
    assert_eq!(ds.obs.alternatives, 40);
    let fit = fit_obs(&spec, ds.obs.clone());
    assert_all("estimates", &fit.beta, &floats(&c["estimates"]), 1e-6);
    assert_all("errors", &errors(&fit), &floats(&c["std_errors"]), 1e-6);
    assert_close(
        "LL",
        fit.stats.log_likelihood,
        c["log_likelihood"].as_f64().unwrap(),
        1e-9,
    );
    assert_close(
        "LL at 0",
        fit.stats.null_log_likelihood,
        c["log_likelihood_at_zero"].as_f64().unwrap(),
        1e-12,
    );
    let predicted: Vec<f64> = fit.shares.iter().map(|s| s.predicted).collect();
    assert_all("shares", &predicted, &floats(&c["predicted_shares"]), 1e-6);
}

/// The fixture's sets file as `Sets` over `obs` (the chosen in slot 0).
fn sets_from(file: &Path, obs: &data::Observations, ids: &[String]) -> Sets {
    let text = std::fs::read_to_string(file).unwrap();
    let mut per: Vec<Vec<(u32, u32)>> = vec![Vec::new(); obs.situations];
    for line in text.lines().skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        let i: usize = f[0].parse::<usize>().unwrap() - 1;
        let j = ids.iter().position(|z| z == f[1]).unwrap() as u32;
        per[i].push((j, f[2].parse().unwrap()));
    }
    let slots = per.iter().map(|m| m.len()).max().unwrap();
    let mut members = vec![EMPTY; obs.situations * slots];
    let mut counts = vec![0; obs.situations * slots];
    for (i, m) in per.iter().enumerate() {
        let chosen = obs.chosen[i];
        let mut s = 1;
        for &(j, k) in m {
            let at = if j == chosen { 0 } else { s };
            members[i * slots + at] = j;
            counts[i * slots + at] = k;
            if j != chosen {
                s += 1;
            }
        }
        assert_eq!(members[i * slots], chosen, "the chosen zone is in its set");
    }
    Sets {
        slots,
        members,
        counts,
    }
}

#[test]
fn the_same_sampled_sets_give_the_numpy_reference_estimates() {
    // Source: tests/reference/destinations_reference.py, cases "uniform" and
    // "weighted" (the correction ln k_j - ln w_j, w the zone's jobs).
    let r = fixture();
    let (_, spec) = tables_spec("sampled", "");
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let jobs = ds
        .obs
        .tables
        .as_ref()
        .unwrap()
        .table
        .numbers("jobs", "jobs")
        .unwrap()
        .to_vec();
    let ids = spec.alternative_names();
    for (name, weights) in [("uniform", None), ("weighted", Some(jobs.as_slice()))] {
        let c = case(&r, name);
        let file = path(&format!("tests/fixtures/destinations/sets_{name}.csv"));
        let sets = sets_from(&file, &ds.obs, &ids);
        let obs = sample::sampled(&ds.obs, &sets, weights);
        let fit = fit_obs(&spec, obs);
        assert_all(name, &fit.beta, &floats(&c["estimates"]), 1e-6);
        assert_all(name, &errors(&fit), &floats(&c["std_errors"]), 1e-6);
        assert_close(
            name,
            fit.stats.log_likelihood,
            c["log_likelihood"].as_f64().unwrap(),
            1e-9,
        );
    }
}

/// The fixture written in the long layout: one row per trip and available zone.
fn long_copy(dir: &Path, ds: &data::Dataset, spec: &Spec) -> std::path::PathBuf {
    let obs = &ds.obs;
    let ids = spec.alternative_names();
    let j = obs.alternatives;
    let mut csv = String::from("trip,zone,chosen,time,time_shop,jobs,intrazonal\n");
    for i in 0..obs.situations {
        for a in 0..j {
            if !obs.available[i * j + a] {
                continue;
            }
            let x: Vec<String> = obs
                .attributes
                .iter()
                .map(|v| format!("{:?}", v[i * j + a]))
                .collect();
            csv.push_str(&format!(
                "{},{},{},{}\n",
                i + 1,
                ids[a],
                u8::from(obs.chosen[i] as usize == a),
                x.join(",")
            ));
        }
    }
    write(dir, "long.csv", &csv)
}

#[test]
fn the_tables_layout_equals_the_same_data_in_the_long_layout() {
    // Common practice: a layout is only a way of writing the same situations,
    // so estimates, errors and log-likelihood agree to rounding (1e-10).
    let (dir, spec) = tables_spec("long", "");
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let long = long_copy(&dir, &ds, &spec);
    let mut text = format!(
        "[data]\nfile = \"{}\"\nlayout = \"long\"\nsituation = \"trip\"\nalternative = \"zone\"\nchosen = \"chosen\"\n[model]\nconstants = false\n",
        long.display()
    );
    for z in spec.alternative_names() {
        text.push_str(&format!("[alternatives.{z}]\n"));
    }
    for a in ["time", "time_shop", "jobs", "intrazonal"] {
        text.push_str(&format!(
            "[[attribute]]\nname = \"{a}\"\ncolumn = \"{a}\"\n"
        ));
    }
    let p = write(&dir, "long.toml", &text);
    let long_spec = sharecast::model::read_spec(&p).unwrap();
    let long_ds = data::load(&long_spec, &Extra::default()).unwrap();
    let a = fit_obs(&spec, ds.obs.clone());
    let b = fit_obs(&long_spec, long_ds.obs.clone());
    assert_all("estimates", &a.beta, &b.beta, 1e-10);
    assert_all("errors", &errors(&a), &errors(&b), 1e-10);
    assert_close("LL", a.stats.log_likelihood, b.stats.log_likelihood, 1e-10);
}

#[test]
fn sampled_sets_are_reproducible_and_do_not_depend_on_which_situations_are_drawn_together() {
    // Common practice: each situation draws from its own generator (seed and
    // file row), so a subset's sets are the full sets' rows.
    let (_, spec) = tables_spec("reproducible", "[sampling]\nalternatives = 6\nseed = 9\n");
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let s = spec.sampling.clone().unwrap();
    let a = sample::sets_of(&ds.obs, &s, None);
    let b = sample::sets_of(&ds.obs, &s, None);
    assert_eq!(a, b);
    let keep: Vec<bool> = (0..ds.obs.situations).map(|i| i % 3 == 1).collect();
    let sub = sample::sets_of(&ds.obs.subset(&keep), &s, None);
    let rows: Vec<usize> = (0..ds.obs.situations).filter(|&i| keep[i]).collect();
    for (k, &i) in rows.iter().enumerate() {
        assert_eq!(
            sub.members[k * 7..(k + 1) * 7],
            a.members[i * 7..(i + 1) * 7],
            "situation {i}"
        );
    }
    // Every uniform set holds the chosen one and 6 distinct available others.
    for i in 0..ds.obs.situations {
        let m = &a.members[i * 7..(i + 1) * 7];
        assert_eq!(m[0], ds.obs.chosen[i]);
        let mut d: Vec<u32> = m.to_vec();
        d.sort_unstable();
        d.dedup();
        assert_eq!(d.len(), 7);
        assert!(m.iter().all(|&j| ds.obs.available[i * 40 + j as usize]));
    }
    let other = sample::sets_of(&ds.obs, &sharecast::spec::Sampling { seed: 10, ..s }, None);
    assert_ne!(a, other, "another seed draws other sets");
}

#[test]
fn weighted_draws_follow_the_weights() {
    // Fact of the scheme (common practice): draws with replacement in
    // proportion to the weight, so a zone's share of the draws (the chosen
    // one's +1 left out) is its weight over the total of the open zones.
    let extra =
        "[sampling]\nalternatives = 8\nscheme = \"weighted\"\nweight = \"jobs\"\nseed = 3\n";
    let (_, spec) = tables_spec("weighted-freq", extra);
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let t = ds.obs.tables.clone().unwrap();
    let w = t.sampling_weight.clone().unwrap();
    let s = spec.sampling.clone().unwrap();
    let sets = sample::sets_of(&ds.obs, &s, Some(&w));
    let (n, j) = (ds.obs.situations, 40);
    let mut drawn = vec![0.0; j];
    let mut expected = vec![0.0; j];
    for i in 0..n {
        let total: f64 = (0..j)
            .filter(|&a| ds.obs.available[i * j + a])
            .map(|a| w[a])
            .sum();
        for a in 0..j {
            if ds.obs.available[i * j + a] {
                expected[a] += 8.0 * w[a] / total;
            }
        }
        for s in 0..sets.slots {
            let m = sets.members[i * sets.slots + s];
            if m != EMPTY {
                let extra = if s == 0 { 1.0 } else { 0.0 };
                drawn[m as usize] += sets.counts[i * sets.slots + s] as f64 - extra;
            }
        }
    }
    let all: f64 = drawn.iter().sum();
    assert!(
        (all - 8.0 * n as f64).abs() < 1e-9,
        "every draw counted once"
    );
    for a in 0..j {
        if expected[a] > 200.0 {
            let sd = expected[a].sqrt();
            assert!(
                (drawn[a] - expected[a]).abs() < 5.0 * sd,
                "zone {a}: drawn {} times, expected {:.1}",
                drawn[a],
                expected[a]
            );
        }
    }
}

#[test]
fn a_sampled_fit_reports_on_the_full_sets() {
    let (_, spec) = tables_spec("onto-full", "[sampling]\nalternatives = 10\nseed = 2\n");
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let fit = fit_obs(&spec, ds.obs.clone());
    let info = fit.stats.sampled.clone().unwrap();
    assert_eq!(info.drawn, 10);
    assert!((info.mean_set - 11.0).abs() < 1e-12);
    assert_eq!(
        fit.design.obs.alternatives, 40,
        "the design is the full sets'"
    );
    assert_eq!(fit.shares.len(), 40);
    let total: f64 = fit.shares.iter().map(|s| s.predicted).sum();
    assert!((total - 1.0).abs() < 1e-9);
    // Uniform sets: the estimates are near the full sets' (within 3 errors of
    // the sampled estimator; McFadden 1978, recalled from memory).
    let full = case(&fixture(), "full").clone();
    for (k, (b, f)) in fit.beta.iter().zip(floats(&full["estimates"])).enumerate() {
        let se = fit.parameters[k].std_error;
        assert!(
            (b - f).abs() < 3.0 * se,
            "parameter {k}: {b} vs full {f} (se {se})"
        );
    }
}

#[test]
fn tables_over_the_top_alternatives_equal_those_rows_of_the_whole_tables() {
    // Common practice: restricting the tables to some alternatives changes
    // which rows are computed, not their figures (point values 1e-9, arc
    // elasticities 1e-9; errors from differences against the one analytic
    // pass to 1e-5; diversion 1e-12).
    let (_, spec) = tables_spec("top", "");
    let ds = data::load(&spec, &Extra::default()).unwrap();
    let fit = fit_obs(&spec, ds.obs.clone());
    let whole = sharecast::analysis::Options {
        top: Some(40),
        draws: 0,
        ..Default::default()
    };
    let top = sharecast::analysis::Options {
        top: Some(5),
        ..whole.clone()
    };
    let a = sharecast::analysis::analyse(&spec, &fit, &ds, &whole).unwrap();
    let b = sharecast::analysis::analyse(&spec, &fit, &ds, &top).unwrap();
    assert!(a.top.is_none());
    let shown = b.top.clone().unwrap();
    assert_eq!(shown.len(), 5);
    // The five largest predicted shares, largest first.
    let mut order: Vec<&sharecast::estimate::ShareRow> = fit.shares.iter().collect();
    order.sort_by(|x, y| y.predicted.total_cmp(&x.predicted));
    let expect: Vec<String> = order[..5].iter().map(|r| r.alternative.clone()).collect();
    assert_eq!(shown, expect);
    assert_eq!(
        b.elasticities.len(),
        3 * 25,
        "three elastic attributes, 5 x 5 each"
    );
    for r in &b.elasticities {
        let w = a
            .elasticities
            .iter()
            .find(|x| {
                x.variable == r.variable && x.changed == r.changed && x.affected == r.affected
            })
            .unwrap();
        assert_close("elasticity", r.value, w.value, 1e-9);
        assert_close("arc", r.arc, w.arc, 1e-9);
        assert_close("error", r.std_error, w.std_error, 1e-5);
    }
    assert_eq!(b.diversion.len(), 5 * 4);
    for r in &b.diversion {
        let w = a
            .diversion
            .iter()
            .find(|x| x.removed == r.removed && x.to == r.to)
            .unwrap();
        assert_close("diversion", r.share, w.share, 1e-12);
    }
    assert_eq!(
        b.flag_effects.len(),
        5 * 5,
        "intrazonal of each top zone on each"
    );
}

#[test]
fn sets_drawn_straight_from_the_tables_are_those_drawn_from_the_full_sets() {
    // The large-data path (`data::tables::lean`, used by `fit --no-analysis`
    // when the full sets are large) must draw the very sets, values and
    // corrections that sampling the full sets gives (common practice: one
    // sampler, two routes to it).
    for extra in [
        "[sampling]\nalternatives = 7\nseed = 4\n",
        "[sampling]\nalternatives = 7\nscheme = \"weighted\"\nweight = \"jobs\"\nseed = 4\n",
    ] {
        let (_, spec) = tables_spec("lean", extra);
        let ds = data::load(&spec, &Extra::default()).unwrap();
        let t = ds.obs.tables.clone().unwrap();
        let s = spec.sampling.clone().unwrap();
        let w = t.sampling_weight.as_deref();
        let via_full = sample::sampled(&ds.obs, &sample::sets_of(&ds.obs, &s, w), w);
        let lean = sharecast::data::tables::lean::observations(&spec, &t, &ds.table, &s).unwrap();
        assert_eq!(lean, via_full, "{extra}");
        // And the fit on them says how they were drawn.
        let fit = fit_obs(&spec, lean);
        let info = fit.stats.sampled.clone().unwrap();
        assert_eq!((info.drawn, info.mean_full), (7, None));
        assert!(fit.shares.is_empty());
    }
}
