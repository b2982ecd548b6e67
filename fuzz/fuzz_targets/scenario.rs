//! Fuzzes the scenario parser against a fixed spec (and writes back what parses).
#![no_main]
use std::path::Path;
use std::sync::OnceLock;

use libfuzzer_sys::fuzz_target;
use sharecast::scenario::Scenario;
use sharecast::spec::Spec;

const SPEC: &str = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"m\"\n[model]\nfamily = \"logit\"\nbase = \"car\"\n[alternatives.car]\n[alternatives.bus]\n[alternatives.rail]\n[[attribute]]\nname = \"cost\"\ncolumns = { car = \"c1\", bus = \"c2\", rail = \"c3\" }\n[[attribute]]\nname = \"time\"\ncoefficient = \"per-alternative\"\ncolumns = { bus = \"t2\", rail = \"t3\" }\n[[characteristic]]\nname = \"income\"\ncolumn = \"inc\"\n";

fn spec() -> &'static Spec {
    static S: OnceLock<Spec> = OnceLock::new();
    S.get_or_init(|| match sharecast::model::parse_spec(SPEC, Path::new("fuzz/spec.toml")) {
        Ok(s) => s,
        Err(e) => panic!("fixed spec invalid: {e}"),
    })
}

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        if let Ok(sc) = Scenario::from_str(text, Path::new("fuzz/s.toml"), spec()) {
            let again = sc.to_toml(spec());
            let back = Scenario::from_str(&again, Path::new("fuzz/s2.toml"), spec());
            assert!(back.is_ok(), "a written scenario must read back: {again}");
        }
    }
});
