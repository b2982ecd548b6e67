//! Linear restrictions on parameters (`restrictions = ["cost_bus = cost_rail"]`,
//! `fit --restrict`), parsed with the expression language into `a' beta = c`.

use super::expr::{BinOp, Expr};
use super::{Parameter, Restriction};

/// Parses `lhs = rhs`, both linear in parameter names, into `a' beta = c`.
pub fn parse_restriction(
    text: &str,
    parameters: &[Parameter],
) -> std::result::Result<Restriction, String> {
    let parts: Vec<&str> = text.split('=').collect();
    if parts.len() != 2 {
        return Err(
            "write one `=` between two linear expressions, e.g. `cost_bus = cost_rail`".into(),
        );
    }
    let lhs = Expr::parse(parts[0]).map_err(|e| e.to_string())?;
    let rhs = Expr::parse(parts[1]).map_err(|e| e.to_string())?;
    let mut coef = vec![0.0; parameters.len()];
    let mut c = 0.0;
    linear(&lhs, 1.0, &mut coef, &mut c, parameters)?;
    linear(&rhs, -1.0, &mut coef, &mut c, parameters)?;
    let coefficients: Vec<(usize, f64)> = coef
        .iter()
        .enumerate()
        .filter(|(_, v)| **v != 0.0)
        .map(|(k, v)| (k, *v))
        .collect();
    if coefficients.is_empty() {
        return Err("names no parameter".into());
    }
    Ok(Restriction {
        text: text.trim().to_string(),
        coefficients,
        constant: -c,
    })
}

fn constant_value(e: &Expr) -> Option<f64> {
    match e {
        Expr::Num(v) => Some(*v),
        Expr::Neg(x) => constant_value(x).map(|v| -v),
        Expr::Bin(op, a, b) => {
            let (a, b) = (constant_value(a)?, constant_value(b)?);
            match op {
                BinOp::Add => Some(a + b),
                BinOp::Sub => Some(a - b),
                BinOp::Mul => Some(a * b),
                BinOp::Div => Some(a / b),
                _ => None,
            }
        }
        _ => None,
    }
}

fn linear(
    e: &Expr,
    sign: f64,
    coef: &mut [f64],
    c: &mut f64,
    parameters: &[Parameter],
) -> std::result::Result<(), String> {
    if let Some(v) = constant_value(e) {
        *c += sign * v;
        return Ok(());
    }
    match e {
        Expr::Col(name) => {
            let k = parameters
                .iter()
                .position(|p| &p.name == name)
                .ok_or_else(|| format!("`{name}` is not a parameter of this model"))?;
            coef[k] += sign;
            Ok(())
        }
        Expr::Neg(x) => linear(x, -sign, coef, c, parameters),
        Expr::Bin(BinOp::Add, a, b) => {
            linear(a, sign, coef, c, parameters)?;
            linear(b, sign, coef, c, parameters)
        }
        Expr::Bin(BinOp::Sub, a, b) => {
            linear(a, sign, coef, c, parameters)?;
            linear(b, -sign, coef, c, parameters)
        }
        Expr::Bin(BinOp::Mul, a, b) => match (constant_value(a), constant_value(b)) {
            (Some(v), _) => linear(b, sign * v, coef, c, parameters),
            (_, Some(v)) => linear(a, sign * v, coef, c, parameters),
            _ => Err("is not linear in the parameters".into()),
        },
        Expr::Bin(BinOp::Div, a, b) => match constant_value(b) {
            Some(v) if v != 0.0 => linear(a, sign / v, coef, c, parameters),
            _ => Err("is not linear in the parameters".into()),
        },
        _ => Err("is not linear in the parameters".into()),
    }
}
