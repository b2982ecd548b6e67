//! The small expression language of `[derived]` columns, scenario `where`
//! filters and new-alternative attributes: numbers, column names,
//! `+ - * / ^`, parentheses, unary minus, `log exp sqrt abs min max` and
//! comparisons giving 0/1. Parsed once, evaluated column-wise over f64 data.

use std::fmt;

#[derive(Clone, Debug, PartialEq)]
pub enum Expr {
    Num(f64),
    Col(String),
    Neg(Box<Expr>),
    Bin(BinOp, Box<Expr>, Box<Expr>),
    Call(Func, Vec<Expr>),
}

#[derive(Clone, Copy, Debug, PartialEq)]
pub enum BinOp {
    Add,
    Sub,
    Mul,
    Div,
    Pow,
    Lt,
    Le,
    Gt,
    Ge,
    Eq,
    Ne,
}

#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Func {
    Log,
    Exp,
    Sqrt,
    Abs,
    Min,
    Max,
}

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
enum Tok {
    Num(f64),
    Ident(String),
    Op(&'static str),
    LParen,
    RParen,
    Comma,
}

fn tokenize(text: &str) -> Result<Vec<(usize, Tok)>, ParseError> {
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
        let (tok, len) = operator(&chars, i).map_err(|m| err(start, m))?;
        out.push((start, tok));
        i += len;
    }
    Ok(out)
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
        _ => return Err(format!("unexpected character `{c}`")),
    };
    Ok((tok, 1))
}

/// The longest expression text accepted, in characters: long enough for any
/// formula a person writes, short enough that evaluating it cannot exhaust the stack.
pub const MAX_LENGTH: usize = 4000;
/// The deepest nesting accepted: parentheses, function calls, unary minus and `^`.
pub const MAX_NESTING: usize = 64;

struct Parser<'a> {
    toks: Vec<(usize, Tok)>,
    pos: usize,
    text: &'a str,
    depth: usize,
}

impl Parser<'_> {
    /// One level deeper; an error past `MAX_NESTING`.
    fn enter(&mut self) -> Result<(), ParseError> {
        self.depth += 1;
        if self.depth > MAX_NESTING {
            return Err(self.err(format!(
                "nested more than {MAX_NESTING} levels deep (parentheses, functions, `-` and `^`); split it into several [derived] columns"
            )));
        }
        Ok(())
    }
    fn peek(&self) -> Option<&Tok> {
        self.toks.get(self.pos).map(|t| &t.1)
    }
    fn here(&self) -> usize {
        self.toks
            .get(self.pos)
            .map(|t| t.0)
            .unwrap_or_else(|| self.text.chars().count())
    }
    fn err(&self, message: impl Into<String>) -> ParseError {
        ParseError {
            position: self.here(),
            message: message.into(),
            text: self.text.to_string(),
        }
    }
    fn comparison(&mut self) -> Result<Expr, ParseError> {
        let lhs = self.additive()?;
        let op = match self.peek() {
            Some(Tok::Op("<")) => BinOp::Lt,
            Some(Tok::Op("<=")) => BinOp::Le,
            Some(Tok::Op(">")) => BinOp::Gt,
            Some(Tok::Op(">=")) => BinOp::Ge,
            Some(Tok::Op("==")) => BinOp::Eq,
            Some(Tok::Op("!=")) => BinOp::Ne,
            _ => return Ok(lhs),
        };
        self.pos += 1;
        let rhs = self.additive()?;
        Ok(Expr::Bin(op, Box::new(lhs), Box::new(rhs)))
    }
    fn additive(&mut self) -> Result<Expr, ParseError> {
        let mut lhs = self.multiplicative()?;
        loop {
            let op = match self.peek() {
                Some(Tok::Op("+")) => BinOp::Add,
                Some(Tok::Op("-")) => BinOp::Sub,
                _ => return Ok(lhs),
            };
            self.pos += 1;
            let rhs = self.multiplicative()?;
            lhs = Expr::Bin(op, Box::new(lhs), Box::new(rhs));
        }
    }
    fn multiplicative(&mut self) -> Result<Expr, ParseError> {
        let mut lhs = self.unary()?;
        loop {
            let op = match self.peek() {
                Some(Tok::Op("*")) => BinOp::Mul,
                Some(Tok::Op("/")) => BinOp::Div,
                _ => return Ok(lhs),
            };
            self.pos += 1;
            let rhs = self.unary()?;
            lhs = Expr::Bin(op, Box::new(lhs), Box::new(rhs));
        }
    }
    fn unary(&mut self) -> Result<Expr, ParseError> {
        if let Some(Tok::Op("-")) = self.peek() {
            self.pos += 1;
            self.enter()?;
            let inner = self.unary()?;
            self.depth -= 1;
            return Ok(Expr::Neg(Box::new(inner)));
        }
        self.power()
    }
    fn power(&mut self) -> Result<Expr, ParseError> {
        let base = self.atom()?;
        if let Some(Tok::Op("^")) = self.peek() {
            self.pos += 1;
            self.enter()?;
            let exp = self.unary()?;
            self.depth -= 1;
            return Ok(Expr::Bin(BinOp::Pow, Box::new(base), Box::new(exp)));
        }
        Ok(base)
    }
    fn atom(&mut self) -> Result<Expr, ParseError> {
        let tok = self.peek().cloned();
        match tok {
            Some(Tok::Num(v)) => {
                self.pos += 1;
                Ok(Expr::Num(v))
            }
            Some(Tok::LParen) => {
                self.pos += 1;
                self.enter()?;
                let e = self.comparison()?;
                self.depth -= 1;
                match self.peek() {
                    Some(Tok::RParen) => {
                        self.pos += 1;
                        Ok(e)
                    }
                    _ => Err(self.err("expected `)`")),
                }
            }
            Some(Tok::Ident(name)) => {
                self.pos += 1;
                if let Some(Tok::LParen) = self.peek() {
                    let func = match name.as_str() {
                        "log" => Func::Log,
                        "exp" => Func::Exp,
                        "sqrt" => Func::Sqrt,
                        "abs" => Func::Abs,
                        "min" => Func::Min,
                        "max" => Func::Max,
                        _ => {
                            self.pos -= 1;
                            return Err(self.err(format!(
                                "unknown function `{name}` (known: log exp sqrt abs min max)"
                            )));
                        }
                    };
                    self.pos += 1;
                    self.enter()?;
                    let mut args = vec![self.comparison()?];
                    while let Some(Tok::Comma) = self.peek() {
                        self.pos += 1;
                        args.push(self.comparison()?);
                    }
                    self.depth -= 1;
                    match self.peek() {
                        Some(Tok::RParen) => self.pos += 1,
                        _ => return Err(self.err("expected `)` or `,`")),
                    }
                    let want = match func {
                        Func::Min | Func::Max => 2,
                        _ => 1,
                    };
                    if args.len() != want {
                        return Err(self.err(format!(
                            "`{name}` takes {want} argument{}",
                            if want == 1 { "" } else { "s" }
                        )));
                    }
                    Ok(Expr::Call(func, args))
                } else {
                    Ok(Expr::Col(name))
                }
            }
            None => Err(self.err("expression ends too early")),
            Some(_) => Err(self.err("expected a number, a column name or `(`")),
        }
    }
}

impl Expr {
    /// Parses an expression; texts longer than `MAX_LENGTH` characters or
    /// nested deeper than `MAX_NESTING` levels are refused with a message.
    pub fn parse(text: &str) -> Result<Expr, ParseError> {
        let length = text.chars().count();
        if length > MAX_LENGTH {
            return Err(ParseError {
                position: 0,
                message: format!(
                    "the expression is {length} characters long, more than the {MAX_LENGTH} accepted; split it into several [derived] columns"
                ),
                text: String::new(),
            });
        }
        let toks = tokenize(text)?;
        let mut p = Parser {
            toks,
            pos: 0,
            text,
            depth: 0,
        };
        let e = p.comparison()?;
        if p.pos < p.toks.len() {
            return Err(p.err("unexpected text after the expression"));
        }
        Ok(e)
    }

    /// Column names the expression reads, in first-use order.
    pub fn columns(&self) -> Vec<String> {
        let mut out = Vec::new();
        self.collect(&mut out);
        out
    }

    fn collect(&self, out: &mut Vec<String>) {
        match self {
            Expr::Num(_) => {}
            Expr::Col(c) => {
                if !out.contains(c) {
                    out.push(c.clone())
                }
            }
            Expr::Neg(e) => e.collect(out),
            Expr::Bin(_, a, b) => {
                a.collect(out);
                b.collect(out);
            }
            Expr::Call(_, args) => args.iter().for_each(|a| a.collect(out)),
        }
    }

    /// Evaluates over `n` rows; `lookup` gives a column's values by name.
    /// The error names a column that `lookup` does not know.
    pub fn eval<'a>(
        &self,
        lookup: &dyn Fn(&str) -> Option<&'a [f64]>,
        n: usize,
    ) -> Result<Vec<f64>, String> {
        Ok(match self {
            Expr::Num(v) => vec![*v; n],
            Expr::Col(c) => lookup(c)
                .ok_or_else(|| format!("unknown column `{c}`"))?
                .to_vec(),
            Expr::Neg(e) => {
                let mut v = e.eval(lookup, n)?;
                v.iter_mut().for_each(|x| *x = -*x);
                v
            }
            Expr::Bin(op, a, b) => {
                let mut x = a.eval(lookup, n)?;
                let y = b.eval(lookup, n)?;
                let f: fn(f64, f64) -> f64 = match op {
                    BinOp::Add => |a, b| a + b,
                    BinOp::Sub => |a, b| a - b,
                    BinOp::Mul => |a, b| a * b,
                    BinOp::Div => |a, b| a / b,
                    BinOp::Pow => f64::powf,
                    BinOp::Lt => |a, b| (a < b) as u8 as f64,
                    BinOp::Le => |a, b| (a <= b) as u8 as f64,
                    BinOp::Gt => |a, b| (a > b) as u8 as f64,
                    BinOp::Ge => |a, b| (a >= b) as u8 as f64,
                    BinOp::Eq => |a, b| (a == b) as u8 as f64,
                    BinOp::Ne => |a, b| (a != b) as u8 as f64,
                };
                x.iter_mut().zip(&y).for_each(|(a, b)| *a = f(*a, *b));
                x
            }
            Expr::Call(func, args) => {
                let mut x = args[0].eval(lookup, n)?;
                match func {
                    Func::Log => x.iter_mut().for_each(|v| *v = v.ln()),
                    Func::Exp => x.iter_mut().for_each(|v| *v = v.exp()),
                    Func::Sqrt => x.iter_mut().for_each(|v| *v = v.sqrt()),
                    Func::Abs => x.iter_mut().for_each(|v| *v = v.abs()),
                    Func::Min | Func::Max => {
                        let y = args[1].eval(lookup, n)?;
                        let min = *func == Func::Min;
                        x.iter_mut()
                            .zip(&y)
                            .for_each(|(a, b)| *a = if min { a.min(*b) } else { a.max(*b) });
                    }
                }
                x
            }
        })
    }
}

#[cfg(test)]
#[path = "expr_tests.rs"]
mod tests;
