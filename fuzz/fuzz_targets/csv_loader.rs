//! Fuzzes the data loader on small CSV inputs: loading and reshaping must
//! give observations or an error, never a panic.
#![no_main]
use std::path::PathBuf;
use std::sync::OnceLock;

use libfuzzer_sys::fuzz_target;
use sharecast::data::{self, Extra};

fn dir() -> &'static PathBuf {
    static D: OnceLock<PathBuf> = OnceLock::new();
    D.get_or_init(|| {
        let d = std::env::temp_dir().join(format!("sharecast-fuzz-{}", std::process::id()));
        let _ = std::fs::create_dir_all(&d);
        d
    })
}

const WIDE: &str = "[data]\nfile = \"d.csv\"\nlayout = \"wide\"\nchoice = \"m\"\nweight = \"w\"\ngroup = \"g\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\ncode = 1\n[alternatives.b]\navailable = \"ab\"\n[[attribute]]\nname = \"x\"\ncolumns = { a = \"xa\", b = \"xb\" }\n[[characteristic]]\nname = \"z\"\ncolumn = \"z\"\n[derived]\nxa2 = \"xa * 2\"\n";
const LONG: &str = "[data]\nfile = \"d.csv\"\nlayout = \"long\"\nsituation = \"s\"\nalternative = \"m\"\nchosen = \"w\"\n[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[[attribute]]\nname = \"x\"\ncolumn = \"xa\"\n[[characteristic]]\nname = \"z\"\ncolumn = \"z\"\n";

fuzz_target!(|data: &[u8]| {
    if data.len() > 4096 {
        return;
    }
    let d = dir();
    let file = d.join("d.csv");
    if std::fs::write(&file, data).is_err() {
        return;
    }
    for text in [WIDE, LONG] {
        if let Ok(spec) = sharecast::model::parse_spec(text, &d.join("s.toml")) {
            let _ = data::load(&spec, &Extra::default());
        }
    }
});
