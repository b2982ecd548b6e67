//! The small expression language of `[derived]` columns, scenario `where`
//! filters and new-alternative attributes: numbers, column names,
//! `+ - * / ^`, parentheses, unary minus, `log exp sqrt abs min max`,
//! comparisons giving 0/1, `&&` and `||` over them (lowest, in that order), and text values in single quotes compared with
//! `==`/`!=` to columns (`expr_text.rs`). Parsed once, evaluated column-wise
//! over f64 data and, for text comparisons, text columns.

#[path = "expr_lex.rs"]
mod lex;
#[path = "expr_text.rs"]
mod text;

pub use lex::ParseError;
use lex::{tokenize, Tok};

#[derive(Clone, Debug, PartialEq)]
pub enum Expr {
    Num(f64),
    Col(String),
    /// A text value in single quotes: only ever one side of `==` or `!=`
    /// whose other side is a column (`parse` refuses it anywhere else).
    Text(String),
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
    /// `&&`: 1 when both sides are non-zero, else 0.
    And,
    /// `||`: 1 when either side is non-zero, else 0.
    Or,
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
    /// Where each text value starts, in the order met (the order of a
    /// left-to-right walk of the tree).
    texts: Vec<usize>,
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
    /// The lowest level: `a || b`, over `&&`.
    fn logical(&mut self) -> Result<Expr, ParseError> {
        let mut lhs = self.conjunction()?;
        while let Some(Tok::Op("||")) = self.peek() {
            self.pos += 1;
            let rhs = self.conjunction()?;
            lhs = Expr::Bin(BinOp::Or, Box::new(lhs), Box::new(rhs));
        }
        Ok(lhs)
    }
    /// `a && b`, over comparisons.
    fn conjunction(&mut self) -> Result<Expr, ParseError> {
        let mut lhs = self.comparison()?;
        while let Some(Tok::Op("&&")) = self.peek() {
            self.pos += 1;
            let rhs = self.comparison()?;
            lhs = Expr::Bin(BinOp::And, Box::new(lhs), Box::new(rhs));
        }
        Ok(lhs)
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
            Some(Tok::Text(value)) => {
                self.texts.push(self.here());
                self.pos += 1;
                Ok(Expr::Text(value))
            }
            Some(Tok::LParen) => {
                self.pos += 1;
                self.enter()?;
                let e = self.logical()?;
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
                    let mut args = vec![self.logical()?];
                    while let Some(Tok::Comma) = self.peek() {
                        self.pos += 1;
                        args.push(self.logical()?);
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
            texts: Vec::new(),
        };
        let e = p.logical()?;
        if p.pos < p.toks.len() {
            return Err(p.err("unexpected text after the expression"));
        }
        text::check(&e, &p.texts, text)?;
        Ok(e)
    }

    /// Column names the expression reads, in first-use order (those compared
    /// as text too: `text_columns` says which).
    pub fn columns(&self) -> Vec<String> {
        let mut out = Vec::new();
        self.collect(&mut out);
        out
    }

    fn collect(&self, out: &mut Vec<String>) {
        match self {
            Expr::Num(_) | Expr::Text(_) => {}
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
    /// The error names a column that `lookup` does not know. A comparison
    /// with a text value reads the column's numbers (see `eval_with_text`).
    pub fn eval<'a>(
        &self,
        lookup: &dyn Fn(&str) -> Option<&'a [f64]>,
        n: usize,
    ) -> Result<Vec<f64>, String> {
        self.eval_with_text(lookup, &|_| None, n)
    }

    /// Evaluates over `n` rows; `numbers` gives a numeric column by name,
    /// `texts` a text column (a missing cell is `None`). A column that both
    /// know is read as numbers, except beside a text value in quotes. The
    /// error names a column neither knows, a text column used as a number,
    /// or a numeric column compared with a text value that is not a number.
    pub fn eval_with_text<'a>(
        &self,
        numbers: &dyn Fn(&str) -> Option<&'a [f64]>,
        texts: &dyn Fn(&str) -> Option<&'a [Option<String>]>,
        n: usize,
    ) -> Result<Vec<f64>, String> {
        self.values(&Lookups { numbers, texts, n })
    }

    fn values(&self, l: &Lookups) -> Result<Vec<f64>, String> {
        Ok(match self {
            Expr::Num(v) => vec![*v; l.n],
            Expr::Text(value) => return Err(text::alone(value)),
            Expr::Col(c) => l.numbers(c)?.to_vec(),
            Expr::Neg(e) => {
                let mut v = e.values(l)?;
                v.iter_mut().for_each(|x| *x = -*x);
                v
            }
            Expr::Bin(op, a, b) => {
                if let Some(v) = text::compare(*op, a, b, l)? {
                    return Ok(v);
                }
                let mut x = a.values(l)?;
                let y = b.values(l)?;
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
                    BinOp::And => |a, b| (a != 0.0 && b != 0.0) as u8 as f64,
                    BinOp::Or => |a, b| (a != 0.0 || b != 0.0) as u8 as f64,
                };
                x.iter_mut().zip(&y).for_each(|(a, b)| *a = f(*a, *b));
                x
            }
            Expr::Call(func, args) => {
                let mut x = args[0].values(l)?;
                match func {
                    Func::Log => x.iter_mut().for_each(|v| *v = v.ln()),
                    Func::Exp => x.iter_mut().for_each(|v| *v = v.exp()),
                    Func::Sqrt => x.iter_mut().for_each(|v| *v = v.sqrt()),
                    Func::Abs => x.iter_mut().for_each(|v| *v = v.abs()),
                    Func::Min | Func::Max => {
                        let y = args[1].values(l)?;
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

/// The column lookups of one evaluation over `n` rows.
struct Lookups<'l, 'a> {
    numbers: &'l dyn Fn(&str) -> Option<&'a [f64]>,
    texts: &'l dyn Fn(&str) -> Option<&'a [Option<String>]>,
    n: usize,
}

impl<'a> Lookups<'_, 'a> {
    /// A column's numbers; the error says whether it holds text or is unknown.
    fn numbers(&self, c: &str) -> Result<&'a [f64], String> {
        if let Some(v) = (self.numbers)(c) {
            return Ok(v);
        }
        Err(match (self.texts)(c) {
            Some(_) => text::used_as_number(c),
            None => format!("unknown column `{c}`"),
        })
    }
}

#[cfg(test)]
#[path = "expr_tests.rs"]
mod tests;
