//! The terms of a value ratio as the model has them: a fixed coefficient, a
//! random one (drawn jointly with the other term when the model correlates
//! them), or, in willingness-to-pay space, the price, whose coefficient is
//! -alpha while every other is alpha w: the scale cancels, so a ratio is
//! formed from the values with the price's term the constant -1. A value
//! over the price is then that value itself.

use crate::estimate::Fit;
use crate::model::distribution::Distribution;
use crate::model::{covariance, normal, RandomCoefficient};

/// What the ratios need to know of the model's coefficients.
pub struct Tastes<'a> {
    random: &'a [RandomCoefficient],
    price: Option<usize>,
}

impl<'a> Tastes<'a> {
    pub fn of(fit: &Fit, random: &'a [RandomCoefficient]) -> Tastes<'a> {
        Tastes {
            random,
            price: fit.family.willingness().map(|w| w.price),
        }
    }

    /// Whether parameter `k` is the price scale of a willingness-space model.
    pub fn is_price(&self, k: usize) -> bool {
        self.price == Some(k)
    }

    /// Whether the ratio of `n` over `d` has a term that varies across
    /// decision makers (the price's -1 never does).
    pub fn varies(&self, n: usize, d: usize) -> bool {
        [n, d]
            .iter()
            .any(|&k| !self.is_price(k) && self.random.iter().any(|t| t.location == k))
    }

    /// The term of parameter `k` with fixed coefficients.
    pub fn fixed(&self, beta: &[f64], k: usize) -> f64 {
        if self.is_price(k) {
            -1.0
        } else {
            beta[k]
        }
    }

    /// The sentence a ratio over the price of a willingness-space model carries.
    pub fn note(&self, fit: &Fit, n: usize, d: usize) -> Option<String> {
        (self.is_price(d) && !self.is_price(n)).then(|| {
            format!(
                "the model is in willingness-to-pay space: `{}` is itself the value of its variable in units of `{}`, so this ratio is that estimate (times the scale), not a division",
                fit.names[n], fit.names[d]
            )
        })
    }

    /// The ratio's two terms at `beta`, ready to be drawn.
    pub fn pair(&self, beta: &[f64], n: usize, d: usize) -> Pair {
        let side = |k: usize| -> Side {
            if self.is_price(k) {
                return Side::Constant(-1.0);
            }
            match self.random.iter().find(|t| t.location == k) {
                None => Side::Constant(beta[k]),
                Some(t) => Side::Random {
                    dist: t.distribution,
                    m: beta[t.location],
                    s: t.scale(beta),
                },
            }
        };
        let (tn, td) = (
            self.random.iter().find(|t| t.location == n),
            self.random.iter().find(|t| t.location == d),
        );
        // The denominator's normal draw as a z1 + b z2 given the numerator's z1.
        let (sn, sd) = (
            tn.map(|t| t.scale(beta)).unwrap_or(0.0),
            td.map(|t| t.scale(beta)).unwrap_or(0.0),
        );
        let c = match (tn, td) {
            (Some(a), Some(b)) if !self.is_price(n) && !self.is_price(d) => covariance(a, b, beta),
            _ => 0.0,
        };
        let a = if sn > 0.0 { c / sn } else { 0.0 };
        let b = (sd * sd - a * a).max(0.0).sqrt();
        Pair {
            n: side(n),
            d: side(d),
            same: n == d,
            a,
            b,
        }
    }
}

/// One term of a ratio.
enum Side {
    Constant(f64),
    Random { dist: Distribution, m: f64, s: f64 },
}

/// A ratio's terms, drawn from a pair of uniforms.
pub struct Pair {
    n: Side,
    d: Side,
    same: bool,
    /// The denominator's standardised draw is (a z_n + b z_d) / s_d.
    a: f64,
    b: f64,
}

impl Pair {
    /// The numerator and denominator at uniforms (un, ud).
    pub fn at(&self, un: f64, ud: f64) -> (f64, f64) {
        let bn = match &self.n {
            Side::Constant(x) => *x,
            Side::Random { dist, m, s } => dist.at(*m, *s, un),
        };
        if self.same {
            return (bn, bn);
        }
        let bd = match &self.d {
            Side::Constant(x) => *x,
            Side::Random { dist, m, .. } if is_normal(*dist) && is_normal_side(&self.n) => {
                let (zn, zd) = (normal::quantile(un), normal::quantile(ud));
                dist.coefficient(*m, 1.0, self.a * zn + self.b * zd)
            }
            Side::Random { dist, m, s } => dist.at(*m, *s, ud),
        };
        (bn, bd)
    }
}

fn is_normal(d: Distribution) -> bool {
    matches!(
        d,
        Distribution::Normal | Distribution::Lognormal | Distribution::NegativeLognormal
    )
}

fn is_normal_side(s: &Side) -> bool {
    matches!(s, Side::Random { dist, .. } if is_normal(*dist))
}
