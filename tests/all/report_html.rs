//! The HTML report (`sharecast report`): the page parses with an HTML parser
//! (scraper, on html5ever) and holds every section and every scenario; the
//! figures on it equal the JSON results of the same tool (`fit --json`,
//! `simulate --json`, `sweep --json`) to the digits shown; it fetches
//! nothing; and it is built for every registered family. Its rendering is
//! checked in `report_render`.

use std::path::Path;

use scraper::{ElementRef, Html, Selector};
use serde_json::Value;

use crate::common::{path, run, scratch};

mod classes;
mod tastes;

fn sel(s: &str) -> Selector {
    Selector::parse(s).unwrap()
}

fn text_of(e: ElementRef) -> String {
    e.text().collect::<String>().trim().to_string()
}

/// The first number in a cell's text and half a unit of its last shown digit
/// (the rounding the page applied), or None for a dash.
fn shown(text: &str) -> Option<(f64, f64)> {
    let t = text.replace('−', "-");
    let start = t.find(|c: char| c.is_ascii_digit() || c == '-' || c == '+')?;
    let rest = &t[start..];
    let end = rest
        .char_indices()
        .skip(1)
        .find(|(_, c)| !(c.is_ascii_digit() || *c == '.' || *c == 'e' || *c == '-'))
        .map(|(i, _)| i)
        .unwrap_or(rest.len());
    let s = &rest[..end];
    let v: f64 = s.parse().ok()?;
    let tol = match (s.find('.'), s.find('e')) {
        (Some(d), None) => 0.5 * 10f64.powi(-((s.len() - d - 1) as i32)),
        (Some(d), Some(e)) => {
            let exp: i32 = s[e + 1..].parse().unwrap_or(0);
            0.5 * 10f64.powi(exp - (e - d - 1) as i32)
        }
        (None, Some(e)) => 0.5 * 10f64.powi(s[e + 1..].parse().unwrap_or(0)),
        (None, None) => 0.5,
    };
    Some((v, tol * 1.000001 + 1e-12))
}

#[track_caller]
fn assert_shown(what: &str, text: &str, want: f64) {
    let (v, tol) = shown(text).unwrap_or_else(|| panic!("{what}: no number in `{text}`"));
    assert!(
        (v - want).abs() <= tol,
        "{what}: the page shows `{text}`, the JSON has {want}"
    );
}

fn json(args: &[&str]) -> Value {
    let (code, out, err) = run(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    serde_json::from_str(&out).unwrap()
}

/// Rows of a table as cell texts.
fn rows(table: ElementRef) -> Vec<Vec<String>> {
    table
        .select(&sel("tbody tr"))
        .map(|tr| tr.select(&sel("td")).map(text_of).collect())
        .collect()
}

/// The row of a table whose first cell is `label`.
fn row<'a>(rows: &'a [Vec<String>], label: &str) -> &'a [String] {
    rows.iter()
        .find(|r| r.first().map(String::as_str) == Some(label))
        .unwrap_or_else(|| panic!("no row `{label}`"))
}

pub(crate) fn report(dir: &Path, spec: &str, scenarios: &[&str]) -> Html {
    let out = dir.join("report.html");
    let charts = dir.join("charts");
    let mut args = vec![
        "report",
        spec,
        "--out",
        out.to_str().unwrap(),
        "--charts",
        charts.to_str().unwrap(),
    ];
    for s in scenarios {
        args.extend(["--scenario", s]);
    }
    let (code, stdout, err) = run(&args);
    assert_eq!(code, 0, "report {spec}: {err}");
    assert!(stdout.contains("wrote"), "{stdout}");
    Html::parse_document(&std::fs::read_to_string(out).unwrap())
}

const COMMUTE_SCENARIOS: [&str; 2] = [
    "specs/scenarios/rail_fare_up.toml",
    "specs/scenarios/tram_line.toml",
];

#[test]
fn commute_report_has_every_section_and_scenario_and_fetches_nothing() {
    let dir = scratch("report-commute-sections");
    let page = report(&dir, "specs/commute.toml", &COMMUTE_SCENARIOS);
    // Source: the HTML parser finds each section with its heading.
    for (id, heading) in sharecast::report::html::SECTIONS {
        let s = page
            .select(&sel(&format!("section#{id}")))
            .next()
            .unwrap_or_else(|| panic!("no section {id}"));
        let h2 = s.select(&sel("h2")).next().map(text_of);
        assert_eq!(h2.as_deref(), Some(heading), "section {id}");
    }
    // Each scenario's article is titled with the name `simulate --json` gives it.
    for (k, file) in COMMUTE_SCENARIOS.iter().enumerate() {
        let doc = json(&[
            "simulate",
            "specs/commute.toml",
            "--scenario",
            file,
            "--json",
        ]);
        let art = page
            .select(&sel(&format!("article#scenario-{}", k + 1)))
            .next()
            .expect("scenario article");
        assert_eq!(
            text_of(art.select(&sel("h3")).next().unwrap()),
            doc["scenario"].as_str().unwrap()
        );
        assert!(
            art.select(&sel("svg")).next().is_some(),
            "scenario {file} has no chart"
        );
    }
    // Self-contained: no scripts, no external stylesheets, images or links.
    let html = page.html();
    assert!(page
        .select(&sel("script, link, img, iframe, object"))
        .next()
        .is_none());
    for a in page.select(&sel("[href], [src]")) {
        let target = a
            .value()
            .attr("href")
            .or(a.value().attr("src"))
            .unwrap_or("");
        assert!(target.starts_with('#'), "an outside reference: {target}");
    }
    assert!(
        !html.contains("url(") && !html.contains("@import"),
        "the stylesheet fetches something"
    );
    assert!(html.contains("@media print"), "no print stylesheet");
    // The cautions in full: the library's sentences are all there.
    let cautions = text_of(page.select(&sel("section#cautions")).next().unwrap());
    for c in sharecast::report::FURTHER_CAUTIONS {
        assert!(cautions.contains(c), "missing caution: {c}");
    }
    assert!(cautions.contains("local official guidance"), "{cautions}");
    assert!(
        cautions.contains("independence from irrelevant alternatives"),
        "{cautions}"
    );
    // --charts wrote the same charts the page holds inline.
    for name in [
        "estimates",
        "shares",
        "scenario-1",
        "scenario-2",
        "demand-curve",
    ] {
        let svg = std::fs::read_to_string(dir.join("charts").join(format!("{name}.svg"))).unwrap();
        let body = svg.lines().skip(1).collect::<Vec<_>>().join("\n");
        let frag = Html::parse_fragment(&body);
        assert!(
            frag.select(&sel("svg")).next().is_some(),
            "{name}.svg is not an SVG"
        );
        assert!(
            std::fs::read_to_string(dir.join("report.html"))
                .unwrap()
                .contains(body.trim()),
            "{name}.svg differs from the page's chart"
        );
    }
}

#[test]
fn commute_report_figures_equal_the_json_results() {
    let dir = scratch("report-commute-figures");
    let page = report(&dir, "specs/commute.toml", &COMMUTE_SCENARIOS);
    let fit = json(&["fit", "specs/commute.toml", "--json"]);
    let stats = rows(page.select(&sel("table.stats")).next().unwrap());
    assert_shown(
        "log-likelihood",
        &row(&stats, "log-likelihood")[1],
        fit["fit"]["log_likelihood"].as_f64().unwrap(),
    );
    assert_shown(
        "BIC",
        &row(&stats, "BIC")[1],
        fit["fit"]["bic"].as_f64().unwrap(),
    );
    let est = rows(page.select(&sel("table.estimates")).next().unwrap());
    let robust = fit["fit"]["inference"] == "robust";
    for p in fit["parameters"].as_array().unwrap() {
        let name = p["name"].as_str().unwrap();
        let r = row(&est, name);
        assert_shown(name, &r[1], p["estimate"].as_f64().unwrap());
        let se = if robust {
            &p["robust_std_error"]
        } else {
            &p["std_error"]
        };
        assert_shown(&format!("{name} s.e."), &r[2], se.as_f64().unwrap());
    }
    let shares = rows(page.select(&sel("table.shares")).next().unwrap());
    for s in fit["shares"].as_array().unwrap() {
        let r = row(&shares, s["alternative"].as_str().unwrap());
        assert_shown("observed share", &r[1], s["observed"].as_f64().unwrap());
        assert_shown("predicted share", &r[2], s["predicted"].as_f64().unwrap());
    }
    let ratios = rows(page.select(&sel("table.ratios")).next().unwrap());
    for r in fit["ratios"].as_array().unwrap() {
        let line = row(&ratios, r["name"].as_str().unwrap());
        assert_shown("ratio", &line[1], r["value"].as_f64().unwrap());
        let kr: Vec<&str> = line[6].split('…').collect();
        assert_shown("Krinsky-Robb low", kr[0], r["kr_low"].as_f64().unwrap());
    }
    let hit = text_of(page.select(&sel("#hit-rate")).next().unwrap());
    assert_shown(
        "hit rate",
        &hit,
        fit["validation"]["hit_rate"].as_f64().unwrap(),
    );
    // One elasticity: the rail share's own cost elasticity.
    let own = fit["elasticities"]
        .as_array()
        .unwrap()
        .iter()
        .find(|e| e["variable"] == "cost" && e["changed"] == "rail" && e["affected"] == "rail")
        .unwrap();
    let cost_table = matrix_after(&page, "elasticities", "cost: ");
    let names: Vec<String> = cost_table.select(&sel("thead th")).map(text_of).collect();
    let col = names.iter().position(|n| n == "rail").unwrap();
    assert_shown(
        "own cost elasticity of rail",
        &row(&rows(cost_table), "rail")[col],
        own["value"].as_f64().unwrap(),
    );
    // Scenarios: base, forecast and band against `simulate --json` (same draws and seed).
    for (k, file) in COMMUTE_SCENARIOS.iter().enumerate() {
        let doc = json(&[
            "simulate",
            "specs/commute.toml",
            "--scenario",
            file,
            "--json",
        ]);
        let art = page
            .select(&sel(&format!("article#scenario-{}", k + 1)))
            .next()
            .unwrap();
        let t = rows(art.select(&sel("table.forecast")).next().unwrap());
        for s in doc["shares"].as_array().unwrap() {
            let r = row(&t, s["alternative"].as_str().unwrap());
            assert_shown("base", &r[1], s["base"].as_f64().unwrap());
            assert_shown("forecast", &r[2], s["scenario"].as_f64().unwrap());
            let band: Vec<&str> = r[5].split('…').collect();
            assert_shown("band low", band[0], s["low"].as_f64().unwrap());
            assert_shown("band high", band[1], s["high"].as_f64().unwrap());
        }
    }
    // The demand curve's rail column against `sweep --json`.
    let sw = json(&[
        "sweep",
        "specs/commute.toml",
        "--attribute",
        "cost",
        "--alternative",
        "rail",
        "--from",
        "0.5",
        "--to",
        "1.5",
        "--steps",
        "11",
        "--json",
    ]);
    let k = sw["alternatives"]
        .as_array()
        .unwrap()
        .iter()
        .position(|a| a == "rail")
        .unwrap();
    let curve = page.select(&sel("table.curve")).next().unwrap();
    let head: Vec<String> = curve.select(&sel("thead th")).map(text_of).collect();
    let col = head.iter().position(|h| h == "rail").unwrap();
    for (point, r) in sw["points"].as_array().unwrap().iter().zip(rows(curve)) {
        assert_shown(
            "curve multiplier",
            &r[0],
            point["multiplier"].as_f64().unwrap(),
        );
        assert_shown("curve share", &r[col], point["shares"][k].as_f64().unwrap());
    }
}

/// The table that follows the `h3` starting with `heading` inside a section.
fn matrix_after<'a>(page: &'a Html, section: &str, heading: &str) -> ElementRef<'a> {
    let s = page
        .select(&sel(&format!("section#{section}")))
        .next()
        .unwrap();
    let mut after = false;
    for e in s.children().filter_map(ElementRef::wrap) {
        if e.value().name() == "h3" {
            after = text_of(e).starts_with(heading);
        } else if after && e.value().name() == "table" {
            return e;
        }
    }
    panic!("no table after `{heading}`")
}

#[test]
fn ordered_and_nested_reports_say_which_sections_do_not_apply() {
    let dir = scratch("report-ordered");
    let page = report(&dir, "specs/delivery_ratings.toml", &[]);
    let na = |id: &str| {
        page.select(&sel(&format!("section#{id} p.na")))
            .map(text_of)
            .collect::<Vec<_>>()
            .join(" ")
    };
    assert!(
        na("diversion").contains("Does not apply to the ordered-logit family"),
        "{}",
        na("diversion")
    );
    assert!(
        na("scenarios").contains("No scenario"),
        "{}",
        na("scenarios")
    );
    assert!(
        na("demand-curve").contains("no attribute"),
        "{}",
        na("demand-curve")
    );
    let facts = text_of(page.select(&sel("section#fitted")).next().unwrap());
    assert!(
        facts.contains("5 (lowest first): very_poor, poor, fair, good, excellent"),
        "{facts}"
    );
    let fit = json(&["fit", "specs/delivery_ratings.toml", "--json"]);
    let est = rows(page.select(&sel("table.estimates")).next().unwrap());
    for p in fit["parameters"].as_array().unwrap() {
        assert_shown(
            p["name"].as_str().unwrap(),
            &row(&est, p["name"].as_str().unwrap())[1],
            p["estimate"].as_f64().unwrap(),
        );
    }
    let dir = scratch("report-nested");
    let page = report(
        &dir,
        "specs/commute_nested.toml",
        &["specs/scenarios/rail_fare_up.toml"],
    );
    // Each structure line under its own label: the nest's name, then its members.
    assert_eq!(
        fact(&page, "nest transit")
            .as_deref()
            .map(|d| d.starts_with("bus, rail")),
        Some(true),
        "{:?}",
        fact(&page, "nest transit")
    );
    // The family's reduction test is among the diagnostics, as `fit --json` gives it.
    let fit = json(&["fit", "specs/commute_nested.toml", "--json"]);
    let tests = rows(
        page.select(&sel("section#diagnostics table.tests"))
            .next()
            .unwrap(),
    );
    let t = &fit["family_test"];
    assert_shown(
        "family test",
        &row(&tests, t["name"].as_str().unwrap())[1],
        t["statistic"].as_f64().unwrap(),
    );
    assert!(page
        .select(&sel("section#diversion table.matrix"))
        .next()
        .is_some());
}

/// The fact of "What was fitted" labelled `label`.
fn fact(page: &Html, label: &str) -> Option<String> {
    let dts: Vec<ElementRef> = page.select(&sel("section#fitted dl dt")).collect();
    let dds: Vec<ElementRef> = page.select(&sel("section#fitted dl dd")).collect();
    dts.iter()
        .position(|d| text_of(*d) == label)
        .and_then(|k| dds.get(k).map(|d| text_of(*d)))
}

#[test]
fn every_registered_section_has_a_heading_a_unique_id_and_its_place() {
    use sharecast::report::sections::{Section, REGISTRY};
    let mut ids = std::collections::HashSet::new();
    for s in REGISTRY {
        let s: &dyn Section = *s;
        assert!(
            !s.heading().trim().is_empty(),
            "section `{}` has no heading",
            s.id()
        );
        assert!(
            !s.id().is_empty() && s.id().chars().all(|c| c.is_ascii_lowercase() || c == '-'),
            "section id `{}` is not an anchor",
            s.id()
        );
        assert!(
            ids.insert(s.id()),
            "section id `{}` registered twice",
            s.id()
        );
    }
    let want: Vec<(String, String)> = REGISTRY
        .iter()
        .map(|s| (s.id().to_string(), s.heading().to_string()))
        .collect();
    let dir = scratch("report-registry");
    let page = report(&dir, "specs/grocery.toml", &[]);
    // The page's sections, in order, are the registry's, each with its heading.
    let shown: Vec<(String, String)> = page
        .select(&sel("body > section"))
        .map(|s| {
            let h2 = s.select(&sel("h2")).next().map(text_of).unwrap_or_default();
            (s.value().attr("id").unwrap_or("").to_string(), h2)
        })
        .collect();
    assert_eq!(shown, want, "the page's sections differ from the registry");
    // So is the contents list.
    let contents: Vec<(String, String)> = page
        .select(&sel("nav li a"))
        .map(|a| {
            let href = a.value().attr("href").unwrap_or("");
            (href.trim_start_matches('#').to_string(), text_of(a))
        })
        .collect();
    assert_eq!(
        contents, want,
        "the contents list differs from the registry"
    );
    // And `SECTIONS`, which the other tests read, is the registry's too.
    let listed: Vec<(String, String)> = sharecast::report::html::SECTIONS
        .into_iter()
        .map(|(i, h)| (i.to_string(), h.to_string()))
        .collect();
    assert_eq!(listed, want);
}

#[test]
fn html_matrices_name_their_axes_structure_has_labels_and_medians_sit_beside_log_locations() {
    let dir = scratch("report-express");
    let page = report(&dir, "specs/express_survey.toml", &[]);
    // Each structure line under its own label (no repeated "structure").
    for label in ["random coefficients", "simulation", "panel"] {
        assert!(fact(&page, label).is_some(), "no fact `{label}`");
    }
    assert!(fact(&page, "structure").is_none());
    // Matrices: the corner names both axes; no sentence about rows and columns,
    // and no terminal shading glyphs (the colour and the legend carry the scale).
    let corners: Vec<String> = page
        .select(&sel("table.matrix thead th:first-child"))
        .map(text_of)
        .collect();
    assert!(
        corners.contains(&"cost of ↓ / share of →".to_string()),
        "{corners:?}"
    );
    assert!(
        corners.contains(&"withdrawn ↓ / moves to →".to_string()),
        "{corners:?}"
    );
    let body = text_of(page.select(&sel("body")).next().unwrap());
    for gone in ["row's", "column's", "░", "▒", "▓", "█"] {
        assert!(!body.contains(gone), "`{gone}` still on the page");
    }
    assert!(page
        .select(&sel("section#elasticities p.note span.swatch"))
        .next()
        .is_some());
    // The negative-lognormal cost: its location is the mean of log, its median
    // beside it equals the analysis's median (`fit --json`, random_coefficients).
    let est = rows(page.select(&sel("table.estimates")).next().unwrap());
    let r = row(&est, "cost (mean of log)");
    let fit = json(&[
        "fit",
        "specs/express_survey.toml",
        "--json",
        "--draws",
        "100",
    ]);
    let median = fit["random_coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["coefficient"] == "cost")
        .unwrap()["median"]["value"]
        .as_f64()
        .unwrap();
    assert_shown("median of cost", r.last().unwrap(), median);
    assert!(median < 0.0);
}

#[test]
fn report_refuses_to_replace_a_file_without_force() {
    let dir = scratch("report-force");
    let out = dir.join("r.html");
    std::fs::write(&out, "mine").unwrap();
    let (code, _, err) = run(&[
        "report",
        "specs/grocery.toml",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 1);
    assert!(err.contains("r.html"), "{err}");
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "mine");
    let (code, _, err) = run(&[
        "report",
        "specs/grocery.toml",
        "--out",
        out.to_str().unwrap(),
        "--force",
        "--scenario",
        "specs/scenarios/own_label_promo.toml",
    ]);
    assert_eq!(code, 0, "{err}");
    let page = Html::parse_document(&std::fs::read_to_string(&out).unwrap());
    // own_label_promo names `price` as its price: the curve says so.
    let curve = text_of(page.select(&sel("section#demand-curve")).next().unwrap());
    assert!(
        curve.contains("Own label 10% cheaper at eye level"),
        "{curve}"
    );
}

#[test]
fn a_saved_fit_is_reused_and_the_page_says_so() {
    let dir = scratch("report-load");
    let saved = dir.join("fit.json");
    let (code, _, err) = run(&[
        "fit",
        "specs/grocery.toml",
        "--save",
        saved.to_str().unwrap(),
        "--no-analysis",
    ]);
    assert_eq!(code, 0, "{err}");
    let out = dir.join("r.html");
    let (code, _, err) = run(&[
        "report",
        "specs/grocery.toml",
        "--load",
        saved.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let page = Html::parse_document(&std::fs::read_to_string(&out).unwrap());
    let fitted = text_of(page.select(&sel("section#fitted")).next().unwrap());
    assert!(fitted.contains("estimates loaded from"), "{fitted}");
    // Source: the saved results document itself.
    let doc: Value = serde_json::from_str(&std::fs::read_to_string(&saved).unwrap()).unwrap();
    let est = rows(page.select(&sel("table.estimates")).next().unwrap());
    for p in doc["parameters"].as_array().unwrap() {
        let name = p["name"].as_str().unwrap();
        assert_shown(name, &row(&est, name)[1], p["estimate"].as_f64().unwrap());
    }
}

#[test]
fn a_page_is_built_for_every_registered_family() {
    // Every family in the registry, on the shared suite's simulated example:
    // the page holds every section, and the ordered families say diversion does not apply.
    for e in sharecast::model::registry::FAMILIES {
        let (spec, _, _, d) = crate::families::setup(e, 800, 5);
        let quiet = |_s: sharecast::estimate::Step| {};
        let fit = sharecast::estimate::fit(&spec, d.obs.clone(), &quiet).unwrap();
        let ds = sharecast::data::Dataset {
            obs: (*d.obs).clone(),
            table: sharecast::data::Table::new(Path::new("example.csv"), d.obs.situations),
        };
        let a = sharecast::analysis::analyse(&spec, &fit, &ds, &Default::default()).unwrap();
        let m = sharecast::report::html::Material {
            spec: &spec,
            fit: &fit,
            spec_label: "example".into(),
            analysis: Some(&a),
            forecasts: Vec::new(),
            curves: Err("none".into()),
            notes: Vec::new(),
        };
        let page = Html::parse_document(&sharecast::report::html::page(&m).html);
        for (id, _) in sharecast::report::html::SECTIONS {
            assert!(
                page.select(&sel(&format!("section#{id}"))).next().is_some(),
                "{}: no section {id}",
                e.name
            );
        }
        let est = rows(page.select(&sel("table.estimates")).next().unwrap());
        for p in &fit.parameters {
            // A lognormal location's row reads `x (mean of log)`.
            let r = est
                .iter()
                .find(|r| {
                    r.first()
                        .is_some_and(|c| c == &p.name || c.starts_with(&format!("{} (", p.name)))
                })
                .unwrap_or_else(|| panic!("{}: no row `{}`", e.name, p.name));
            assert_shown(&format!("{} {}", e.name, p.name), &r[1], p.estimate);
        }
        let na = page.select(&sel("section#diversion p.na")).next().is_some();
        assert_eq!(
            na,
            fit.family.abilities().ordered,
            "{}: diversion applies only to unordered families",
            e.name
        );
        // Tastes across decision makers: the library's figures for a family
        // with random coefficients, a sentence for the others.
        let random = page.select(&sel("table.random")).next();
        assert_eq!(
            random.is_some(),
            !a.random_coefficients.is_empty(),
            "{}: random coefficients table",
            e.name
        );
        if let Some(t) = random {
            let rs = rows(t);
            for r in &a.random_coefficients {
                // In willingness space the label goes on to say what the
                // coefficient is (the price scale, or a value and its unit).
                let label = format!("{} ({})", r.coefficient, r.distribution);
                let shown = &rs
                    .iter()
                    .find(|x| x.first().is_some_and(|c| c.starts_with(&label)))
                    .unwrap_or_else(|| panic!("{}: no row `{label}`", e.name))[1];
                assert!(
                    shown.starts_with(&format!("{:.4}", r.mean.value)),
                    "{}: mean of {} shown as {shown}",
                    e.name,
                    r.coefficient
                );
            }
        }
    }
    let _ = path("specs");
}

#[test]
fn the_walk_puts_every_figure_of_the_analysis_in_its_cell() {
    use sharecast::analysis::random::Figure;
    use sharecast::report::walk::{Cell, Matrix, Walk};
    // grocery: a price, two 0/1 attributes (promo, eye_level) and two characteristics.
    let (spec, ds) = crate::common::load("specs/grocery.toml");
    let fit = crate::common::fit_spec(&spec, &ds);
    let options = sharecast::analysis::Options {
        draws: 100,
        ..Default::default()
    };
    let a = sharecast::analysis::analyse(&spec, &fit, &ds, &options).unwrap();
    let w = Walk::new(&spec, &fit, &a);
    let at = |m: &Matrix, r: &str, c: &str| {
        let ri = m.rows.labels.iter().position(|x| x == r).expect("row");
        let ci = m
            .columns
            .labels
            .iter()
            .position(|x| x == c)
            .expect("column");
        m.cell(ri, ci)
    };
    let values = |m: &Matrix| {
        m.cells
            .iter()
            .filter(|c| matches!(c, Cell::Value(_)))
            .count()
    };
    let var = |name: &str| w.variables.iter().find(|v| v.name == name).unwrap();
    for e in &a.elasticities {
        let v = var(&e.variable);
        let row = e.changed.clone().unwrap_or_else(|| e.variable.clone());
        let want = Figure {
            value: e.value,
            std_error: e.std_error,
        };
        assert_eq!(at(&v.figures, &row, &e.affected), Cell::Value(want));
        assert_eq!(
            at(v.arc.as_ref().unwrap(), &row, &e.affected).value(),
            Some(e.arc)
        );
    }
    for f in &a.flag_effects {
        let v = var(&f.variable);
        assert!(v.flag && v.arc.is_none());
        let row = f.changed.clone().unwrap_or_else(|| f.variable.clone());
        assert_eq!(at(&v.figures, &row, &f.affected).value(), Some(f.change));
    }
    // Nothing more: every other cell is missing.
    let elastic: usize = w
        .variables
        .iter()
        .filter(|v| !v.flag)
        .map(|v| values(&v.figures))
        .sum();
    let flags: usize = w
        .variables
        .iter()
        .filter(|v| v.flag)
        .map(|v| values(&v.figures))
        .sum();
    assert_eq!(
        (elastic, flags),
        (a.elasticities.len(), a.flag_effects.len())
    );
    assert!(!a.flag_effects.is_empty() && !a.diversion.is_empty());
    let withdrawal = w.withdrawal.as_ref().unwrap();
    for d in &a.diversion {
        assert_eq!(at(withdrawal, &d.removed, &d.to).value(), Some(d.share));
    }
    assert_eq!(at(withdrawal, "own_label", "own_label"), Cell::Same);
    assert_eq!(withdrawal.corner(), "withdrawn ↓ / moves to →");
    assert_eq!(var("price").figures.corner(), "price of ↓ / share of →");
    // The stacked tables the reports show: flags labelled by their alternative.
    let stacked = w.flags().unwrap();
    assert!(stacked
        .rows
        .labels
        .contains(&"promo of own_label".to_string()));
    assert_eq!(values(&stacked), a.flag_effects.len());
}
