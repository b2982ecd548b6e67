//! Fuzzes the spec parser and validator: any text must give a spec or an error, never a panic.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let _ = sharecast::model::parse_spec(text, std::path::Path::new("fuzz/spec.toml"));
    }
});
