//! The distributions a random coefficient may follow across decision makers,
//! with a location m and a spread s: normal m + s z; lognormal exp(m + s z)
//! and its negative -exp(m + s z); uniform m + s (2u - 1); symmetric
//! triangular m + s t(u) on [m - s, m + s]. Each maps one uniform draw to a
//! standardised value e (z, 2u - 1 or t(u)), then (m, s, e) to the
//! coefficient with its derivatives; and gives the implied mean, standard
//! deviation, quantiles and share above zero in closed form.

use super::normal;

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Distribution {
    Normal,
    Lognormal,
    NegativeLognormal,
    Uniform,
    Triangular,
}

/// The names the spec uses, in the order the documentation lists them.
pub const NAMES: [&str; 5] = [
    "normal",
    "lognormal",
    "negative-lognormal",
    "uniform",
    "triangular",
];

impl Distribution {
    pub fn parse(name: &str) -> Option<Distribution> {
        Some(match name {
            "normal" => Distribution::Normal,
            "lognormal" => Distribution::Lognormal,
            "negative-lognormal" => Distribution::NegativeLognormal,
            "uniform" => Distribution::Uniform,
            "triangular" => Distribution::Triangular,
            _ => return None,
        })
    }

    pub fn name(self) -> &'static str {
        match self {
            Distribution::Normal => "normal",
            Distribution::Lognormal => "lognormal",
            Distribution::NegativeLognormal => "negative-lognormal",
            Distribution::Uniform => "uniform",
            Distribution::Triangular => "triangular",
        }
    }

    /// Whether the coefficient is exp(m + s e) up to sign (the location and
    /// spread are those of its logarithm).
    pub fn is_log(self) -> bool {
        matches!(
            self,
            Distribution::Lognormal | Distribution::NegativeLognormal
        )
    }

    /// The standardised value of a uniform draw u in (0, 1).
    pub fn standard(self, u: f64) -> f64 {
        match self {
            Distribution::Normal | Distribution::Lognormal | Distribution::NegativeLognormal => {
                normal::quantile(u)
            }
            Distribution::Uniform => 2.0 * u - 1.0,
            Distribution::Triangular => triangular(u),
        }
    }

    /// The coefficient at location m, spread s and standardised value e.
    #[inline]
    pub fn coefficient(self, m: f64, s: f64, e: f64) -> f64 {
        // The exponent is capped where exp would overflow (a search may try
        // absurd spreads; the likelihood there is tiny but stays a number).
        match self {
            Distribution::Lognormal => (m + s * e).min(700.0).exp(),
            Distribution::NegativeLognormal => -(m + s * e).min(700.0).exp(),
            _ => m + s * e,
        }
    }

    /// The coefficient at uniform draw u (for quantiles and simulation).
    pub fn at(self, m: f64, s: f64, u: f64) -> f64 {
        self.coefficient(m, s.abs(), self.standard(u))
    }

    /// The q-th quantile (0 < q < 1) of the coefficient across decision makers.
    pub fn quantile(self, m: f64, s: f64, q: f64) -> f64 {
        // -exp(.) falls as the draw rises: its q-th quantile is at 1 - q.
        let u = if self == Distribution::NegativeLognormal {
            1.0 - q
        } else {
            q
        };
        self.at(m, s, u)
    }

    /// The implied mean and standard deviation across decision makers.
    pub fn moments(self, m: f64, s: f64) -> (f64, f64) {
        let s = s.abs();
        match self {
            Distribution::Normal => (m, s),
            Distribution::Uniform => (m, s / 3f64.sqrt()),
            Distribution::Triangular => (m, s / 6f64.sqrt()),
            Distribution::Lognormal | Distribution::NegativeLognormal => {
                let mean = (m + s * s / 2.0).exp();
                let sd = mean * (s * s).exp_m1().max(0.0).sqrt();
                let sign = if self == Distribution::Lognormal {
                    1.0
                } else {
                    -1.0
                };
                (sign * mean, sd)
            }
        }
    }

    /// The share of decision makers whose coefficient is above zero.
    pub fn share_positive(self, m: f64, s: f64) -> f64 {
        let s = s.abs();
        let standard_cdf = |t: f64| match self {
            Distribution::Uniform => ((t + 1.0) / 2.0).clamp(0.0, 1.0),
            Distribution::Triangular => triangular_cdf(t),
            _ => normal::cdf(t),
        };
        match self {
            Distribution::Lognormal => 1.0,
            Distribution::NegativeLognormal => 0.0,
            _ if s == 0.0 => {
                if m > 0.0 {
                    1.0
                } else {
                    0.0
                }
            }
            _ => 1.0 - standard_cdf(-m / s),
        }
    }
}

/// The symmetric triangular quantile on [-1, 1].
pub fn triangular(u: f64) -> f64 {
    if u < 0.5 {
        (2.0 * u).sqrt() - 1.0
    } else {
        1.0 - (2.0 * (1.0 - u)).sqrt()
    }
}

/// The symmetric triangular distribution function on [-1, 1].
fn triangular_cdf(t: f64) -> f64 {
    if t <= -1.0 {
        0.0
    } else if t <= 0.0 {
        (1.0 + t) * (1.0 + t) / 2.0
    } else if t < 1.0 {
        1.0 - (1.0 - t) * (1.0 - t) / 2.0
    } else {
        1.0
    }
}
