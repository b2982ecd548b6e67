//! Fuzzes scenario `where` filters: the text is parsed as an expression and,
//! when it parses, applied to a small data set through `scenario::prepare`
//! (evaluation over the table's numeric and text columns): changed values or
//! an error, never a panic or a stack overflow.
#![no_main]
use std::path::PathBuf;
use std::sync::{Arc, OnceLock};

use libfuzzer_sys::fuzz_target;
use sharecast::data::{self, Dataset, Extra};
use sharecast::estimate::{self, Fit, Step};
use sharecast::scenario::{prepare, Change, Op, Scenario, Target};
use sharecast::spec::{Expr, Spec};

const SPEC: &str = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"m\"\n[model]\nfamily = \"logit\"\nbase = \"car\"\n[alternatives.car]\n[alternatives.bus]\n[[attribute]]\nname = \"cost\"\ncolumns = { car = \"c1\", bus = \"c2\" }\n[[characteristic]]\nname = \"income\"\ncolumn = \"inc\"\n[derived]\nhalf = \"inc / 2\"\n[parameters]\nasc_bus = { fixed = 0.3 }\ncost = { fixed = -0.5 }\nincome_bus = { fixed = 0.01 }\n";
const CSV: &str = "m,c1,c2,inc,zone,district\ncar,1,2,10,1,east\nbus,2,1,0,2,west\ncar,1.5,0.5,-3,3,\nbus,0,1e10,5,1,it's\n";

struct Fixed {
    spec: Spec,
    ds: Dataset,
    fit: Fit,
}

fn fixed() -> &'static Fixed {
    static F: OnceLock<Fixed> = OnceLock::new();
    F.get_or_init(|| {
        let dir: PathBuf = std::env::temp_dir().join(format!("sharecast-fuzz-filter-{}", std::process::id()));
        let _ = std::fs::create_dir_all(&dir);
        let _ = std::fs::write(dir.join("d.csv"), CSV);
        let spec = match sharecast::model::parse_spec(SPEC, &dir.join("s.toml")) {
            Ok(s) => s,
            Err(e) => panic!("fixed spec invalid: {e}"),
        };
        let extra = Extra { numeric: vec!["zone".into()], text: vec!["district".into()] };
        let ds = match data::load(&spec, &extra) {
            Ok(d) => d,
            Err(e) => panic!("fixed data invalid: {e}"),
        };
        // Every parameter is fixed: the fit only builds the design.
        let quiet = |_s: Step| {};
        let fit = match estimate::fit(&spec, Arc::new(ds.obs.clone()), &quiet) {
            Ok(f) => f,
            Err(e) => panic!("fixed fit failed: {e}"),
        };
        Fixed { spec, ds, fit }
    })
}

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let Ok(e) = Expr::parse(text) else {
        return;
    };
    let f = fixed();
    let sc = Scenario {
        name: "fuzz".into(),
        changes: vec![Change {
            target: Target::Attribute { attribute: 0, alternative: 1 },
            op: Op::Add(1.0),
            filter: Some((text.to_string(), e)),
        }],
        ..Scenario::default()
    };
    let _ = prepare::prepare(&f.spec, &f.fit, &f.ds.table, &sc);
});
