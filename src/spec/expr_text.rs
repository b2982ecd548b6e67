//! Text in the expression language: where a text value in single quotes may
//! stand (checked when parsing, with its position), which columns an
//! expression compares as text, and the `==`/`!=` comparisons of text
//! columns with text values and with each other (a missing cell is unequal
//! to everything, another missing cell included).

use super::{BinOp, Expr, Lookups, ParseError};

const EXAMPLE: &str = "as in `district == 'east'`";

/// The message for a text value standing alone where a number is wanted.
pub(super) fn alone(value: &str) -> String {
    format!(
        "the text value '{}' is not a number: compare a column with it using `==` or `!=`, {EXAMPLE}",
        value.replace('\'', "''")
    )
}

/// The message for a text column where a number is wanted.
pub(super) fn used_as_number(c: &str) -> String {
    format!(
        "column `{c}` holds text: it can only be compared with `==` or `!=` to a text value in quotes ({c} == 'east') or to another text column"
    )
}

/// Refuses a text value anywhere but on one side of `==` or `!=` with a
/// column on the other. `at` holds the text values' positions in the order
/// a left-to-right walk meets them.
pub(super) fn check(e: &Expr, at: &[usize], text: &str) -> Result<(), ParseError> {
    let mut seen = 0;
    let fail = |k: usize, message: String| ParseError {
        position: at.get(k).copied().unwrap_or(0),
        message,
        text: text.to_string(),
    };
    if let Expr::Text(_) = e {
        return Err(fail(
            0,
            format!("a text value in quotes is not an expression on its own: compare a column with it, {EXAMPLE}"),
        ));
    }
    walk(e, None, &mut seen, &fail)
}

/// The walk of `check`; `within` is the operator the node is an operand of.
fn walk(
    e: &Expr,
    within: Option<BinOp>,
    seen: &mut usize,
    fail: &dyn Fn(usize, String) -> ParseError,
) -> Result<(), ParseError> {
    match e {
        Expr::Num(_) | Expr::Col(_) => Ok(()),
        Expr::Text(_) => Err(fail(*seen, misplaced(within))),
        Expr::Neg(x) => walk(x, None, seen, fail),
        Expr::Call(_, args) => args.iter().try_for_each(|a| walk(a, None, seen, fail)),
        Expr::Bin(op @ (BinOp::Eq | BinOp::Ne), a, b) => {
            for (side, other) in [(a, b), (b, a)] {
                match (&**side, &**other) {
                    (Expr::Text(_), Expr::Col(_)) => *seen += 1,
                    (Expr::Text(_), Expr::Text(_)) => {
                        return Err(fail(
                            *seen,
                            format!("two text values are compared with each other: compare a column with a text value, {EXAMPLE}"),
                        ))
                    }
                    (Expr::Text(_), _) => {
                        return Err(fail(
                            *seen,
                            format!("a text value in quotes is compared with `==` or `!=` to a column only, not to a calculation, {EXAMPLE}"),
                        ))
                    }
                    _ => walk(side, Some(*op), seen, fail)?,
                }
            }
            Ok(())
        }
        Expr::Bin(op, a, b) => {
            walk(a, Some(*op), seen, fail)?;
            walk(b, Some(*op), seen, fail)
        }
    }
}

/// What the message says of a text value that is the operand of `within`.
fn misplaced(within: Option<BinOp>) -> String {
    let symbol = match within {
        Some(BinOp::Lt) => "<",
        Some(BinOp::Le) => "<=",
        Some(BinOp::Gt) => ">",
        Some(BinOp::Ge) => ">=",
        _ => "",
    };
    if symbol.is_empty() {
        format!(
            "a text value in quotes can only be compared with `==` or `!=` to a column, {EXAMPLE}"
        )
    } else {
        format!(
            "text values have no order: compare them with `==` or `!=`, not `{symbol}`, {EXAMPLE}"
        )
    }
}

impl Expr {
    /// The columns the expression compares with a text value in quotes, in
    /// first-use order: a loader reads these as text. (Two columns compared
    /// with each other are compared as text when both are read as text.)
    pub fn text_columns(&self) -> Vec<String> {
        let mut out = Vec::new();
        self.collect_text(&mut out);
        out
    }

    fn collect_text(&self, out: &mut Vec<String>) {
        match self {
            Expr::Num(_) | Expr::Col(_) | Expr::Text(_) => {}
            Expr::Neg(e) => e.collect_text(out),
            Expr::Call(_, args) => args.iter().for_each(|a| a.collect_text(out)),
            Expr::Bin(op, a, b) => {
                if let (BinOp::Eq | BinOp::Ne, Expr::Col(c), Expr::Text(_))
                | (BinOp::Eq | BinOp::Ne, Expr::Text(_), Expr::Col(c)) = (op, &**a, &**b)
                {
                    if !out.contains(c) {
                        out.push(c.clone());
                    }
                }
                a.collect_text(out);
                b.collect_text(out);
            }
        }
    }
}

/// The comparison `a op b` when it is one of text: 1/0 per row, or None for
/// the numeric comparison (both columns read as numbers, or no text at all).
pub(super) fn compare(
    op: BinOp,
    a: &Expr,
    b: &Expr,
    l: &Lookups,
) -> Result<Option<Vec<f64>>, String> {
    let equal = match op {
        BinOp::Eq => true,
        BinOp::Ne => false,
        _ if matches!(a, Expr::Text(_)) || matches!(b, Expr::Text(_)) => {
            return Err(misplaced(Some(op)))
        }
        _ => return Ok(None),
    };
    let same = match (a, b) {
        (Expr::Col(c), Expr::Text(t)) | (Expr::Text(t), Expr::Col(c)) => with_value(c, t, l)?,
        (Expr::Col(x), Expr::Col(y)) => match columns(x, y, l)? {
            Some(v) => v,
            None => return Ok(None),
        },
        (Expr::Text(t), _) | (_, Expr::Text(t)) => return Err(alone(t)),
        _ => return Ok(None),
    };
    Ok(Some(
        same.into_iter()
            .map(|s| (s == equal) as u8 as f64)
            .collect(),
    ))
}

/// Whether each row of column `c` equals the text value `t`: a text column
/// cell by cell (a missing cell equals nothing); a numeric column against
/// `t` read as a number, an error naming the column when it is not one.
fn with_value(c: &str, t: &str, l: &Lookups) -> Result<Vec<bool>, String> {
    if let Some(cells) = (l.texts)(c) {
        return Ok(cells.iter().map(|x| x.as_deref() == Some(t)).collect());
    }
    let Some(values) = (l.numbers)(c) else {
        return Err(format!("unknown column `{c}`"));
    };
    match t.trim().parse::<f64>() {
        Ok(v) => Ok(values.iter().map(|x| *x == v).collect()),
        Err(_) => Err(format!(
            "column `{c}` holds numbers, and '{}' is not a number: compare it with a number ({c} == 3), or compare a text column with a text value",
            t.replace('\'', "''")
        )),
    }
}

/// Two columns compared as text when neither reads as numbers and both as
/// text (a missing cell on either side is unequal); None when both read as
/// numbers or one is unknown (the numeric comparison then says so).
fn columns(x: &str, y: &str, l: &Lookups) -> Result<Option<Vec<bool>>, String> {
    let text = |c: &str| match (l.numbers)(c) {
        Some(_) => None,
        None => (l.texts)(c),
    };
    match (text(x), text(y)) {
        (Some(a), Some(b)) => Ok(Some(
            a.iter()
                .zip(b)
                .map(|(a, b)| matches!((a, b), (Some(a), Some(b)) if a == b))
                .collect(),
        )),
        (Some(_), None) => Err(match (l.numbers)(y) {
            Some(_) => mixed(x, y),
            None => format!("unknown column `{y}`"),
        }),
        (None, Some(_)) => Err(match (l.numbers)(x) {
            Some(_) => mixed(y, x),
            None => format!("unknown column `{x}`"),
        }),
        (None, None) => Ok(None),
    }
}

fn mixed(text: &str, number: &str) -> String {
    format!(
        "column `{text}` holds text and column `{number}` numbers: a text column is compared with `==` or `!=` to a text value in quotes or to another text column"
    )
}
