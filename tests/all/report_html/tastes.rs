//! The page's correlated tastes and willingness-to-pay words: the section's
//! matrices hold the JSON results' correlations (`fit --json`,
//! `correlations`) in cells shaded like the other heat matrices, the
//! estimates and random coefficients say which parameter is the price scale
//! and what each value is in, each ratio over the price carries its note;
//! and none of it appears for an independent, preference-space model.

use super::{assert_shown, json, matrix_after, report, row, rows, sel, text_of};
use crate::common::{express_variant, scratch, WTP_CORRELATED};

#[test]
fn correlated_tastes_and_willingness_labels_stand_on_the_page() {
    let dir = scratch("report-tastes");
    let spec = express_variant(&dir, "wtp_mixed.toml", WTP_CORRELATED, Some("lognormal"));
    let page = report(&dir, &spec, &[]);
    let fit = json(&["fit", &spec, "--json", "--draws", "100"]);
    let c = &fit["correlations"];
    assert_eq!(
        c["coefficients"],
        serde_json::json!(["asc_rail", "time", "cost"])
    );

    // Both matrices, their axes named, each cell the JSON's value (the
    // diagonal a dash), shaded by sign and level, with a legend.
    for (heading, corner, key) in [
        (
            "correlations of the underlying normals",
            "normal of ↓ / normal of →",
            "correlations",
        ),
        (
            "correlations of the coefficients themselves",
            "coefficient ↓ / coefficient →",
            "coefficient_correlations",
        ),
    ] {
        let m = matrix_after(&page, "correlated-tastes", heading);
        let head: Vec<String> = m.select(&sel("thead th")).map(text_of).collect();
        assert_eq!(head, [corner, "asc_rail", "time", "cost"]);
        let body = rows(m);
        for (i, name) in ["asc_rail", "time", "cost"].iter().enumerate() {
            let r = row(&body, name);
            assert_eq!(r[i + 1], "—");
            for j in (0..3).filter(|&j| j != i) {
                let want = c[key][i][j]["value"].as_f64().unwrap();
                assert_shown(&format!("{key} {name} {j}"), &r[j + 1], want);
            }
        }
        let shaded = m.select(&sel("td.num.neg, td.num.pos")).count();
        assert_eq!(shaded, 6, "every off-diagonal cell is shaded");
    }
    let section = page
        .select(&sel("section#correlated-tastes"))
        .next()
        .unwrap();
    assert!(section.select(&sel("p.note span.swatch")).next().is_some());
    let notes: Vec<String> = section.select(&sel("p.note")).map(text_of).collect();
    let stat = fit["correlations"]["independence"]["statistic"]
        .as_f64()
        .unwrap();
    assert!(
        notes
            .iter()
            .any(|n| n.contains(&format!("statistic {stat:.4}, 3 df"))),
        "{notes:?}"
    );
    assert!(notes.iter().any(|n| n.contains("closed-form moments")));

    // The estimates: the price scale and each value's unit in their own column.
    let table = page.select(&sel("table.estimates")).next().unwrap();
    let head: Vec<String> = table.select(&sel("thead th")).map(text_of).collect();
    assert_eq!(head.last().unwrap(), "price scale or value in");
    let est = rows(table);
    assert_eq!(
        row(&est, "cost (mean of log)").last().unwrap(),
        "price scale"
    );
    assert_eq!(row(&est, "time").last().unwrap(), "cost per unit of time");
    assert_eq!(
        row(&est, "asc_coach").last().unwrap(),
        "cost for choosing coach rather than car"
    );
    let estimates = page.select(&sel("section#estimates")).next().unwrap();
    assert!(estimates
        .select(&sel("p.note"))
        .any(|p| text_of(p).starts_with("willingness-to-pay space: `cost` is the price scale")));
    // Random coefficients read as the price scale and as values.
    let random = rows(page.select(&sel("table.random")).next().unwrap());
    assert!(random
        .iter()
        .any(|r| r[0] == "time (normal) — a value in cost per unit of time"));
    assert!(random
        .iter()
        .any(|r| r[0] == "cost (lognormal) — the price scale"));
    // The value ratio over the price carries the analysis's note.
    let note = fit["ratios"][0]["note"].as_str().expect("a ratio note");
    let ratios = page.select(&sel("section#value-ratios")).next().unwrap();
    assert!(ratios
        .select(&sel("p.note"))
        .any(|p| text_of(p) == format!("value_of_time: {note}")));
}

#[test]
fn an_independent_preference_space_model_has_neither() {
    let dir = scratch("report-no-tastes");
    let spec = express_variant(&dir, "independent.toml", "", None);
    let page = report(&dir, &spec, &[]);
    // The section stands in its place and says why it is empty.
    let section = page
        .select(&sel("section#correlated-tastes"))
        .next()
        .unwrap();
    assert!(section.select(&sel("table")).next().is_none());
    let why = text_of(section.select(&sel("p.na")).next().unwrap());
    assert!(why.contains("[model].correlated"), "{why}");
    let body = text_of(page.select(&sel("body")).next().unwrap());
    for gone in ["willingness-to-pay space", "price scale", "normal of ↓"] {
        assert!(
            !body.contains(gone),
            "`{gone}` on an independent, preference-space page"
        );
    }
}
