//! Fuzzes the expression parser and evaluator on a few columns, numeric and text.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        if let Ok(e) = sharecast::spec::Expr::parse(text) {
            let a = [1.0, -2.0, 0.0];
            let b = [3.0, 0.5, f64::MAX];
            let lookup = |c: &str| match c {
                "a" => Some(&a[..]),
                "b" => Some(&b[..]),
                _ => None,
            };
            let _ = e.eval(&lookup, 3);
            let t = [Some("x".to_string()), None, Some("it's".to_string())];
            let texts = |c: &str| match c {
                "t" => Some(&t[..]),
                _ => None,
            };
            let _ = e.eval_with_text(&lookup, &texts, 3);
            let _ = e.columns();
            let _ = e.text_columns();
        }
    }
});
