//! Numerical edge cases: each gives a named warning or a correct figure,
//! never a crash or silent nonsense.

use sharecast::data::{self, Extra};
use sharecast::estimate::DiagnosticKind;

use crate::common::*;

fn fit_text(name: &str, csv: &str, spec_text: &str) -> sharecast::estimate::Fit {
    let dir = scratch(name);
    write(&dir, "d.csv", csv);
    let spec = sharecast::model::parse_spec(spec_text, &dir.join("s.toml")).unwrap();
    let ds = data::load(&spec, &Extra::default()).unwrap();
    fit_spec(&spec, &ds)
}

const HEAD: &str = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"m\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[alternatives.c]\n";

fn csv(rows: usize, f: impl Fn(usize) -> String) -> String {
    let mut s = String::from("m,xa,xb,xc,big_a,big_b,big_c\n");
    for i in 0..rows {
        s.push_str(&f(i));
        s.push('\n');
    }
    s
}

fn varied(i: usize) -> String {
    let m = ["a", "b", "c"][(i * 7 + i / 3) % 3];
    let x = |k: usize| ((i * 13 + k * 5) % 11) as f64 / 3.0;
    format!(
        "{m},{},{},{},{},{},{}",
        x(0),
        x(1),
        x(2),
        1000.0 + x(0),
        1001.0 + x(1),
        999.0 + x(2)
    )
}

#[test]
fn an_attribute_constant_within_each_alternative_is_collinear_with_the_constants() {
    // Fact of the method: an attribute that differs by alternative but never across
    // situations is a linear combination of the alternative-specific constants.
    let spec = format!("{HEAD}[[attribute]]\nname = \"x\"\ncolumns = {{ a = \"xa\", b = \"xb\", c = \"xc\" }}\n[[attribute]]\nname = \"fee\"\ncolumns = {{ a = 1, b = 2, c = 4 }}\n");
    let fit = fit_text("edge_collinear", &csv(60, varied), &spec);
    let d = fit
        .diagnostics
        .iter()
        .find(|d| d.kind == DiagnosticKind::NotIdentified)
        .expect("a not-identified finding");
    assert!(d.parameters.contains(&"fee".to_string()), "{d:?}");
    assert!(d.parameters.iter().any(|p| p.starts_with("asc_")), "{d:?}");
    assert!(
        d.message.contains("attribute fee") && d.message.contains("constants"),
        "{}",
        d.message
    );
}

#[test]
fn utilities_of_magnitude_a_thousand_do_not_overflow() {
    // Log-sum-exp keeps probabilities finite when utilities are ~1e3 (common practice).
    let spec = format!("{HEAD}[[attribute]]\nname = \"big\"\ncolumns = {{ a = \"big_a\", b = \"big_b\", c = \"big_c\" }}\n[parameters]\nbig = {{ fixed = 1.0 }}\n");
    let fit = fit_text("edge_big", &csv(60, varied), &spec);
    assert!(fit.stats.log_likelihood.is_finite());
    assert!(fit.stats.converged);
    let total: f64 = fit.shares.iter().map(|s| s.predicted).sum();
    assert!((total - 1.0).abs() < 1e-12);
    // the same model with utilities shifted down by 1000 gives the same likelihood
    let shifted = csv(60, |i| {
        let v = varied(i);
        let parts: Vec<&str> = v.split(',').collect();
        let f = |k: usize| parts[4 + k].parse::<f64>().unwrap() - 1000.0;
        format!(
            "{},{},{},{},{},{},{}",
            parts[0],
            parts[1],
            parts[2],
            parts[3],
            f(0),
            f(1),
            f(2)
        )
    });
    let fit2 = fit_text("edge_big_shifted", &shifted, &spec);
    assert!((fit.stats.log_likelihood - fit2.stats.log_likelihood).abs() < 1e-8);
}

#[test]
fn a_single_situation_is_reported_not_crashed() {
    let spec = format!(
        "{HEAD}[[attribute]]\nname = \"x\"\ncolumns = {{ a = \"xa\", b = \"xb\", c = \"xc\" }}\n"
    );
    let fit = fit_text("edge_single", &csv(1, varied), &spec);
    assert_eq!(fit.stats.situations, 1);
    assert!(
        !fit.diagnostics.is_empty(),
        "one situation cannot identify three parameters"
    );
    let (code, _, err) = {
        let dir = scratch("edge_single_cli");
        write(&dir, "d.csv", &csv(1, varied));
        let sp = write(&dir, "s.toml", &spec);
        run(&["fit", sp.to_str().unwrap()])
    };
    assert_ne!(code, 101, "panicked: {err}");
}
