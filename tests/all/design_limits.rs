//! Design files pushed to their limits: every number of a valid file
//! replaced by extreme or wrong values and every line deleted in turn; each
//! variant is either refused with a message naming the file or searched
//! without a panic (common practice: no input may crash the command).

use std::panic::{catch_unwind, AssertUnwindSafe};

use sharecast::experiment;
use sharecast::progress::QUIET;

use crate::common::{run, scratch, write};
use crate::design::WAVE;

const REPLACEMENTS: &[&str] = &[
    "0",
    "-1",
    "1",
    "1e9",
    "1e10",
    "nan",
    "inf",
    "-inf",
    "2000",
    "9223372036854775807",
    "\"x\"",
    "[]",
    "{}",
    "{ mean = 1, sd = -1 }",
    "0.5",
];

/// The byte ranges of the number literals of `text`.
fn numbers(text: &str) -> Vec<(usize, usize)> {
    let b = text.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let starts = b[i].is_ascii_digit()
            && (i == 0 || !(b[i - 1].is_ascii_alphanumeric() || b[i - 1] == b'_'));
        if starts {
            let s = i;
            while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.') {
                i += 1;
            }
            out.push((s, i));
        } else {
            i += 1;
        }
    }
    out
}

fn variants(text: &str) -> Vec<String> {
    let mut out = Vec::new();
    for (s, e) in numbers(text) {
        for r in REPLACEMENTS {
            out.push(format!("{}{}{}", &text[..s], r, &text[e..]));
        }
    }
    let lines: Vec<&str> = text.lines().collect();
    for skip in 0..lines.len() {
        let kept: Vec<&str> = lines
            .iter()
            .enumerate()
            .filter(|(i, _)| *i != skip)
            .map(|(_, l)| *l)
            .collect();
        out.push(kept.join("\n"));
    }
    out
}

#[test]
fn no_variant_of_a_design_file_panics() {
    let dir = scratch("design_limits");
    let path = dir.join("d.toml");
    let mut refused = 0;
    let mut searched = 0;
    // Few prior draws and two starts keep each accepted variant's search short.
    let base = WAVE.replace("draws = 300", "draws = 20\nstarts = 2");
    for (n, text) in variants(&base).iter().enumerate() {
        std::fs::write(&path, text).unwrap();

        let outcome = catch_unwind(AssertUnwindSafe(|| match experiment::read(&path) {
            Err(e) => {
                assert!(e.to_string().contains("d.toml"), "variant {n}: {e}");
                Err(())
            }
            Ok(plan) if plan.tasks <= 64 && plan.draws <= 20 => {
                experiment::make(&plan, QUIET).map(|_| ()).map_err(|_| ())
            }
            Ok(_) => Ok(()),
        }));
        match outcome {
            Err(_) => panic!("variant {n} panicked:\n{text}"),
            Ok(Err(())) => refused += 1,
            Ok(Ok(())) => searched += 1,
        }
    }
    assert!(
        refused > 50 && searched > 20,
        "{refused} refused, {searched} accepted"
    );
}

#[test]
fn check_reads_a_design_file() {
    let dir = scratch("design_check");
    let file = write(&dir, "wave.toml", WAVE);
    let (code, stdout, stderr) = run(&["check", file.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("cost_A, cost_B") && stdout.contains("the design file is valid"),
        "{stdout}"
    );
    let bad = write(&dir, "bad.toml", &WAVE.replace("blocks = 2", "blocks = 3"));
    let (code, _, stderr) = run(&["check", bad.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(
        stderr.contains("bad.toml") && stderr.contains("[design].blocks"),
        "{stderr}"
    );
}
