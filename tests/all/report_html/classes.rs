//! The page's latent classes ("Segments the data find") on the garden demo:
//! the class shares, each class's estimates side by side, the membership
//! model, the starts, the predicted shares and the class shares by garden
//! size equal the JSON results of the same fit (`fit --json`: `classes`,
//! `parameters`, `fit.starts`); a common parameter stands once across the
//! classes, one start is warned about, data without groups are called a
//! cross-section, and a model without classes says why the section is empty.

use scraper::{ElementRef, Html};
use serde_json::Value;

use super::{assert_shown, json, report, row, rows, sel, text_of};
use crate::common::{path, run, scratch, write};

const GARDEN: &str = "specs/garden_classes.toml";

/// The section's tables, by class name.
fn table<'a>(page: &'a Html, class: &str) -> ElementRef<'a> {
    page.select(&sel(&format!("section#classes table.{class}")))
        .next()
        .unwrap_or_else(|| panic!("no table {class}"))
}

/// A parameter's estimate and the error its inference uses (clustered: a panel).
fn parameter(fit: &Value, name: &str) -> (f64, f64) {
    let p = fit["parameters"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["name"] == name)
        .unwrap_or_else(|| panic!("no parameter {name}"));
    (
        p["estimate"].as_f64().unwrap(),
        p["robust_std_error"].as_f64().unwrap(),
    )
}

/// A cell `value ± s.e.` checked against both figures.
#[track_caller]
fn assert_pair(what: &str, cell: &str, (value, se): (f64, f64)) {
    let (v, e) = cell
        .split_once('±')
        .unwrap_or_else(|| panic!("{what}: no ± in `{cell}`"));
    assert_shown(what, v, value);
    assert_shown(&format!("{what} s.e."), e, se);
}

#[test]
fn the_segments_section_holds_the_json_figures_of_the_garden_fit() {
    let dir = scratch("report-classes");
    let page = report(&dir, GARDEN, &[]);
    let fit = json(&["fit", GARDEN, "--json"]);
    assert_eq!(fit["fit"]["inference"], "robust");
    let classes = fit["classes"]["rows"].as_array().unwrap();
    assert_eq!(classes.len(), 2);
    let section = page.select(&sel("section#classes")).next().unwrap();
    let notes: Vec<String> = section.select(&sel("p.note")).map(text_of).collect();
    assert_eq!(fit["classes"]["structure"], "panel");
    assert!(notes[0].starts_with("a panel:"), "{notes:?}");
    let st = &fit["fit"]["starts"];
    let line = format!(
        "{} of {} random starts reached the best log-likelihood",
        st["reached_best"], st["tried"]
    );
    assert!(notes.iter().any(|n| n.starts_with(&line)), "{notes:?}");
    assert!(section.select(&sel("ul.warn")).next().is_none());

    // Side by side: the classes and their shares in the head, each row a
    // parameter's class copies.
    let t = table(&page, "classes");
    let head: Vec<Vec<String>> = t
        .select(&sel("thead tr"))
        .map(|tr| tr.select(&sel("th")).map(text_of).collect())
        .collect();
    assert_eq!(head[0], ["term ↓ / class →", "class 1", "class 2"]);
    for (c, r) in classes.iter().enumerate() {
        let want = (
            r["share"].as_f64().unwrap(),
            r["share_std_error"].as_f64().unwrap(),
        );
        assert_pair(&format!("share {c}"), &head[1][c + 1], want);
    }
    let body = rows(t);
    for name in ["asc_plugs", "asc_potted", "price", "weeks", "peat_free"] {
        let r = row(&body, name);
        assert_eq!(r.len(), 3, "{r:?}");
        for (c, cell) in r.iter().enumerate().skip(1) {
            let want = parameter(&fit, &format!("{name}_class{c}"));
            assert_pair(&format!("{name} class {c}"), cell, want);
        }
    }

    // The membership model: class 2 against class 1.
    let body = rows(table(&page, "membership"));
    for (label, name) in [
        ("constant", "member_class2"),
        ("garden_size", "member_class2_garden_size"),
    ] {
        assert_pair(label, &row(&body, label)[1], parameter(&fit, name));
    }

    // What each class chooses.
    let body = rows(table(&page, "class-choices"));
    for (j, alt) in ["packet", "plugs", "potted"].iter().enumerate() {
        let r = row(&body, alt);
        for (c, class) in classes.iter().enumerate() {
            let want = class["predicted"][j].as_f64().unwrap();
            assert_shown(&format!("{alt} class {c}"), &r[c + 1], want);
        }
    }

    // The class shares by garden size, prior and posterior, band by band.
    let bands = fit["classes"]["by_column"][0][1].as_array().unwrap();
    assert_eq!(fit["classes"]["by_column"][0][0], "garden_size");
    let body = rows(table(&page, "class-bands"));
    assert_eq!(body.len(), bands.len());
    for (r, b) in body.iter().zip(bands) {
        assert_eq!(r[0], b["label"].as_str().unwrap());
        assert_eq!(r[1], b["decision_makers"].to_string());
        for c in 0..2 {
            assert_shown("prior", &r[2 + 2 * c], b["prior"][c].as_f64().unwrap());
            assert_shown(
                "posterior",
                &r[3 + 2 * c],
                b["posterior"][c].as_f64().unwrap(),
            );
        }
    }
}

#[test]
fn a_shared_parameter_stands_once_and_a_single_start_is_warned_about() {
    let dir = scratch("report-classes-common");
    let garden = std::fs::read_to_string(path(GARDEN)).unwrap();
    let data = path("demo-data/garden_panel.csv");
    let body = garden
        .replace("../demo-data/garden_panel.csv", data.to_str().unwrap())
        .replace("starts = 10 ", "starts = 1\ncommon = [\"peat_free\"]\n");
    let spec = write(&dir, "common.toml", &body);
    let spec = spec.to_str().unwrap();
    let page = report(&dir, spec, &[]);
    let fit = json(&["fit", spec, "--json"]);
    assert_eq!(fit["fit"]["starts"]["tried"], 1);
    let body = rows(table(&page, "classes"));
    let r = row(&body, "peat_free");
    assert_eq!(r.len(), 2, "one cell across: {r:?}");
    assert!(r[1].ends_with("shared by every class"), "{r:?}");
    assert_pair(
        "peat_free",
        r[1].trim_end_matches(" · shared by every class"),
        parameter(&fit, "peat_free"),
    );
    let warn: Vec<String> = page
        .select(&sel("section#classes ul.warn li"))
        .map(text_of)
        .collect();
    assert!(
        warn.iter().any(|w| w.starts_with("only one start was run")),
        "{warn:?}"
    );
    // Without [data].group the data are a cross-section, and the cells
    // carry the errors the fit's inference names.
    let body = garden
        .replace("../demo-data/garden_panel.csv", data.to_str().unwrap())
        .replace("group = \"shopper\"", "");
    let cross = write(&dir, "cross.toml", &body);
    let cross = cross.to_str().unwrap();
    let apart = dir.join("cross");
    std::fs::create_dir_all(&apart).unwrap();
    let page = report(&apart, cross, &[]);
    let fit = json(&["fit", cross, "--json"]);
    assert_eq!(fit["classes"]["structure"], "cross-section");
    let first = page
        .select(&sel("section#classes p.note"))
        .next()
        .map(text_of)
        .unwrap();
    assert!(first.starts_with("a cross-section:"), "{first}");
    let key = if fit["fit"]["inference"] == "robust" {
        "robust_std_error"
    } else {
        "std_error"
    };
    let p = fit["parameters"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["name"] == "price_class2")
        .unwrap();
    let want = (p["estimate"].as_f64().unwrap(), p[key].as_f64().unwrap());
    assert_pair(
        "price class 2",
        &row(&rows(table(&page, "classes")), "price")[2],
        want,
    );

    // The terminal report carries the same warning.
    let (code, out, err) = run(&["fit", spec]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("! only one start was run"), "{out}");
    assert!(out.contains("segments the data find · a panel"), "{out}");
}

#[test]
fn a_model_without_classes_says_why_the_segments_are_missing() {
    let dir = scratch("report-classes-none");
    let page = report(&dir, "specs/commute.toml", &[]);
    let na = page
        .select(&sel("section#classes p.na"))
        .next()
        .map(text_of)
        .unwrap_or_default();
    assert!(na.contains("has no latent classes"), "`{na}`");
    assert!(page.select(&sel("section#classes table")).next().is_none());
}
