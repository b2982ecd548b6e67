//! Report: turns fits, analyses and scenarios into text for the terminal and
//! the JSON results document. Nothing here computes a statistic.

pub mod check;
pub mod compare;
pub mod experiment;
pub mod forecast;
pub mod heat;
pub mod html;
pub mod json;
pub mod sections;
pub mod text;
pub mod walk;

use crate::model::Family;
use crate::spec::Spec;

/// The first sentence of every report's cautions.
pub const GENERAL_CAUTION: &str = "Cautions: forecasts rest on the model's assumptions and on how well the sample represents the population it is applied to.";

/// Further cautions the HTML report states in full beside the line every report carries.
pub const FURTHER_CAUTIONS: [&str; 3] = [
    "Estimates describe the sample. Shares carried to a population need a sample that represents it (or weights that make it do so), and forecasts far outside the range of the data are extrapolations.",
    "Standard errors assume the model is correctly specified; with repeated choices by one decision maker, set [data].group so that errors are clustered.",
    "Uncertainty bands on forecasts cover parameter uncertainty only (draws from the estimated distribution of the parameters), not errors in the forecast inputs or in the model's form. Calibrating constants to counts makes the base match but does not validate the model's response to change.",
];

/// The sentences of the cautions line: the general one, the family's own and the field's own.
pub fn caution_sentences(spec: &Spec, family: &dyn Family) -> Vec<String> {
    let mut out = vec![GENERAL_CAUTION.to_string()];
    out.extend(family.caution(spec));
    out.extend(spec.field.caution().map(str::to_string));
    out
}

/// The cautions line every report carries, with the family's own sentence.
pub fn cautions(spec: &Spec, family: &dyn Family) -> String {
    caution_sentences(spec, family).join(" ")
}

/// A number in a fixed-width column: fixed point for ordinary magnitudes, scientific otherwise.
pub fn num(x: f64, width: usize) -> String {
    if x.is_nan() {
        return format!("{:>width$}", "—");
    }
    let a = x.abs();
    let s = if a == 0.0 {
        "0".to_string()
    } else if !(1e-4..1e6).contains(&a) {
        format!("{x:.3e}")
    } else if a >= 1000.0 {
        format!("{x:.1}")
    } else if a >= 1.0 {
        format!("{x:.4}")
    } else {
        format!("{x:.5}")
    };
    format!("{s:>width$}")
}

/// Decimals that show about three significant digits of `v` (the text and
/// HTML reports' matrices).
pub fn decimals(v: f64) -> usize {
    if v == 0.0 || !v.is_finite() {
        return 3;
    }
    (2 - v.abs().log10().floor() as i32).clamp(3, 7) as usize
}

/// A value with about three significant digits and its standard error after
/// `sep` (none when the error is not a number), or a dot when the value is missing.
pub fn value_se(v: f64, se: f64, sep: &str) -> String {
    if v.is_nan() {
        return "·".to_string();
    }
    let d = decimals(v);
    if se.is_finite() {
        format!("{v:.d$}{sep}{se:.d$}")
    } else {
        format!("{v:.d$}")
    }
}

/// The smallest p-value written as a number; below it, `< 1e-12`.
pub const P_FLOOR: f64 = 1e-12;

/// p-values to two significant digits: plain decimals down to 0.001
/// (`0.46`, `0.046`, `0.0046`), e-notation below (`3.2e-5`), and `< 1e-12`
/// under the floor, where the normal tail is no longer worth reading.
pub fn pval(p: f64) -> String {
    if p.is_nan() {
        "—".to_string()
    } else if p < P_FLOOR {
        "< 1e-12".to_string()
    } else if p < 0.001 {
        format!("{p:.1e}")
    } else if p >= 0.995 {
        "1.0".to_string()
    } else {
        // two significant digits: the number of decimals follows the magnitude
        let decimals = (1 - p.log10().floor() as i32).max(2) as usize;
        format!("{p:.decimals$}")
    }
}

/// Which errors a fit's t, p and intervals use, for headings.
pub fn errors_label(fit: &crate::estimate::Fit) -> &'static str {
    if fit.stats.inference == "robust" {
        "clustered by decision maker"
    } else {
        "from the Hessian"
    }
}

/// The standard error a row's inference uses (clustered or Hessian).
pub fn shown_error(fit: &crate::estimate::Fit, row: &crate::estimate::ParameterRow) -> f64 {
    if fit.stats.inference == "robust" {
        row.robust_std_error
    } else {
        row.std_error
    }
}

/// `value ± error` on one line, each as `num` writes it (a dash when missing).
pub fn plus_minus(value: f64, error: f64) -> String {
    format!("{} ± {}", num(value, 0).trim(), num(error, 0).trim())
}

/// Writes text to standard output, checked: a failed write (a full disk,
/// `> /dev/full`) is an error value for a message and a non-zero exit; a closed
/// pipe (`| head`) is not an error, the rest of the output is simply dropped.
pub fn say(text: &str) -> crate::error::Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(crate::error::Error::io(
            "standard output",
            format!("could not write the output: {e}"),
        )),
    }
}

/// Writes text to standard error without ever failing: progress lines and
/// notes are not worth an abort if stderr is gone.
pub fn note(text: &str) {
    use std::io::Write;
    let mut err = std::io::stderr().lock();
    let _ = err.write_all(text.as_bytes()).and_then(|()| err.flush());
}

/// Whether stdout is a colour terminal.
pub fn colour() -> bool {
    use std::io::IsTerminal;
    std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none()
}

pub fn red(s: &str, on: bool) -> String {
    if on {
        format!("\x1b[1;31m{s}\x1b[0m")
    } else {
        s.to_string()
    }
}

/// `print!` through the checked writer: returns early with the error on a failed write.
#[macro_export]
macro_rules! out {
    ($($t:tt)*) => { $crate::report::say(&format!($($t)*))? };
}

/// `println!` through the checked writer: returns early with the error on a failed write.
#[macro_export]
macro_rules! outln {
    () => { $crate::report::say("\n")? };
    ($($t:tt)*) => { $crate::report::say(&format!("{}\n", format_args!($($t)*)))? };
}

/// `eprintln!` that never panics (see `note`).
#[macro_export]
macro_rules! errln {
    ($($t:tt)*) => { $crate::report::note(&format!("{}\n", format_args!($($t)*))) };
}
