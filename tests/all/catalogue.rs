//! The catalogue of bad inputs: spec, data and scenario files a user might
//! bring, each giving a non-zero exit, a message naming the problem, and no
//! panic; and awkward but valid files that must work. Its other parts:
//! `limits.rs` (crashes, overflows, hangs and silent nonsense found by pushing
//! limits) and `wording.rs` (the reports' own wording and layout).

mod reading;

use crate::common::*;

const CSV: &str = "id,who,mode,wt,ca,cb,cc,inc\n1,1,a,1.0,1.0,2.0,3.0,10\n2,1,b,1.0,1.5,2.5,3.5,20\n3,2,c,1.0,1.2,2.2,3.2,30\n4,2,a,2.0,1.1,2.1,3.1,40\n5,3,b,1.0,2.1,1.1,3.3,50\n6,3,c,1.0,1.9,2.4,1.3,60\n";

fn spec(data: &str, extra: &str) -> String {
    format!(
        "[data]\nfile = \"{data}\"\nlayout = \"wide\"\nchoice = \"mode\"\nweight = \"wt\"\ngroup = \"who\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[alternatives.c]\n[[attribute]]\nname = \"cost\"\ncolumns = {{ a = \"ca\", b = \"cb\", c = \"cc\" }}\n[[characteristic]]\nname = \"income\"\ncolumn = \"inc\"\n{extra}"
    )
}

/// The CSV without its field number `k` (from 0) in every line.
fn drop_field(csv: &str, k: usize) -> String {
    csv.lines()
        .map(|l| {
            let mut f: Vec<&str> = l.split(',').collect();
            f.remove(k);
            f.join(",") + "\n"
        })
        .collect()
}

/// The catalogue CSV with a `note` column after `id` holding `notes`.
fn with_note(notes: &[&str]) -> String {
    CSV.lines()
        .enumerate()
        .map(|(i, l)| {
            let (id, rest) = l.split_once(',').unwrap();
            let note = if i == 0 { "note" } else { notes[i - 1] };
            format!("{id},{note},{rest}\n")
        })
        .collect()
}

enum Data {
    Text(String),
    Bytes(Vec<u8>),
}

struct Case {
    name: &'static str,
    spec: String,
    data: Data,
    /// (file name, content) of a scenario; when given, `simulate` runs instead of `check`.
    scenario: Option<&'static str>,
    words: &'static [&'static str],
}

fn case(name: &'static str, spec: String, data: &str, words: &'static [&'static str]) -> Case {
    Case {
        name,
        spec,
        data: Data::Text(data.to_string()),
        scenario: None,
        words,
    }
}

fn scen(name: &'static str, scenario: &'static str, words: &'static [&'static str]) -> Case {
    Case {
        name,
        spec: spec("d.csv", ""),
        data: Data::Text(CSV.to_string()),
        scenario: Some(scenario),
        words,
    }
}

fn cases() -> Vec<Case> {
    let ok = spec("d.csv", "");
    vec![
        case("empty file", ok.clone(), "", &["d.csv", "empty"]),
        case("header only", ok.clone(), "id,who,mode,wt,ca,cb,cc,inc\n", &["no data rows"]),
        case("column all missing", ok.clone(), &CSV.replace(",10\n", ",\n").replace(",20\n", ",\n").replace(",30\n", ",\n").replace(",40\n", ",\n").replace(",50\n", ",\n").replace(",60\n", ",\n"), &["inc", "6 row(s)", "row 1"]),
        case("NaN value", ok.clone(), &CSV.replace("2.5,3.5", "NaN,3.5"), &["cb", "row 2", "not a number"]),
        case("infinite value", ok.clone(), &CSV.replace("2.2,3.2", "inf,3.2"), &["cb", "row 3", "infinite"]),
        case("huge magnitude", ok.clone(), &CSV.replace("1.2,2.2", "1e300,2.2"), &["ca", "row 3", "too large"]),
        case("negative weight", ok.clone(), &CSV.replace("4,2,a,2.0", "4,2,a,-2.0"), &["wt", "row 4", "positive"]),
        case("zero weight", ok.clone(), &CSV.replace("4,2,a,2.0", "4,2,a,0"), &["wt", "row 4", "positive"]),
        case("missing choice", ok.clone(), &CSV.replace("3,2,c,", "3,2,,"), &["mode", "missing", "row 3"]),
        case("undeclared choice", ok.clone(), &CSV.replace("3,2,c,", "3,2,ferry,"), &["mode", "ferry", "row 3"]),
        case("spec points at a directory", spec(".", ""), CSV, &["directory"]),
        Case { name: "not a csv", spec: ok.clone(), data: Data::Bytes(vec![0x50, 0x4b, 3, 4, 0, 0, 0xff, 0xfe, 0x80, 0, 1, 2]), scenario: None, words: &["d.csv"] },
        case("parquet that is text", spec("d.parquet", ""), CSV, &["d.parquet", "could not be read"]),
        case("spreadsheet file", spec("d.xlsx", ""), CSV, &["d.xlsx", ".csv or .parquet"]),
        case("unknown family", ok.replace("\"logit\"", "\"tobit\""), CSV, &["[model].family", "tobit"]),
        case("unknown layout", ok.replace("\"wide\"", "\"tall\""), CSV, &["[data].layout", "tall"]),
        case("wrong value type", ok.replace("choice = \"mode\"", "choice = 3"), CSV, &["choice", "line"]),
        case("alternatives not a table", ok.replace("[alternatives.a]\n[alternatives.b]\n[alternatives.c]\n", "alternatives = 3\n"), CSV, &["alternatives"]),
        case("attribute without columns", ok.replace("columns = { a = \"ca\", b = \"cb\", c = \"cc\" }\n", ""), CSV, &["[[attribute]] cost", "columns"]),
        case("unknown coefficient kind", ok.replace("name = \"cost\"\n", "name = \"cost\"\ncoefficient = \"weird\"\n"), CSV, &["coefficient", "weird"]),
        case("characteristic on the base", ok.replace("column = \"inc\"\n", "column = \"inc\"\nalternatives = [\"a\", \"b\"]\n"), CSV, &["[[characteristic]] income", "base"]),
        case("derived unknown column", spec("d.csv", "[derived]\nk = \"salary / 2\"\n"), CSV, &["salary"]),
        case("derived not finite", spec("d.csv", "[derived]\nk = \"ca / 0\"\n").replace("a = \"ca\"", "a = \"k\""), CSV, &["`k`", "infinite"]),
        case("start and fixed", spec("d.csv", "[parameters]\ncost = { start = 1, fixed = 2 }\n"), CSV, &["[parameters].cost", "not both"]),
        case("ratio of unknown parameter", spec("d.csv", "[[ratio]]\nname = \"wtp\"\nnumerator = \"time\"\ndenominator = \"cost\"\n"), CSV, &["[[ratio]] wtp", "`time`"]),
        case("holdout out of range", spec("d.csv", "[validation]\nholdout = 2.0\n"), CSV, &["[validation].holdout"]),
        case("targets over one", spec("d.csv", "[calibration]\ntargets = { b = 0.7, c = 0.6 }\n"), CSV, &["[calibration].targets", "more than 1"]),
        case("non-linear restriction", format!("restrictions = [\"cost * income_b = 1\"]\n{}", spec("d.csv", "")), CSV, &["restrictions", "not linear"]),
        case("duplicate code", ok.replace("[alternatives.b]\n", "[alternatives.b]\ncode = 1\n").replace("[alternatives.a]\n", "[alternatives.a]\ncode = 1\n"), CSV, &["code 1", "already used"]),
        case("row with more fields than the header", ok.clone(), &CSV.replace(",30\n", ",30,99\n"), &["d.csv", "row 3", "9 fields", "8 columns"]),
        case("line ends of a carriage return alone", ok.clone(), &CSV.replace('\n', "\r"), &["d.csv", "carriage return"]),
        case("header names a column twice", ok.clone(), &CSV.replace("cc,inc\n", "cc,ca,inc\n").replace(",10\n", ",0,10\n").replace(",20\n", ",0,20\n").replace(",30\n", ",0,30\n").replace(",40\n", ",0,40\n").replace(",50\n", ",0,50\n").replace(",60\n", ",0,60\n"), &["d.csv", "`ca` twice", "positions 5 and 8"]),
        case("derived reads a text column", spec("d.csv", "[derived]\nk = \"mode * 2\"\n").replace("a = \"ca\"", "a = \"k\""), CSV, &["[derived].k", "`mode`", "holds text", "row 1"]),
        case("no choice column", ok.clone(), &drop_field(CSV, 2), &["d.csv", "`mode`"]),
        case("derived reads text in a numeric-looking column", spec("d.csv", "[derived]\nk = \"note * 2\"\n").replace("a = \"ca\"", "a = \"k\""), &with_note(&["1", "2", "3", "late", "5", "6"]), &["[derived].k", "`note`", "holds text", "`late`", "row 4"]),
        case("derived reads a text column as a characteristic", spec("d.csv", "[derived]\nk = \"note / 2\"\n").replace("column = \"inc\"", "column = \"k\""), &with_note(&["x", "y", "z", "u", "v", "w"]), &["[derived].k", "`note`", "holds text", "`x`", "row 1"]),
        case("derived reads text in the last row", spec("d.csv", "[derived]\nk = \"ca + note\"\n").replace("a = \"ca\"", "a = \"k\""), &with_note(&["1", "NA", "3", "", "5", "six"]), &["[derived].k", "`note`", "`six`", "row 6"]),
        case("nest alternatives as a string", spec("d.csv", "[[nest]]\nname = \"bc\"\nalternatives = \"b\"\n").replace("\"logit\"", "\"nested\""), CSV, &["[[nest]] bc", "`alternatives` must be a list"]),
        case("nest name not a string", spec("d.csv", "[[nest]]\nname = 3\nalternatives = [\"b\", \"c\"]\n").replace("\"logit\"", "\"nested\""), CSV, &["[[nest]] number 1", "`name` must be a string"]),
        case("alternatives as a list under [model]", ok.replace("base = \"a\"\n", "base = \"a\"\nalternatives = [\"a\", \"b\", \"c\"]\n").replace("[alternatives.a]\n[alternatives.b]\n[alternatives.c]\n", ""), CSV, &["missing field `alternatives`", "[alternatives.bus]"]),
        case("characteristic alternatives as a string", ok.replace("column = \"inc\"\n", "column = \"inc\"\nalternatives = \"b\"\n"), CSV, &["line 19", "alternatives = \"b\"", "a list in square brackets"]),
        scen("scenario: remove as a string", "remove = \"b\"\n", &["s.toml", "line 1", "a list in square brackets"]),
        scen("scenario: unknown attribute", "[[change]]\nattribute = \"speed\"\nalternative = \"b\"\nadd = 1\n", &["s.toml", "`speed`"]),
        scen("scenario: two operations", "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\nset = 2\n", &["s.toml", "exactly one"]),
        scen("scenario: bad where", "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\nwhere = \"inc >> 3\"\n", &["s.toml", "where", "at character"]),
        scen("scenario: name taken", "[[new_alternative]]\nname = \"b\"\nlike = \"c\"\n", &["s.toml", "taken"]),
        scen("scenario: remove everything", "remove = [\"a\", \"b\", \"c\"]\n", &["s.toml", "nothing to choose"]),
        scen("scenario: unknown key", "nmae = \"typo\"\n", &["s.toml", "nmae"]),
        scen("scenario: where on unknown column", "[[change]]\nattribute = \"cost\"\nalternative = \"b\"\nadd = 1\nwhere = \"zone == 2\"\n", &["zone"]),
    ]
}

#[test]
fn every_catalogued_bad_input_fails_cleanly() {
    let dir = scratch("catalogue");
    let all = cases();
    assert!(all.len() >= 30, "the catalogue holds {} cases", all.len());
    for c in all {
        let sub = dir.join(c.name.replace([' ', ':'], "_"));
        std::fs::create_dir_all(&sub).unwrap();
        for name in ["d.csv", "d.parquet", "d.xlsx"] {
            match &c.data {
                Data::Text(t) => std::fs::write(sub.join(name), t).unwrap(),
                Data::Bytes(b) => std::fs::write(sub.join(name), b).unwrap(),
            }
        }
        let spec_path = write(&sub, "spec.toml", &c.spec);
        let (code, out, err) = match c.scenario {
            Some(s) => {
                let sp = write(&sub, "s.toml", s);
                run(&[
                    "simulate",
                    spec_path.to_str().unwrap(),
                    "--scenario",
                    sp.to_str().unwrap(),
                    "--draws",
                    "0",
                ])
            }
            None => run(&["check", spec_path.to_str().unwrap()]),
        };
        assert_ne!(code, 0, "{}: expected a failure, got:\n{out}", c.name);
        assert_ne!(code, 101, "{}: panicked:\n{err}", c.name);
        assert!(!err.contains("panicked"), "{}: panicked:\n{err}", c.name);
        for w in c.words {
            assert!(err.contains(w), "{}: message lacks `{w}`:\n{err}", c.name);
        }
    }
}

fn fit_ok(dir_name: &str, spec_text: &str, bytes: &[u8]) -> serde_json::Value {
    let dir = scratch(dir_name);
    std::fs::write(dir.join("d.csv"), bytes).unwrap();
    let sp = write(&dir, "spec.toml", spec_text);
    let (code, out, err) = run(&[
        "fit",
        sp.to_str().unwrap(),
        "--json",
        "--no-analysis",
        "--allow-unconverged",
    ]);
    assert_eq!(code, 0, "{dir_name}: {err}");
    serde_json::from_str(&out).unwrap()
}

#[test]
fn awkward_but_valid_files_work() {
    // The same six situations written five awkward ways give the same fit.
    let plain = fit_ok("valid_plain", &spec("d.csv", ""), CSV.as_bytes());
    let ll = plain["fit"]["log_likelihood"].as_f64().unwrap();
    let mut bom = b"\xEF\xBB\xBF".to_vec();
    bom.extend(CSV.as_bytes());
    let crlf = CSV.replace('\n', "\r\n");
    let quoted = CSV
        .replace("id,who", "\"id\",\"who\"")
        .replace("1,1,a,", "1,\"1\",\"a\",")
        .replace(",10\n", ",\"10\"\n");
    // numbers padded with spaces, as some exports write them
    let padded = CSV
        .replace(",1.5,2.5,", ", 1.5 ,  2.5,")
        .replace(",20\n", ", 20 \n");
    let variants: Vec<(&str, Vec<u8>)> = vec![
        ("valid_padded", padded.into_bytes()),
        ("valid_bom", bom),
        ("valid_crlf", crlf.into_bytes()),
        ("valid_quoted", quoted.into_bytes()),
    ];
    for (name, bytes) in variants {
        let v = fit_ok(name, &spec("d.csv", ""), &bytes);
        assert!(
            (v["fit"]["log_likelihood"].as_f64().unwrap() - ll).abs() < 1e-9,
            "{name}"
        );
    }
    // quoted fields holding commas (a text column that no term reads)
    let with_note = CSV
        .replace("id,who,", "id,note,who,")
        .replace("\n1,", "\n1,\"late, rainy\",")
        .replace("\n2,", "\n2,\"early\",")
        .replace("\n3,", "\n3,\"a, b, c\",")
        .replace("\n4,", "\n4,x,")
        .replace("\n5,", "\n5,y,")
        .replace("\n6,", "\n6,z,");
    let v = fit_ok("valid_commas", &spec("d.csv", ""), with_note.as_bytes());
    assert!((v["fit"]["log_likelihood"].as_f64().unwrap() - ll).abs() < 1e-9);
    // unicode alternative names
    let uni = CSV
        .replace(",a,", ",café,")
        .replace(",b,", ",bücher,")
        .replace(",c,", ",東京,");
    let uspec = spec("d.csv", "")
        .replace("base = \"a\"", "base = \"café\"")
        .replace(
            "[alternatives.a]\n[alternatives.b]\n[alternatives.c]",
            "[alternatives.\"café\"]\n[alternatives.\"bücher\"]\n[alternatives.\"東京\"]",
        )
        .replace(
            "{ a = \"ca\", b = \"cb\", c = \"cc\" }",
            "{ \"café\" = \"ca\", \"bücher\" = \"cb\", \"東京\" = \"cc\" }",
        );
    let v = fit_ok("valid_unicode", &uspec, uni.as_bytes());
    assert!((v["fit"]["log_likelihood"].as_f64().unwrap() - ll).abs() < 1e-9);
    let names: Vec<&str> = v["parameters"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["name"].as_str().unwrap())
        .collect();
    assert!(
        names.contains(&"asc_東京") && names.contains(&"income_bücher"),
        "{names:?}"
    );
}

#[test]
fn one_situation_per_group_is_plain_robust() {
    // Clustering on groups of one is the ordinary sandwich (White 1982): the robust errors
    // with a singleton group column equal those without any group column.
    let csv = CSV
        .replace("\n2,1,", "\n2,2,")
        .replace("\n3,2,", "\n3,3,")
        .replace("\n4,2,", "\n4,4,")
        .replace("\n5,3,", "\n5,5,")
        .replace("\n6,3,", "\n6,6,");
    let with = fit_ok("singleton_groups", &spec("d.csv", ""), csv.as_bytes());
    let without = fit_ok(
        "no_groups",
        &spec("d.csv", "").replace("group = \"who\"\n", ""),
        csv.as_bytes(),
    );
    assert_eq!(with["fit"]["groups"].as_u64(), Some(6));
    for (a, b) in with["parameters"]
        .as_array()
        .unwrap()
        .iter()
        .zip(without["parameters"].as_array().unwrap())
    {
        let (ra, rb) = (
            a["robust_std_error"].as_f64(),
            b["robust_std_error"].as_f64(),
        );
        match (ra, rb) {
            (Some(x), Some(y)) => assert!((x - y).abs() < 1e-9 * y.abs().max(1.0)),
            (x, y) => assert_eq!(x.is_some(), y.is_some()),
        }
    }
}

#[test]
fn a_spec_without_family_fits_as_logit() {
    // `[model].family` defaults to "logit" (the spec contract): the same fit as
    // the spec that names it.
    let named = fit_ok("family_named", &spec("d.csv", ""), CSV.as_bytes());
    let unnamed = fit_ok(
        "family_default",
        &spec("d.csv", "").replace("family = \"logit\"\n", ""),
        CSV.as_bytes(),
    );
    assert_eq!(unnamed["family"], "logit");
    assert_eq!(
        named["fit"]["log_likelihood"].as_f64(),
        unnamed["fit"]["log_likelihood"].as_f64()
    );
}

#[test]
fn a_key_no_section_or_family_claims_is_refused() {
    // Unknown top-level tables and `[model]` keys are named, not ignored.
    let dir = scratch("unclaimed_keys");
    std::fs::write(dir.join("d.csv"), CSV).unwrap();
    for (name, extra, words) in [
        (
            "top",
            spec("d.csv", "[[nests]]\nname = \"x\"\n"),
            &["nests", "logit"][..],
        ),
        (
            "model",
            spec("d.csv", "").replace("base = \"a\"\n", "base = \"a\"\nrandom_things = 1\n"),
            &["[model]", "random_things"][..],
        ),
    ] {
        let sp = write(&dir, &format!("{name}.toml"), &extra);
        let (code, _, err) = run(&["check", sp.to_str().unwrap()]);
        assert_eq!(code, 1, "{name}: {err}");
        assert!(!err.contains("panicked"), "{name}: {err}");
        for w in words {
            assert!(err.contains(w), "{name}: `{w}` not in: {err}");
        }
    }
}

#[test]
fn bench_of_a_model_without_attributes_runs() {
    // Regression: the timed what-if assumed an attribute exists and panicked
    // (index out of bounds) for `--model characteristics`.
    let (code, out, err) = run(&[
        "bench",
        "--model",
        "characteristics",
        "--situations",
        "3000",
        "--repeats",
        "1",
        "--no-process",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains("panicked"), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert!(v["whatif_seconds"].as_f64().unwrap() >= 0.0);
}
