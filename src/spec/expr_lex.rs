//! The expression language's words: `ParseError` (with its window on the
//! text) and the tokenizer that cuts a text into numbers, names, text values
//! in single quotes, operators and punctuation.

use std::fmt;

/// A parse error: `position` counts characters from 0 in the expression text.
#[derive(Clone, Debug, PartialEq)]
pub struct ParseError {
    pub position: usize,
    pub message: String,
    pub text: String,
}

impl fmt::Display for ParseError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        // No text: the error is about the whole expression (its length).
        if self.text.is_empty() {
            return write!(f, "{}", self.message);
        }
        // A long text is shown as a window of 60 characters around the position.
        let chars: Vec<char> = self.text.chars().collect();
        let from = self.position.saturating_sub(30);
        let to = (from + 60).min(chars.len());
        let from = from.min(to);
        let lead = if from > 0 { "…" } else { "" };
        let tail = if to < chars.len() { "…" } else { "" };
        let shown: String = chars[from..to].iter().collect();
        write!(
            f,
            "{} at character {}\n    {lead}{shown}{tail}\n    {}{}^",
            self.message,
            self.position + 1,
            " ".repeat(lead.chars().count()),
            " ".repeat(self.position - from)
        )
    }
}

#[derive(Clone, Debug, PartialEq)]
pub(super) enum Tok {
    Num(f64),
    Ident(String),
    /// A text value in single quotes, `''` inside read as one quote.
    Text(String),
    Op(&'static str),
    LParen,
    RParen,
    Comma,
}

pub(super) fn tokenize(text: &str) -> Result<Vec<(usize, Tok)>, ParseError> {
    let chars: Vec<char> = text.chars().collect();
    let err = |position: usize, message: String| ParseError {
        position,
        message,
        text: text.to_string(),
    };
    let mut out = Vec::new();
    let mut i = 0;
    while i < chars.len() {
        let c = chars[i];
        if c.is_whitespace() {
            i += 1;
            continue;
        }
        let start = i;
        if c.is_ascii_digit() || (c == '.' && chars.get(i + 1).is_some_and(|d| d.is_ascii_digit()))
        {
            i = number_end(&chars, i);
            let s: String = chars[start..i].iter().collect();
            let v: f64 = s
                .parse()
                .map_err(|_| err(start, format!("malformed number `{s}`")))?;
            out.push((start, Tok::Num(v)));
            continue;
        }
        if c.is_alphabetic() || c == '_' {
            while i < chars.len()
                && (chars[i].is_alphanumeric() || chars[i] == '_' || chars[i] == '.')
            {
                i += 1;
            }
            out.push((start, Tok::Ident(chars[start..i].iter().collect())));
            continue;
        }
        if c == '`' {
            i += 1;
            while i < chars.len() && chars[i] != '`' {
                i += 1;
            }
            if i >= chars.len() {
                return Err(err(start, "unclosed ` around a column name".into()));
            }
            out.push((start, Tok::Ident(chars[start + 1..i].iter().collect())));
            i += 1;
            continue;
        }
        if c == '\'' {
            let (value, end) = text_value(&chars, i).ok_or_else(|| {
                err(
                    start,
                    "unclosed ' around a text value (write '' for a quote inside it)".into(),
                )
            })?;
            out.push((start, Tok::Text(value)));
            i = end;
            continue;
        }
        let (tok, len) = operator(&chars, i).map_err(|m| err(start, m))?;
        out.push((start, tok));
        i += len;
    }
    Ok(out)
}

/// The text value whose opening quote is at `i` and the index after its
/// closing quote; `''` inside stands for one quote. None when it is not closed.
fn text_value(chars: &[char], i: usize) -> Option<(String, usize)> {
    let mut value = String::new();
    let mut k = i + 1;
    loop {
        match chars.get(k)? {
            '\'' if chars.get(k + 1) == Some(&'\'') => {
                value.push('\'');
                k += 2;
            }
            '\'' => return Some((value, k + 1)),
            c => {
                value.push(*c);
                k += 1;
            }
        }
    }
}

/// Where the number starting at `i` ends: digits and points, then an exponent
/// if digits follow the `e` (and its sign).
fn number_end(chars: &[char], mut i: usize) -> usize {
    while i < chars.len() && (chars[i].is_ascii_digit() || chars[i] == '.') {
        i += 1;
    }
    if i < chars.len() && (chars[i] == 'e' || chars[i] == 'E') {
        let mut j = i + 1;
        if j < chars.len() && (chars[j] == '+' || chars[j] == '-') {
            j += 1;
        }
        if j < chars.len() && chars[j].is_ascii_digit() {
            i = j;
            while i < chars.len() && chars[i].is_ascii_digit() {
                i += 1;
            }
        }
    }
    i
}

/// The operator or punctuation at `i`, and its length in characters.
fn operator(chars: &[char], i: usize) -> Result<(Tok, usize), String> {
    let c = chars[i];
    let two: String = chars[i..(i + 2).min(chars.len())].iter().collect();
    let op2 = match two.as_str() {
        "<=" => Some("<="),
        ">=" => Some(">="),
        "==" => Some("=="),
        "!=" => Some("!="),
        "&&" => Some("&&"),
        "||" => Some("||"),
        _ => None,
    };
    if let Some(op) = op2 {
        return Ok((Tok::Op(op), 2));
    }
    let tok = match c {
        '+' => Tok::Op("+"),
        '-' => Tok::Op("-"),
        '*' => Tok::Op("*"),
        '/' => Tok::Op("/"),
        '^' => Tok::Op("^"),
        '<' => Tok::Op("<"),
        '>' => Tok::Op(">"),
        '(' => Tok::LParen,
        ')' => Tok::RParen,
        ',' => Tok::Comma,
        '=' => return Err("`=` is not an operator (write `==` to compare)".into()),
        '&' => return Err("`&` is not an operator (write `&&` for \"and\")".into()),
        '|' => return Err("`|` is not an operator (write `||` for \"or\")".into()),
        _ => return Err(format!("unexpected character `{c}`")),
    };
    Ok((tok, 1))
}
