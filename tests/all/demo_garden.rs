//! The garden panel demo (`src/demo/garden.rs`, `sharecast::demo::GARDEN_TRUTH`,
//! listed in demo-data/README.md): the shipped file is what `sharecast
//! demo-data` writes, its layout is a panel of 1,000 shoppers x 8 purchases,
//! and its choices are what the two hidden segments' logits and the
//! membership model imply. Everything here is read from the CSV and checked
//! against the generating values by code of its own (no estimation).

use std::collections::BTreeMap;

use sharecast::demo::{GARDEN_ALTERNATIVES, GARDEN_SHARES, GARDEN_TRUTH};

use crate::common::*;

fn truth(name: &str) -> f64 {
    GARDEN_TRUTH.iter().find(|t| t.0 == name).unwrap().1
}

/// The true probability that a shopper with this garden size is in class 2
/// (the membership logit against class 1).
fn garden_class2_probability(garden_size: f64) -> f64 {
    let u = truth("member_class2") + truth("member_class2_garden_size") * garden_size;
    1.0 / (1.0 + (-u).exp())
}

/// The shipped CSV as a header and rows of text fields.
fn panel() -> (Vec<String>, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(path("demo-data/garden_panel.csv")).unwrap();
    let mut lines = text.lines();
    let header = lines.next().unwrap().split(',').map(String::from).collect();
    let rows = lines
        .map(|l| l.split(',').map(String::from).collect())
        .collect();
    (header, rows)
}

/// One row's fields by column name.
struct Row<'a> {
    header: &'a [String],
    fields: &'a [String],
}

impl Row<'_> {
    fn text(&self, name: &str) -> &str {
        let i = self.header.iter().position(|h| h == name).unwrap();
        &self.fields[i]
    }
    fn num(&self, name: &str) -> f64 {
        self.text(name).parse().unwrap()
    }
}

/// Each class's logit probabilities of the three alternatives on one row
/// under the truth.
fn class_probabilities(r: &Row) -> [[f64; 3]; 2] {
    let mut out = [[0.0; 3]; 2];
    for (k, probs) in out.iter_mut().enumerate() {
        let t = |term: &str| truth(&format!("{term}_class{}", k + 1));
        let v: Vec<f64> = GARDEN_ALTERNATIVES
            .iter()
            .map(|a| {
                let mut v = t("price") * r.num(&format!("{a}_price"))
                    + t("weeks") * r.num(&format!("{a}_weeks"));
                if *a != "packet" {
                    v += t(&format!("asc_{a}")) + t("peat_free") * r.num(&format!("{a}_peat_free"));
                }
                v
            })
            .collect();
        let m = v.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        let sum: f64 = v.iter().map(|x| (x - m).exp()).sum();
        for j in 0..3 {
            probs[j] = (v[j] - m).exp() / sum;
        }
    }
    out
}

/// The mean and variance under the truth of how many times one shopper
/// (their rows) chooses alternative `j`: given the class the purchases are
/// independent, and the class is drawn once from the membership model.
fn count_moments(rows: &[Row], j: usize) -> (f64, f64) {
    let p2 = garden_class2_probability(rows[0].num("garden_size"));
    let (mut mean, mut second) = (0.0, 0.0);
    for (k, pi) in [(0, 1.0 - p2), (1, p2)] {
        let p: Vec<f64> = rows.iter().map(|r| class_probabilities(r)[k][j]).collect();
        let m: f64 = p.iter().sum();
        let var: f64 = p.iter().map(|x| x * (1.0 - x)).sum();
        mean += pi * m;
        second += pi * (var + m * m);
    }
    (mean, second - mean * mean)
}

/// Observed and expected share of alternative `j` over the shoppers (each a
/// run of 8 rows) and the standard deviation of the observed share.
fn share_check(shoppers: &[&[Row]], j: usize) -> (f64, f64, f64) {
    let (mut observed, mut mean, mut var) = (0.0, 0.0, 0.0);
    for rows in shoppers {
        let a = GARDEN_ALTERNATIVES[j];
        observed += rows.iter().filter(|r| r.text("choice") == a).count() as f64;
        let (m, v) = count_moments(rows, j);
        mean += m;
        var += v;
    }
    let n = 8.0 * shoppers.len() as f64;
    (observed / n, mean / n, var.sqrt() / n)
}

#[test]
fn the_garden_truth_names_the_spec_s_parameters() {
    // The latent class logit's names: `<term>_class<k>` for each constant
    // (every alternative but the base) and attribute of the spec, k = 1, 2,
    // then `member_class2` and `member_class2_<column>` for each membership
    // column; the spec is read as plain TOML (its family is not parsed here).
    let text = std::fs::read_to_string(path("specs/garden_classes.toml")).unwrap();
    let spec: toml::Table = toml::from_str(&text).unwrap();
    let model = spec["model"].as_table().unwrap();
    assert_eq!(model["family"].as_str(), Some("latent-class"));
    assert_eq!(model["classes"].as_integer(), Some(2));
    let base = model["base"].as_str().unwrap();
    assert_eq!(base, GARDEN_ALTERNATIVES[0]);
    let alternatives: Vec<&String> = spec["alternatives"].as_table().unwrap().keys().collect();
    assert_eq!(alternatives, GARDEN_ALTERNATIVES);
    let mut terms: Vec<String> = GARDEN_ALTERNATIVES[1..]
        .iter()
        .map(|a| format!("asc_{a}"))
        .collect();
    for a in spec["attribute"].as_array().unwrap() {
        terms.push(a["name"].as_str().unwrap().to_string());
    }
    let mut want: Vec<String> = (1..=2)
        .flat_map(|k| terms.iter().map(move |t| format!("{t}_class{k}")))
        .collect();
    want.push("member_class2".into());
    for c in model["membership"].as_array().unwrap() {
        want.push(format!("member_class2_{}", c.as_str().unwrap()));
    }
    let got: Vec<&str> = GARDEN_TRUTH.iter().map(|t| t.0).collect();
    assert_eq!(got, want);
}

#[test]
fn the_shipped_garden_panel_is_what_the_generator_writes() {
    // demo-data/README.md: the sets are written by `sharecast demo-data`; a
    // change of the generator must come with the regenerated file.
    let dir = scratch("garden-demo-again");
    let (code, out, err) = run(&["demo-data", &dir.display().to_string()]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("garden_panel.csv"), "{out}");
    let shipped = std::fs::read(path("demo-data/garden_panel.csv")).unwrap();
    let written = std::fs::read(dir.join("garden_panel.csv")).unwrap();
    assert!(
        shipped == written,
        "demo-data/garden_panel.csv differs from the generator's"
    );
}

#[test]
fn the_garden_panel_is_a_panel_of_shoppers_with_fixed_characteristics() {
    let (header, rows) = panel();
    assert_eq!(rows.len(), 8000);
    let mut shoppers: BTreeMap<i64, (Vec<i64>, String, String)> = BTreeMap::new();
    for fields in &rows {
        assert_eq!(fields.len(), header.len());
        let r = Row {
            header: &header,
            fields,
        };
        assert!(GARDEN_ALTERNATIVES.contains(&r.text("choice")));
        for a in GARDEN_ALTERNATIVES {
            assert!(r.num(&format!("{a}_price")) > 0.0);
        }
        // Seed packets take 8 to 18 weeks to flower, plugs 3 to 9, potted
        // plants 0 (in flower now) to 2 (demo-data/README.md).
        let weeks = |a: &str| r.num(&format!("{a}_weeks"));
        assert!((8.0..=18.0).contains(&weeks("packet")));
        assert!((3.0..=9.0).contains(&weeks("plugs")));
        assert!((0.0..=2.0).contains(&weeks("potted")));
        let size = r.num("garden_size");
        assert!((1.0..=30.0).contains(&size), "{size}");
        let entry = shoppers.entry(r.num("shopper") as i64).or_insert_with(|| {
            (
                Vec::new(),
                r.text("garden_size").into(),
                r.text("age").into(),
            )
        });
        entry.0.push(r.num("occasion") as i64);
        // Garden size and age are the shopper's: the same on all their rows.
        assert_eq!(entry.1, r.text("garden_size"));
        assert_eq!(entry.2, r.text("age"));
    }
    assert_eq!(shoppers.len(), 1000);
    for (id, (occasions, _, _)) in &shoppers {
        assert_eq!(occasions, &(1..=8).collect::<Vec<_>>(), "shopper {id}");
    }
}

#[test]
fn the_garden_choices_follow_the_two_segments() {
    let (header, rows) = panel();
    let rows: Vec<Row> = rows
        .iter()
        .map(|fields| Row {
            header: &header,
            fields,
        })
        .collect();
    // The stated class shares are the sample's average true membership
    // probabilities (one per shopper), class 1 the larger.
    let p2: Vec<f64> = rows
        .iter()
        .step_by(8)
        .map(|r| garden_class2_probability(r.num("garden_size")))
        .collect();
    let share2 = p2.iter().sum::<f64>() / p2.len() as f64;
    assert!((share2 - GARDEN_SHARES[1]).abs() < 5e-5, "{share2}");
    assert!((1.0 - share2 - GARDEN_SHARES[0]).abs() < 5e-5, "{share2}");
    // Clearly unequal: class 1 holds 55% or more.
    assert!(share2 < 0.45, "{share2}");
    // The budget growers are the more price-sensitive and the more patient
    // by a factor of 3 or more.
    assert!(truth("price_class1") < 3.0 * truth("price_class2"));
    assert!(truth("weeks_class2") < 3.0 * truth("weeks_class1"));
    // Large gardens (above the median) hold more instant gardeners, so more
    // potted plants are bought there; the observed shares, in each half and
    // overall, are within 4 standard deviations of what the truth implies.
    let shoppers: Vec<&[Row]> = rows.chunks(8).collect();
    let mut sizes: Vec<f64> = shoppers.iter().map(|s| s[0].num("garden_size")).collect();
    sizes.sort_by(f64::total_cmp);
    let median = sizes[sizes.len() / 2];
    let (large, small): (Vec<&[Row]>, Vec<&[Row]>) = shoppers
        .iter()
        .partition(|s| s[0].num("garden_size") > median);
    let (large, small) = (share_check(&large, 2), share_check(&small, 2));
    assert!(large.0 > small.0 + 0.05, "{large:?} {small:?}");
    for (observed, expected, sd) in [large, small] {
        assert!(
            (observed - expected).abs() < 4.0 * sd,
            "{observed} {expected} {sd}"
        );
    }
    for (j, a) in GARDEN_ALTERNATIVES.iter().enumerate() {
        let (observed, expected, sd) = share_check(&shoppers, j);
        assert!(
            (observed - expected).abs() < 4.0 * sd,
            "{a}: {observed} vs {expected} ({sd})"
        );
    }
}
