//! Messages that quote huge input (a 100,000-deep array, a 100,000-character
//! cell, name or string) stay short and still name the file and the place.

use super::{fails_with, run_in, setup, spec, CSV};
use crate::common::write;

#[test]
fn messages_quoting_huge_input_stay_short_and_name_the_file() {
    // Regression: a 100,000-deep nested array made a 200 KB message. What a
    // message quotes of the input is cut; the file and the place stay.
    let deep = format!("x = {}{}\n", "[".repeat(100_000), "]".repeat(100_000));
    let d = setup("huge_quotes", CSV, &deep);
    write(&d, "good.toml", &spec("d.csv", ""));
    write(&d, "s.toml", &deep);
    let r = run_in(&d, &["check", "spec.toml"], 60);
    fails_with(&r, &["spec.toml", "line 1", "^"]);
    assert!(r.2.len() < 1500, "{} bytes:\n{}", r.2.len(), r.2);
    let scenario = [
        "simulate",
        "good.toml",
        "--scenario",
        "s.toml",
        "--draws",
        "0",
    ];
    let r = run_in(&d, &scenario, 60);
    fails_with(&r, &["s.toml", "line 1", "^"]);
    assert!(r.2.len() < 1500, "{} bytes:\n{}", r.2.len(), r.2);
    // An unterminated string of 100,000 characters on line 3 of the spec.
    let open = format!("title = \"x\"\n\nfield = \"{}\n", "y".repeat(100_000));
    write(&d, "spec.toml", &open);
    let r = run_in(&d, &["check", "spec.toml"], 60);
    fails_with(&r, &["spec.toml", "line 3"]);
    assert!(r.2.len() < 1500, "{} bytes:\n{}", r.2.len(), r.2);
    // A data cell of 100,000 characters where an alternative is expected.
    let long_cell = CSV.replace("3,2,c,", &format!("3,2,{},", "z".repeat(100_000)));
    write(&d, "d.csv", &long_cell);
    let r = run_in(&d, &["check", "good.toml"], 60);
    fails_with(&r, &["d.csv", "row 3", "`mode`", "characters left out"]);
    assert!(r.2.len() < 1500, "{} bytes:\n{}", r.2.len(), r.2);
    write(&d, "d.csv", CSV);
    // A name of 3,000 characters in a scenario's filter expression.
    let name = "q".repeat(3000);
    write(
        &d,
        "s.toml",
        &format!("[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\nwhere = \"{name} > 1\"\n"),
    );
    let r = run_in(&d, &scenario, 60);
    fails_with(&r, &["d.csv", "characters left out"]);
    assert!(r.2.len() < 1500, "{} bytes:\n{}", r.2.len(), r.2);
    // A malformed number of 3,000 characters in a [derived] expression.
    let number = format!("1.{}", "2.".repeat(1500));
    write(
        &d,
        "spec.toml",
        &spec("d.csv", &format!("[derived]\nk = \"{number}\"\n")),
    );
    let r = run_in(&d, &["check", "spec.toml"], 60);
    fails_with(&r, &["spec.toml", "[derived].k", "characters left out"]);
    assert!(r.2.len() < 1500, "{} bytes:\n{}", r.2.len(), r.2);
    // A spec naming a column of 50,000 characters.
    let wide_name = spec("d.csv", "").replace(
        "column = \"inc\"",
        &format!("column = \"{}\"", "c".repeat(50_000)),
    );
    write(&d, "spec.toml", &wide_name);
    let r = run_in(&d, &["check", "spec.toml"], 60);
    fails_with(&r, &["d.csv", "characters left out"]);
    assert!(r.2.len() < 1500, "{} bytes:\n{}", r.2.len(), r.2);
}

#[test]
fn a_parse_error_in_trailing_white_space_is_reported_not_a_panic() {
    // Found by fuzzing (`spec` and `scenario`, the inputs below): the error's
    // column lay in white space at the end of its line (form feeds, spaces,
    // tabs), past the line the message shows, and cutting the window panicked.
    let feeds = format!("\n9{}\n9", "\u{c}".repeat(108));
    let tabs = format!("name\t{}\t\t", " ".repeat(138));
    let d = setup("trailing_space_errors", CSV, &feeds);
    write(&d, "good.toml", &spec("d.csv", ""));
    let r = run_in(&d, &["check", "spec.toml"], 60);
    fails_with(&r, &["spec.toml", "line ", "^"]);
    for (name, text) in [("feeds.toml", &feeds), ("tabs.toml", &tabs)] {
        write(&d, name, text);
        let args = ["simulate", "good.toml", "--scenario", name, "--draws", "0"];
        let r = run_in(&d, &args, 60);
        fails_with(&r, &[name, "line ", "^"]);
        assert!(!r.2.contains("panicked"), "{}", r.2);
    }
}
