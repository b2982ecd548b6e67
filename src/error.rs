//! The one error type of the library: every user mistake becomes a value whose
//! message names the file, the key or column and, where it applies, the row.
//! What a message quotes of the user's input is cut to a bounded length
//! (`quote`), and every message is bounded as printed (`bounded`).

use std::path::Path;

/// Errors that user input can cause, and failures of the numerical work.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// The model spec or a scenario file is wrong: `file` names it, the message names the key.
    #[error("{file}: {}", bounded(.message))]
    Spec { file: String, message: String },
    /// The data do not fit the spec: the message names the column and the row.
    #[error("{file}: {}", bounded(.message))]
    Data { file: String, message: String },
    /// A file could not be read or written.
    #[error("{path}: {}", bounded(.message))]
    Io { path: String, message: String },
    /// The estimation could not proceed (for example no free parameter).
    #[error("{}", bounded(.0))]
    Estimate(String),
    /// A command-line request that does not fit the model (unknown alternative, ...).
    #[error("{}", bounded(.0))]
    Usage(String),
}

impl Error {
    pub fn spec(file: impl AsRef<Path>, message: impl Into<String>) -> Self {
        Error::Spec {
            file: file.as_ref().display().to_string(),
            message: message.into(),
        }
    }
    pub fn data(file: impl AsRef<Path>, message: impl Into<String>) -> Self {
        Error::Data {
            file: file.as_ref().display().to_string(),
            message: message.into(),
        }
    }
    pub fn io(path: impl AsRef<Path>, err: impl std::fmt::Display) -> Self {
        Error::Io {
            path: path.as_ref().display().to_string(),
            message: err.to_string(),
        }
    }
}

pub type Result<T> = std::result::Result<T, Error>;

/// Refuses a count asked for on the command line (or in the workbench) that is
/// past `limit`, saying the limit and the memory the request would take.
pub fn check_count(option: &str, n: usize, limit: usize, bytes_each: usize) -> Result<()> {
    if n <= limit {
        return Ok(());
    }
    let bytes = n as f64 * bytes_each as f64;
    let cost = if bytes_each == 0 {
        String::new()
    } else {
        format!(": it would take about {} of memory", human_bytes(bytes))
    };
    Err(Error::Usage(format!(
        "{option} {n} is more than the {limit} allowed{cost}"
    )))
}

/// A byte count for people: `3.2 GB`, `1.8e11 GB`.
pub fn human_bytes(bytes: f64) -> String {
    let gb = bytes / 1e9;
    if gb >= 1e6 {
        format!("{gb:.1e} GB")
    } else if gb >= 1.0 {
        format!("{gb:.1} GB")
    } else {
        format!("{:.1} MB", bytes / 1e6)
    }
}

/// The most characters of the user's input (a cell, a key, a line of a file,
/// an expression) that a message quotes.
pub const QUOTE_LIMIT: usize = 200;

/// The longest line of a message as printed, and the most characters of a
/// whole message: a safety net behind `quote` for what a message quotes.
pub const LINE_LIMIT: usize = 800;
pub const MESSAGE_LIMIT: usize = 8000;

/// `text` as a message quotes it: whole when short, else its first
/// characters, an ellipsis and how many characters were left out.
pub fn quote(text: &str) -> String {
    cut(text, QUOTE_LIMIT, 0)
}

/// `text` cut to about `limit` characters: its first ones and, with `tail`,
/// its last `tail` ones, around an ellipsis that says how many were left out.
fn cut(text: &str, limit: usize, tail: usize) -> String {
    let n = text.chars().count();
    if n <= limit {
        return text.to_string();
    }
    let head = limit.saturating_sub(tail);
    let left = n - head - tail;
    let start: String = text.chars().take(head).collect();
    let end: String = text.chars().skip(n - tail).collect();
    format!("{start}… ({left} characters left out) …{end}")
}

/// A message as printed: every span between backticks (how messages quote
/// names, cells and expressions) at most `QUOTE_LIMIT` characters, every line
/// at most `LINE_LIMIT` (its start and end kept, so that a position at either
/// survives), and the whole at most `MESSAGE_LIMIT`.
pub fn bounded(message: &str) -> std::borrow::Cow<'_, str> {
    if message.len() <= QUOTE_LIMIT {
        return std::borrow::Cow::Borrowed(message);
    }
    let line = |l: &str| {
        let spans: Vec<String> = l
            .split('`')
            .enumerate()
            .map(|(k, part)| {
                if k % 2 == 1 {
                    cut(part, QUOTE_LIMIT, QUOTE_LIMIT / 5)
                } else {
                    part.to_string()
                }
            })
            .collect();
        cut(&spans.join("`"), LINE_LIMIT, LINE_LIMIT / 4)
    };
    let lines: Vec<String> = message.lines().map(line).collect();
    let out = cut(&lines.join("\n"), MESSAGE_LIMIT, 0);
    if out == message {
        std::borrow::Cow::Borrowed(message)
    } else {
        std::borrow::Cow::Owned(out)
    }
}

/// A TOML parse or type error as a message of bounded length: the line and
/// column, the parser's words, and the line of the file around the column
/// (at most `QUOTE_LIMIT` characters of it) with a caret under the column.
pub fn toml_message(text: &str, e: &toml::de::Error) -> String {
    let mut what = quote(e.message().trim_end());
    if what.contains("expected a sequence") {
        what.push_str(" (a list in square brackets, such as [\"bus\", \"rail\"])");
    }
    // A span over the whole document (a missing top-level key) points nowhere.
    let Some(span) = e.span().filter(|s| !(s.start == 0 && s.end >= text.len())) else {
        return what;
    };
    let at = span.start.min(text.len());
    let at = (0..=at)
        .rev()
        .find(|&k| text.is_char_boundary(k))
        .unwrap_or(0);
    let line_start = text[..at].rfind('\n').map_or(0, |k| k + 1);
    let line_end = text[at..].find('\n').map_or(text.len(), |k| at + k);
    let line_no = text[..at].matches('\n').count() + 1;
    let line: Vec<char> = text[line_start..line_end].trim_end().chars().collect();
    let column = text[line_start..at].chars().count();
    // A window of the line around the column, marked where it was cut.
    let half = QUOTE_LIMIT / 2;
    // The column can fall past the trimmed line (trailing white space such
    // as form feeds): the window then ends at the line's end.
    let from = column.saturating_sub(half).min(line.len());
    let to = (from + QUOTE_LIMIT).min(line.len());
    let mut shown: String = line[from..to].iter().collect();
    let mut caret = column - from;
    if from > 0 {
        shown.insert(0, '…');
        caret += 1;
    }
    if to < line.len() {
        shown.push('…');
    }
    format!(
        "line {line_no}, column {}: {what}\n    {shown}\n    {}^",
        column + 1,
        " ".repeat(caret)
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_error_past_the_trimmed_end_of_its_line_is_shown_without_a_panic() {
        // Found by fuzzing (`spec`, `scenario`): the parser's column lies in
        // trailing form feeds, which the shown line leaves out.
        for text in [
            format!("\n9{}\n9", "\u{c}".repeat(110)),
            format!("a = 1\nb{}", "\u{c}".repeat(300)),
            format!("x = [1,{} ", " ".repeat(500)),
        ] {
            let Err(e) = toml::from_str::<toml::Table>(&text) else {
                panic!("{text:?} parsed");
            };
            let m = toml_message(&text, &e);
            assert!(m.starts_with("line "), "{m}");
            assert!(m.chars().count() < 2 * QUOTE_LIMIT + 200, "{m}");
        }
    }

    #[test]
    fn a_long_quote_keeps_its_start_and_says_how_much_is_left_out() {
        assert_eq!(quote("bus"), "bus");
        let q = quote(&"z".repeat(100_000));
        assert!(q.starts_with(&"z".repeat(QUOTE_LIMIT)), "{q}");
        assert!(q.contains("99800 characters left out"), "{q}");
        assert!(q.chars().count() < QUOTE_LIMIT + 40, "{q}");
    }

    #[test]
    fn a_printed_message_cuts_long_quotes_and_lines_but_keeps_short_ones_whole() {
        let short = "column `mode` ([data].choice), row 3: `ferry` is not declared";
        assert_eq!(bounded(short), short);
        let long = format!("row 7: `{}` is not declared; next", "q".repeat(10_000));
        let b = bounded(&long);
        assert!(
            b.starts_with("row 7: `qqq") && b.ends_with("` is not declared; next"),
            "{b}"
        );
        assert!(b.len() < QUOTE_LIMIT + 100, "{} characters", b.len());
        let line = format!("at character 9000: {} end", "w ".repeat(5_000));
        let b = bounded(&line);
        assert!(
            b.starts_with("at character 9000") && b.ends_with(" end"),
            "{b}"
        );
        assert!(
            b.chars().count() < LINE_LIMIT + 40,
            "{} characters",
            b.len()
        );
        let many = "a line of a message\n".repeat(10_000);
        assert!(bounded(&many).len() < MESSAGE_LIMIT + 40);
    }

    #[test]
    fn a_toml_error_shows_its_line_around_the_column_with_a_caret() {
        let text = format!("x = 1\ny = {}@\n", "[".repeat(10));
        let e = toml::from_str::<toml::Table>(&text).unwrap_err();
        let m = toml_message(&text, &e);
        let lines: Vec<&str> = m.lines().collect();
        assert!(lines[0].starts_with("line 2, column "), "{m}");
        assert_eq!(lines[1], format!("    y = {}@", "[".repeat(10)), "{m}");
        let caret = lines[2].find('^').unwrap();
        let column: usize = lines[0]["line 2, column ".len()..]
            .split(':')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        // The caret stands under the column named (after the four-space indent).
        assert_eq!(caret, 4 + column - 1, "{m}");
        // On a line of 100,000 characters the window is cut around the column.
        let wide = format!("z = \"{}", "y".repeat(100_000));
        let e = toml::from_str::<toml::Table>(&wide).unwrap_err();
        let m = toml_message(&wide, &e);
        assert!(m.len() < 3 * QUOTE_LIMIT + 200, "{} bytes", m.len());
        assert!(m.starts_with("line 1, column "), "{m}");
    }
}
