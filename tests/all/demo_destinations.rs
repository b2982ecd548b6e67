//! The Velmora destination-choice demo (`src/demo/destinations.rs`,
//! `sharecast::demo::DESTINATIONS_TRUTH`, listed in demo-data/README.md):
//! the README's table states the generator's values, the three shipped files
//! hold 320 zones, the pairs within 75 minutes and 4,000 trips to open,
//! reachable zones, and the choices are what the true logit implies. Read
//! from the files by code of its own (no estimation).

use std::collections::HashMap;

use sharecast::data::load::read;
use sharecast::data::table::Table;
use sharecast::demo::DESTINATIONS_TRUTH;

use crate::common::*;

const TERMS: [&str; 7] = [
    "time",
    "time_shop",
    "jobs_work",
    "shops_shop",
    "homes_other",
    "mix",
    "intrazonal",
];

fn table(file: &str, numeric: &[&str], text: &[&str]) -> Table {
    let names = |v: &[&str]| v.iter().map(|s| s.to_string()).collect::<Vec<_>>();
    read(
        &path(&format!("demo-data/{file}")),
        &names(numeric),
        &names(text),
    )
    .unwrap()
}

fn numbers(t: &Table, name: &str) -> Vec<f64> {
    t.numbers(name, "test").unwrap().to_vec()
}

/// The three files as arrays: zones' variables, time and presence of every
/// pair (origin-major), and the trips (origin, purpose 0-2, destination).
struct City {
    n: usize,
    zone: HashMap<String, usize>,
    district: Vec<String>,
    vars: HashMap<&'static str, Vec<f64>>,
    time: Vec<f64>,
    present: Vec<bool>,
    trips: Vec<(usize, usize, usize)>,
}

fn city() -> City {
    let cols = [
        "jobs",
        "shops",
        "homes",
        "mix",
        "log_jobs",
        "log_shops",
        "log_homes",
        "available",
    ];
    let z = table("velmora_zones.csv", &cols, &["zone", "district"]);
    let ids = z.keys("zone", "test").unwrap();
    let n = ids.len();
    let zone: HashMap<String, usize> = ids.iter().cloned().zip(0..).collect();
    let vars = cols.iter().map(|c| (*c, numbers(&z, c))).collect();
    let s = table(
        "velmora_skims.parquet",
        &["time_min", "intrazonal"],
        &["origin", "zone"],
    );
    let (mut time, mut present) = (vec![f64::NAN; n * n], vec![false; n * n]);
    let (o, d) = (s.keys("origin", "t").unwrap(), s.keys("zone", "t").unwrap());
    let (t, intra) = (numbers(&s, "time_min"), numbers(&s, "intrazonal"));
    for k in 0..o.len() {
        let (a, b) = (zone[&o[k]], zone[&d[k]]);
        assert!(!present[a * n + b], "pair {} {} twice", o[k], d[k]);
        assert_eq!(intra[k], (a == b) as u8 as f64);
        time[a * n + b] = t[k];
        present[a * n + b] = true;
    }
    let tr = table(
        "velmora_trips.csv",
        &["work", "shop", "other"],
        &["origin", "purpose", "dest"],
    );
    let purposes = ["work", "shop", "other"];
    let dummies: Vec<Vec<f64>> = purposes.iter().map(|p| numbers(&tr, p)).collect();
    let (o, p, d) = (
        tr.keys("origin", "t").unwrap(),
        tr.keys("purpose", "t").unwrap(),
        tr.keys("dest", "t").unwrap(),
    );
    let mut trips = Vec::new();
    for i in 0..o.len() {
        let k = purposes.iter().position(|q| *q == p[i]).unwrap();
        for (j, col) in dummies.iter().enumerate() {
            assert_eq!(col[i], (j == k) as u8 as f64, "trip {} dummies", i + 1);
        }
        trips.push((zone[&o[i]], k, zone[&d[i]]));
    }
    let district = z.keys("district", "test").unwrap();
    City {
        n,
        zone,
        district,
        vars,
        time,
        present,
        trips,
    }
}

#[test]
fn the_readme_table_states_the_generator_s_values() {
    let names: Vec<&str> = DESTINATIONS_TRUTH.iter().map(|t| t.0).collect();
    assert_eq!(names, TERMS);
    let readme = std::fs::read_to_string(path("demo-data/README.md")).unwrap();
    let section = &readme[readme.find("## velmora_zones.csv").unwrap()..];
    for (name, value) in DESTINATIONS_TRUTH {
        let row = section
            .lines()
            .find(|l| l.starts_with(&format!("| {name} |")))
            .unwrap_or_else(|| panic!("no README row for {name}"));
        let cell: f64 = row.split('|').nth(2).unwrap().trim().parse().unwrap();
        assert_eq!(cell, *value, "{name}");
    }
}

#[test]
fn the_velmora_files_hold_open_reachable_choices() {
    let c = city();
    assert_eq!(c.n, 320);
    assert!(c.zone.contains_key("z001") && c.zone.contains_key("z320"));
    let mut districts = c.district.clone();
    districts.sort();
    districts.dedup();
    assert_eq!(districts.len(), 6);
    assert!(districts.iter().any(|d| d == "east"));
    for name in ["jobs", "shops", "homes"] {
        let (count, log) = (&c.vars[name], &c.vars[format!("log_{name}").as_str()]);
        for j in 0..c.n {
            assert!(count[j] >= 1.0, "{name} of zone {}", j + 1);
            assert!((log[j] - (1.0 + count[j]).ln()).abs() < 1e-6, "log_{name}");
        }
    }
    let open = &c.vars["available"];
    assert_eq!(open.iter().filter(|a| **a == 0.0).count(), 3);
    // A pair is left out where the time exceeds 75 minutes; some are.
    let pairs = c.present.iter().filter(|p| **p).count();
    assert!(pairs < c.n * c.n && pairs > c.n * c.n * 95 / 100, "{pairs}");
    assert!((0..c.n).all(|j| c.present[j * c.n + j]));
    assert!(c.time.iter().filter(|t| !t.is_nan()).all(|t| *t <= 75.0));
    assert_eq!(c.trips.len(), 4000);
    for (i, &(o, _, d)) in c.trips.iter().enumerate() {
        assert!(open[o] == 1.0 && open[d] == 1.0, "trip {}", i + 1);
        assert!(
            c.present[o * c.n + d],
            "trip {} to an unreachable zone",
            i + 1
        );
    }
}

/// The utility's variables of zone `j` for a trip from `o` with purpose `p`.
fn features(c: &City, o: usize, p: usize, j: usize) -> [f64; 7] {
    let (v, t) = (|n: &str| c.vars[n][j], c.time[o * c.n + j]);
    let dummy = |k: usize| (p == k) as u8 as f64;
    [
        t,
        t * dummy(1),
        v("log_jobs") * dummy(0),
        v("log_shops") * dummy(1),
        v("log_homes") * dummy(2),
        v("mix"),
        (o == j) as u8 as f64,
    ]
}

#[test]
fn the_velmora_choices_are_what_the_true_logit_implies() {
    // Fact of the method: at the true values each term's sum over the chosen
    // zones has the mean sum_s sum_j P_sj x_sj and variance sum_s Var_s(x)
    // (the logit's score at the truth has mean zero), so each observed sum
    // lies within 4 standard deviations of its mean.
    let c = city();
    let beta: Vec<f64> = DESTINATIONS_TRUTH.iter().map(|t| t.1).collect();
    let (mut seen, mut mean, mut var) = ([0.0; 7], [0.0; 7], [0.0; 7]);
    let mut x = vec![[0.0; 7]; c.n];
    let mut v = vec![f64::NEG_INFINITY; c.n];
    for &(o, p, d) in &c.trips {
        for j in 0..c.n {
            // A zone it may not choose has no time (no pair) and weight 0.
            let ok = c.vars["available"][j] == 1.0 && c.present[o * c.n + j];
            x[j] = if ok { features(&c, o, p, j) } else { [0.0; 7] };
            v[j] = if ok {
                (0..7).map(|k| beta[k] * x[j][k]).sum()
            } else {
                f64::NEG_INFINITY
            };
        }
        let m = v.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        let total: f64 = v.iter().map(|u| (u - m).exp()).sum();
        for k in 0..7 {
            let (mut e1, mut e2) = (0.0, 0.0);
            for j in 0..c.n {
                let pj = (v[j] - m).exp() / total;
                e1 += pj * x[j][k];
                e2 += pj * x[j][k] * x[j][k];
            }
            seen[k] += x[d][k];
            mean[k] += e1;
            var[k] += e2 - e1 * e1;
        }
    }
    for k in 0..7 {
        let z = (seen[k] - mean[k]) / var[k].sqrt();
        assert!(
            z.abs() < 4.0,
            "{}: observed {} expected {} (z {z})",
            TERMS[k],
            seen[k],
            mean[k]
        );
    }
}
