//! Scenario `where` filters over a text column: the column is read as text
//! and only the situations whose value matches are changed.

use std::path::Path;

use sharecast::data::{self, Column};
use sharecast::scenario::{self, prepare, Options, Scenario};

use crate::common::*;

const DATA: &str = "choice,district,p_stay,p_go\nstay,east,1,3\ngo,west,1,3\ngo,east,1,3\nstay,,1,3\nstay,East,1,3\ngo,east,1,3\n";

const SPEC: &str = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"choice\"\n[model]\nfamily = \"logit\"\nbase = \"stay\"\n[alternatives.stay]\n[alternatives.go]\n[[attribute]]\nname = \"price\"\ncolumns = { stay = \"p_stay\", go = \"p_go\" }\n[parameters]\nasc_go = { fixed = 0.5 }\nprice = { fixed = -0.2 }\n";

fn change(filter: &str) -> String {
    format!("[[change]]\nattribute = \"price\"\nalternative = \"go\"\nadd = 2.0\nwhere = \"{filter}\"\n")
}

#[test]
fn a_text_filter_changes_only_the_matching_situations() {
    let dir = scratch("scenario_text_filter");
    write(&dir, "d.csv", DATA);
    let spec_path = write(&dir, "s.toml", SPEC);
    let spec = sharecast::model::parse_spec(SPEC, &spec_path).unwrap();
    let sc = Scenario::from_str(&change("district == 'east'"), Path::new("x.toml"), &spec).unwrap();
    assert_eq!(sc.text_columns(&spec), ["district"]);
    // written back as TOML, the filter reads back the same
    let again = Scenario::from_str(&sc.to_toml(&spec), Path::new("w.toml"), &spec).unwrap();
    assert_eq!(again.changes[0].filter, sc.changes[0].filter);
    let ds = data::load(&spec, &sc.extra(&spec)).unwrap();
    assert!(matches!(ds.table.column("district"), Some(Column::Text(_))));
    let fit = fit_spec(&spec, &ds);

    // Rows 1, 3 and 6 say `east`; `East` and the empty cell do not match.
    let prep = prepare::prepare(&spec, &fit, &ds.table, &sc).unwrap();
    assert_eq!(prep.attribute_deltas.len(), 1);
    assert_eq!(prep.attribute_deltas[0].3, [2.0, 0.0, 2.0, 0.0, 0.0, 2.0]);
    // `!=`: the empty (missing) cell is unequal to `east`, so it changes.
    let other =
        Scenario::from_str(&change("'east' != district"), Path::new("y.toml"), &spec).unwrap();
    let prep = prepare::prepare(&spec, &fit, &ds.table, &other).unwrap();
    assert_eq!(prep.attribute_deltas[0].3, [0.0, 2.0, 0.0, 2.0, 2.0, 0.0]);

    // Common practice (the binary logit's closed form, all parameters fixed):
    // V_go - V_stay = 0.5 - 0.2 * 3 + 0.2 * 1 = 0.1, and -0.3 where the price rose by 2;
    // the share is the mean over the six situations.
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
    let want = (3.0 * logistic(-0.3) + 3.0 * logistic(0.1)) / 6.0;
    assert!(
        (f.shares[1].scenario - want).abs() < 1e-12,
        "{}",
        f.shares[1].scenario
    );
    assert!((f.shares[1].base - logistic(0.1)).abs() < 1e-12);

    // The command line reads the filtered column as text too.
    let file = write(&dir, "east.toml", &change("district == 'east'"));
    let (code, _, err) = run(&[
        "simulate",
        spec_path.to_str().unwrap(),
        "--scenario",
        file.to_str().unwrap(),
        "--draws",
        "20",
    ]);
    assert_eq!(code, 0, "{err}");
}

#[test]
fn a_text_value_against_a_numeric_column_or_misplaced_is_refused() {
    let dir = scratch("scenario_text_refused");
    write(&dir, "d.csv", DATA);
    let spec = sharecast::model::parse_spec(SPEC, &dir.join("s.toml")).unwrap();
    // a text value beside `<` is refused when the scenario is read, at its character
    let e = Scenario::from_str(&change("district < 'east'"), Path::new("bad.toml"), &spec)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("bad.toml") && e.contains("at character 12") && e.contains("`==`"),
        "{e}"
    );
    // a numeric column the spec reads compared with a value that is not a number
    let sc = Scenario::from_str(&change("p_go == 'east'"), Path::new("bad.toml"), &spec).unwrap();
    assert!(
        sc.text_columns(&spec).is_empty(),
        "the spec reads p_go as numbers"
    );
    let ds = data::load(&spec, &sc.extra(&spec)).unwrap();
    let fit = fit_spec(&spec, &ds);
    let e = prepare::prepare(&spec, &fit, &ds.table, &sc)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("`p_go` holds numbers") && e.contains("where"),
        "{e}"
    );
    // ... and with one that is: read as a number
    let sc = Scenario::from_str(&change("p_go == '3'"), Path::new("ok.toml"), &spec).unwrap();
    let prep = prepare::prepare(&spec, &fit, &ds.table, &sc).unwrap();
    assert_eq!(prep.attribute_deltas[0].3, [2.0; 6]);
}
