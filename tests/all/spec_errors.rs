//! Every bad input of the spec and data checks: a non-zero exit, a message
//! naming the offending file, key, column or row, and no panic.

use crate::common::*;

const WIDE: &str = "id,mode,cost_a,cost_b,cost_c,inc,has_c\n1,a,1.0,2.0,3.0,10,1\n2,b,1.5,2.5,3.5,20,1\n3,c,1.2,2.2,3.2,30,1\n4,a,1.1,2.1,3.1,40,0\n";
const LONG: &str =
    "sit,alt,chosen,cost,inc\n1,a,1,1.0,10\n1,b,0,2.0,10\n2,a,0,1.5,20\n2,b,1,2.5,20\n";

fn wide_spec(extra_model: &str, body: &str) -> String {
    format!(
        "[data]\nfile = \"wide.csv\"\nlayout = \"wide\"\nchoice = \"mode\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n{extra_model}\n[alternatives.a]\n[alternatives.b]\n[alternatives.c]\navailable = \"has_c\"\n{body}"
    )
}

const ATTR: &str = "[[attribute]]\nname = \"cost\"\ncolumns = { a = \"cost_a\", b = \"cost_b\", c = \"cost_c\" }\n";

fn long_spec(body: &str) -> String {
    format!(
        "[data]\nfile = \"long.csv\"\nlayout = \"long\"\nsituation = \"sit\"\nalternative = \"alt\"\nchosen = \"chosen\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[[attribute]]\nname = \"cost\"\ncolumn = \"cost\"\n{body}"
    )
}

/// (case name, spec text, wide csv, long csv, words the message must contain)
fn cases() -> Vec<(&'static str, String, String, String, Vec<&'static str>)> {
    let w = WIDE.to_string();
    let l = LONG.to_string();
    vec![
        ("data file missing", wide_spec("", ATTR).replace("wide.csv", "nowhere.csv"), w.clone(), l.clone(), vec!["nowhere.csv", "not found"]),
        ("empty data file", wide_spec("", ATTR), String::new(), l.clone(), vec!["wide.csv", "empty"]),
        ("header only", wide_spec("", ATTR), "id,mode,cost_a,cost_b,cost_c,inc,has_c\n".into(), l.clone(), vec!["wide.csv", "no data rows"]),
        ("malformed toml", "[data\nfile = 1".into(), w.clone(), l.clone(), vec!["spec.toml", "line 1"]),
        ("unknown key", wide_spec("", ATTR).replace("choice = \"mode\"", "chioce = \"mode\""), w.clone(), l.clone(), vec!["chioce"]),
        ("layout keys missing", wide_spec("", ATTR).replace("choice = \"mode\"\n", ""), w.clone(), l.clone(), vec!["[data]", "choice"]),
        ("layout keys mixed", wide_spec("", ATTR).replace("choice = \"mode\"", "choice = \"mode\"\nsituation = \"id\""), w.clone(), l.clone(), vec!["[data]", "situation"]),
        ("unknown column", wide_spec("", &ATTR.replace("cost_b", "fare_b")), w.clone(), l.clone(), vec!["wide.csv", "fare_b"]),
        ("non-numeric value", wide_spec("", ATTR), w.replace("2.5,3.5", "cheap,3.5"), l.clone(), vec!["cost_b", "row 2"]),
        ("missing value", wide_spec("", ATTR), w.replace("2.2,3.2", ",3.2"), l.clone(), vec!["cost_b", "row 3", "1 row"]),
        ("undeclared choice", wide_spec("", ATTR), w.replace("3,c,", "3,tram,"), l.clone(), vec!["mode", "row 3", "tram"]),
        ("chosen unavailable", wide_spec("", ATTR), w.replace("4,a,1.1,2.1,3.1,40,0", "4,c,1.1,2.1,3.1,40,0"), l.clone(), vec!["row 4", "`c`", "unavailable"]),
        ("base not an alternative", wide_spec("", ATTR).replace("base = \"a\"", "base = \"z\""), w.clone(), l.clone(), vec!["[model].base", "`z`"]),
        ("duplicate alternative", wide_spec("", ATTR).replace("[alternatives.b]", "[alternatives.b]\n[alternatives.a]"), w.clone(), l.clone(), vec!["duplicate", "a"]),
        ("one alternative", "[data]\nfile = \"wide.csv\"\nlayout = \"wide\"\nchoice = \"mode\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\n".into(), w.clone(), l.clone(), vec!["[alternatives]", "at least two"]),
        ("probit with an unknown error structure", wide_spec("", ATTR).replace("family = \"logit\"", "family = \"probit\"") + "[errors]\nstructure = \"diagonal\"\n", w.clone(), l.clone(), vec!["[errors].structure", "diagonal"]),
        ("columns naming undeclared", wide_spec("", &ATTR.replace("c = \"cost_c\"", "tram = \"cost_c\"")), w.clone(), l.clone(), vec!["[[attribute]] cost", "tram"]),
        ("unknown parameter", wide_spec("", &format!("{ATTR}[parameters]\nprice = {{ start = -1 }}\n")), w.clone(), l.clone(), vec!["[parameters].price"]),
        ("derived syntax error", wide_spec("", &format!("{ATTR}[derived]\nk = \"cost_a * / 2\"\n")), w.clone(), l.clone(), vec!["[derived].k", "at character 10"]),
        ("long: no chosen row", long_spec(""), w.clone(), l.replace("2,b,1", "2,b,0"), vec!["situation `2`", "0 chosen rows"]),
        ("long: two chosen rows", long_spec(""), w.clone(), l.replace("1,b,0", "1,b,1"), vec!["situation `1`", "2 chosen rows"]),
        ("long: duplicate row", long_spec(""), w.clone(), l.replace("2,b,1,2.5,20", "2,a,1,2.5,20"), vec!["situation `2`", "two rows for alternative `a`"]),
        ("long: characteristic varies", long_spec("[[characteristic]]\nname = \"income\"\ncolumn = \"inc\"\n"), w.clone(), l.replace("1,b,0,2.0,10", "1,b,0,2.0,11"), vec!["inc", "varies within situation `1`", "rows 1 and 2"]),
    ]
}

#[test]
fn every_bad_input_names_the_problem() {
    let dir = scratch("spec_errors");
    for (name, spec, wide, long, words) in cases() {
        let sub = dir.join(name.replace([' ', ':'], "_"));
        std::fs::create_dir_all(&sub).unwrap();
        write(&sub, "wide.csv", &wide);
        write(&sub, "long.csv", &long);
        let spec_path = write(&sub, "spec.toml", &spec);
        let (code, out, err) = run(&["check", spec_path.to_str().unwrap()]);
        assert_ne!(code, 0, "{name}: expected failure, got success:\n{out}");
        assert_ne!(code, 101, "{name}: panicked:\n{err}");
        for w in words {
            assert!(err.contains(w), "{name}: message lacks `{w}`:\n{err}");
        }
    }
}

#[test]
fn the_valid_fixture_passes() {
    let dir = scratch("spec_ok");
    write(&dir, "wide.csv", WIDE);
    write(&dir, "long.csv", LONG);
    let wide = write(&dir, "w.toml", &wide_spec("", ATTR));
    let (code, out, err) = run(&["check", wide.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("situations 4"), "{out}");
    let long = write(&dir, "l.toml", &long_spec(""));
    let (code, _, err) = run(&["check", long.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
}
