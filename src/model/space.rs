//! Willingness-to-pay space: `[model].space = "willingness"` with
//! `[model].price = "<attribute>"` writes the utility as
//! alpha * (-price + sum_k w_k x_k + constants ...), so that the estimated
//! parameters are the values a decision maker puts on each variable in price
//! units (Train & Weeks 2005). The price's parameter keeps the attribute's
//! name and is alpha, the price scale; every other utility parameter keeps its
//! name and is a willingness to pay. In preference terms b_price = -alpha and
//! b_k = alpha w_k; this module holds that map, its derivatives and the spec
//! keys' checks, which the logit and mixed families share.

use toml::{Table, Value};

use crate::spec::{Coefficient, Spec, SpecView, Term};

/// The `[model]` keys of a family that can be written in willingness space.
pub const KEYS: [&str; 2] = ["space", "price"];

/// A model written in willingness-to-pay space.
#[derive(Clone, Debug, PartialEq)]
pub struct Willingness {
    /// The price's parameter: alpha, the price scale.
    pub price: usize,
    /// The other parameters of the utility: willingness to pay (constants,
    /// attributes, characteristics), in parameter order.
    pub values: Vec<usize>,
}

impl Willingness {
    /// The willingness space a validated spec asks for, if any.
    pub fn of(spec: &Spec) -> Option<Willingness> {
        let name = price_name(&spec.family_keys)?;
        let price = spec.parameters.iter().position(|p| {
            p.name == name && matches!(p.term, Term::Attribute(_)) && p.alternative.is_none()
        })?;
        let values = spec
            .parameters
            .iter()
            .enumerate()
            .filter(|(k, p)| *k != price && !matches!(p.term, Term::Family(_)))
            .map(|(k, _)| k)
            .collect();
        Some(Willingness { price, values })
    }

    /// The preference-space coefficients at `theta` (the family's own
    /// parameters copied): b_price = -alpha, b_k = alpha w_k.
    pub fn preference(&self, theta: &[f64], b: &mut [f64]) {
        b.copy_from_slice(theta);
        let alpha = theta[self.price];
        b[self.price] = -alpha;
        for &k in &self.values {
            b[k] = alpha * theta[k];
        }
    }

    /// The gradient by theta from the gradient `gb` by the preference
    /// coefficients at `theta`: d/dw_k = alpha gb_k, d/dalpha = -gb_price +
    /// sum_k w_k gb_k.
    pub fn chain_gradient(&self, theta: &[f64], gb: &[f64], out: &mut [f64]) {
        out.copy_from_slice(gb);
        let alpha = theta[self.price];
        let mut da = -gb[self.price];
        for &k in &self.values {
            da += theta[k] * gb[k];
            out[k] = alpha * gb[k];
        }
        out[self.price] = da;
    }

    /// The Hessian by theta (K x K row-major) from the gradient `gb` and
    /// Hessian `hb` by the preference coefficients: J' hb J plus the second
    /// derivatives of the map (d2 b_k / dalpha dw_k = 1) times gb_k.
    pub fn chain_hessian(&self, theta: &[f64], gb: &[f64], hb: &[f64]) -> Vec<f64> {
        let k = theta.len();
        // J[q][p] = d b_q / d theta_p, held as columns of each row's entries.
        let mut jac = vec![0.0; k * k];
        for q in 0..k {
            jac[q * k + q] = 1.0;
        }
        let alpha = theta[self.price];
        jac[self.price * k + self.price] = -1.0;
        for &q in &self.values {
            jac[q * k + q] = alpha;
            jac[q * k + self.price] = theta[q];
        }
        // hj = hb J, then J' hj.
        let mut hj = vec![0.0; k * k];
        for r in 0..k {
            for q in 0..k {
                let h = hb[r * k + q];
                if h == 0.0 {
                    continue;
                }
                for p in 0..k {
                    hj[r * k + p] += h * jac[q * k + p];
                }
            }
        }
        let mut out = vec![0.0; k * k];
        for q in 0..k {
            for a in 0..k {
                let jqa = jac[q * k + a];
                if jqa == 0.0 {
                    continue;
                }
                for p in 0..k {
                    out[a * k + p] += jqa * hj[q * k + p];
                }
            }
        }
        for &q in &self.values {
            out[self.price * k + q] += gb[q];
            out[q * k + self.price] += gb[q];
        }
        out
    }

    /// Theta from preference coefficients `b` (alpha = -b_price, w = b / alpha):
    /// the exact start of a willingness-space search from a preference-space fit.
    pub fn from_preference(&self, b: &[f64], theta: &mut [f64]) {
        let alpha = -b[self.price];
        theta[self.price] = alpha;
        for &k in &self.values {
            theta[k] = if alpha != 0.0 { b[k] / alpha } else { 0.0 };
        }
    }
}

/// `[model].price` when `[model].space` is "willingness".
fn price_name(keys: &Table) -> Option<&str> {
    let model = keys.get("model")?;
    (model.get("space")?.as_str()? == "willingness")
        .then(|| model.get("price")?.as_str())
        .flatten()
}

/// Checks `[model].space` and `[model].price`; returns the price attribute's
/// index when the model is in willingness space.
pub fn check(spec: &SpecView) -> Result<Option<usize>, String> {
    let model = spec.keys.get("model");
    let space = model.and_then(|m| m.get("space"));
    let price = model.and_then(|m| m.get("price"));
    let willingness = match space {
        None => false,
        Some(Value::String(s)) if s == "preference" => false,
        Some(Value::String(s)) if s == "willingness" => true,
        Some(Value::String(s)) => {
            return Err(format!(
                "[model].space: \"{s}\" is not known (use \"preference\", the default, or \"willingness\")"
            ))
        }
        Some(_) => {
            return Err(
                "[model].space: give \"preference\" or \"willingness\" as a string".into(),
            )
        }
    };
    if !willingness {
        return match price {
            Some(_) => Err("[model].price: names the price of a model in willingness space; add `space = \"willingness\"` or remove `price`".into()),
            None => Ok(None),
        };
    }
    let names = || {
        spec.attributes
            .iter()
            .map(|a| a.name.as_str())
            .collect::<Vec<_>>()
            .join(", ")
    };
    let name = match price {
        None => return Err(format!(
            "[model].price: missing: space = \"willingness\" needs the [[attribute]] that is the price (one of: {})",
            names()
        )),
        Some(Value::String(n)) => n,
        Some(_) => return Err("[model].price: give the price attribute's name as a string".into()),
    };
    let Some(a) = spec.attributes.iter().position(|a| &a.name == name) else {
        return Err(format!(
            "[model].price: `{name}` is not an [[attribute]] (the spec has: {})",
            names()
        ));
    };
    if spec.attributes[a].coefficient == Coefficient::PerAlternative {
        return Err(format!(
            "[model].price: `{name}` has a coefficient per alternative; the price scale is one coefficient shared by every alternative (remove `coefficient = \"per-alternative\"`)"
        ));
    }
    Ok(Some(a))
}

/// Refuses a price scale fixed at 0 (every utility would be 0); a
/// lognormal scale's parameter is the mean of its logarithm, which may be 0.
pub fn check_fixed(spec: &Spec, w: &Willingness, log_scale: bool) -> Result<(), String> {
    let p = &spec.parameters[w.price];
    if !log_scale && p.fixed == Some(0.0) {
        return Err(format!(
            "[parameters].{}: the price scale of a model in willingness space cannot be fixed at 0 (every utility would be 0)",
            p.name
        ));
    }
    Ok(())
}

/// The price scale of a willingness-space family at `beta` (its median, for
/// a lognormal one: exp of its location), when it is positive and finite:
/// what a value's effect on utility is multiplied by. `None` in preference space.
pub fn price_scale(family: &dyn crate::model::Family, beta: &[f64]) -> Option<f64> {
    let w = family.willingness()?;
    let log = family
        .random_coefficients()
        .iter()
        .any(|t| t.location == w.price && t.distribution.is_log());
    let a = if log {
        beta[w.price].min(700.0).exp()
    } else {
        beta[w.price].abs()
    };
    (a > 0.0 && a.is_finite()).then_some(a)
}
