//! Fuzzes the restriction parser (`restrictions = [...]`, `fit --restrict`)
//! against the parameters of a fixed spec: a restriction or an error, never a
//! panic or a stack overflow; what parses has finite coefficients on known parameters.
#![no_main]
use std::path::Path;
use std::sync::OnceLock;

use libfuzzer_sys::fuzz_target;
use sharecast::spec::{parse_restriction, Spec};

const SPEC: &str = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"m\"\n[model]\nfamily = \"logit\"\nbase = \"car\"\n[alternatives.car]\n[alternatives.bus]\n[alternatives.rail]\n[[attribute]]\nname = \"cost\"\ncoefficient = \"per-alternative\"\ncolumns = { car = \"c1\", bus = \"c2\", rail = \"c3\" }\n[[characteristic]]\nname = \"income\"\ncolumn = \"inc\"\n";

fn spec() -> &'static Spec {
    static S: OnceLock<Spec> = OnceLock::new();
    S.get_or_init(|| match sharecast::model::parse_spec(SPEC, Path::new("fuzz/spec.toml")) {
        Ok(s) => s,
        Err(e) => panic!("fixed spec invalid: {e}"),
    })
}

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let params = &spec().parameters;
        if let Ok(r) = parse_restriction(text, params) {
            assert!(!r.coefficients.is_empty());
            for (k, _) in &r.coefficients {
                assert!(*k < params.len());
            }
        }
    }
});
