//! The mixed family's random coefficients as the passes and analyses use
//! them: the spec's random terms with their loadings (correlated ones mix the
//! draws of those listed before them), a coefficient at one draw, the
//! coefficient points the analyses average over, and each decision maker's
//! conditional means.

use std::sync::Arc;

use super::{constants_of, correlated, pass, Mixed, Panel};
use crate::design::Design;
use crate::model::distribution::Distribution;
use crate::model::space::Willingness;
use crate::model::{CoefficientDerivatives, Conditional, Points, RandomCoefficient};
use crate::spec::{Spec, Term};

/// The spec's random coefficients in parameter order (their draw dimension
/// is their place in the list), with the loadings of the correlated ones.
pub(super) fn random_terms(spec: &Spec) -> Vec<RandomCoefficient> {
    let constants = constants_of(spec);
    let mut terms: Vec<RandomCoefficient> = Vec::new();
    for (k, p) in spec.parameters.iter().enumerate() {
        let name = match &p.term {
            Term::Constant => p
                .alternative
                .and_then(|j| constants.iter().find(|c| c.0 == j))
                .map(|c| c.1.as_str()),
            Term::Attribute(a) => spec.attributes[*a].random.as_deref(),
            Term::Characteristic(c) => spec.characteristics[*c].random.as_deref(),
            _ => None,
        };
        let (Some(dist), Some(spread)) = (
            name.and_then(Distribution::parse),
            spec.parameter_index(&format!("{}_spread", p.name)),
        ) else {
            continue;
        };
        terms.push(RandomCoefficient {
            location: k,
            spread,
            distribution: dist,
            loadings: vec![(spread, terms.len())],
        });
    }
    let mut listed = correlated::of(spec);
    if listed.first().is_some_and(|n| n == "*") {
        listed = terms
            .iter()
            .map(|t| spec.parameters[t.location].name.clone())
            .collect();
    }
    // Names of coefficients this spec does not have (a reduced spec) drop out.
    let dims: Vec<(String, usize)> = listed
        .into_iter()
        .filter_map(|n| {
            let dim = terms
                .iter()
                .position(|t| spec.parameters[t.location].name == n)?;
            Some((n, dim))
        })
        .collect();
    for (i, (row, dim)) in dims.iter().enumerate() {
        for (column, dim_j) in &dims[..i] {
            if let Some(p) = spec.parameter_index(&correlated::chol_name(row, column)) {
                terms[*dim].loadings.push((p, *dim_j));
            }
        }
    }
    terms
}

/// A decision maker's coefficient points for the analyses (the first `count`
/// of their draws), in preference space.
pub(super) struct MixedPoints {
    pub panel: Arc<Panel>,
    pub terms: Vec<RandomCoefficient>,
    pub space: Option<Willingness>,
    pub count: usize,
}

/// Random coefficient `t` of decision maker `n` at draw `r`.
#[inline]
pub(crate) fn drawn(t: &RandomCoefficient, beta: &[f64], panel: &Panel, n: usize, r: usize) -> f64 {
    drawn_slope(t, beta, panel, n, r).0
}

/// Random coefficient `t` of decision maker `n` at draw `r` and its
/// derivative by its location.
#[inline]
fn drawn_slope(
    t: &RandomCoefficient,
    beta: &[f64],
    panel: &Panel,
    n: usize,
    r: usize,
) -> (f64, f64) {
    let u: f64 = t
        .loadings
        .iter()
        .map(|&(p, dim)| beta[p] * panel.draws_of(n, dim)[r])
        .sum();
    let b = t.distribution.coefficient(beta[t.location], 1.0, u);
    (b, slope(t.distribution, b))
}

/// The derivative of a drawn coefficient b = F(m + u) by its location m
/// (b itself for exp(.) and its negative, else 1); by a loading's parameter
/// it is this times the loading's draw.
#[inline]
pub(crate) fn slope(dist: Distribution, b: f64) -> f64 {
    if dist.is_log() {
        b
    } else {
        1.0
    }
}

/// Calls `f(p, db/dbeta_p)` for random coefficient `t` at draw `r` of
/// decision maker `n`, whose derivative by its location is `dm`: the
/// location, then each loading's parameter.
fn by_parameters(
    t: &RandomCoefficient,
    panel: &Panel,
    (n, r): (usize, usize),
    dm: f64,
    f: &mut dyn FnMut(usize, f64),
) {
    f(t.location, dm);
    for &(p, dim) in &t.loadings {
        f(p, dm * panel.draws_of(n, dim)[r]);
    }
}

impl MixedPoints {
    /// Draw `r`'s derivatives in willingness-to-pay space, to `emit(k, p,
    /// dc_k/dbeta_p)`: with alpha the (drawn) price scale and w_k the
    /// (drawn) values, c_price = -alpha and c_k = alpha w_k.
    fn willingness_at(
        &self,
        w: &Willingness,
        beta: &[f64],
        (n, r): (usize, usize),
        emit: &mut dyn FnMut(usize, usize, f64),
    ) {
        let panel = &self.panel;
        let term_of = |k: usize| {
            let t = self.terms.iter().find(|t| t.location == k)?;
            Some((t, drawn_slope(t, beta, panel, n, r)))
        };
        let price = term_of(w.price);
        let alpha = price.map_or(beta[w.price], |(_, (b, _))| b);
        let alpha_by = |f: &mut dyn FnMut(usize, f64)| match price {
            Some((t, (_, dm))) => by_parameters(t, panel, (n, r), dm, f),
            None => f(w.price, 1.0),
        };
        alpha_by(&mut |p, v| emit(w.price, p, -v));
        for &k in &w.values {
            let value = term_of(k);
            let wk = value.map_or(beta[k], |(_, (b, _))| b);
            alpha_by(&mut |p, v| emit(k, p, v * wk));
            match value {
                Some((t, (_, dm))) => {
                    by_parameters(t, panel, (n, r), alpha * dm, &mut |p, v| emit(k, p, v))
                }
                None => emit(k, k, alpha),
            }
        }
    }
}

impl Points for MixedPoints {
    fn count(&self) -> usize {
        self.count
    }
    fn same_as(&self, i: usize, previous: usize) -> bool {
        self.panel.unit_of(i) == self.panel.unit_of(previous)
    }
    fn fill(&self, beta: &[f64], i: usize, out: &mut [f64]) {
        let k = beta.len();
        let n = self.panel.unit_of(i);
        let mut theta = beta.to_vec();
        for (r, row) in out.chunks_mut(k).take(self.count).enumerate() {
            for t in &self.terms {
                theta[t.location] = drawn(t, beta, &self.panel, n, r);
            }
            match &self.space {
                Some(w) => w.preference(&theta, row),
                None => row.copy_from_slice(&theta),
            }
        }
    }
    /// A random coefficient's derivatives by its location and loadings'
    /// parameters (as the fit's gradient takes them, `pass::coefficients`),
    /// mapped through willingness-to-pay space when the model is written there.
    fn derivatives(&self, beta: &[f64], i: usize, out: &mut CoefficientDerivatives) -> bool {
        let n = self.panel.unit_of(i);
        out.pairs.clear();
        out.values.clear();
        for r in 0..self.count {
            let mut emit = |k: usize, p: usize, v: f64| {
                if r == 0 {
                    out.pairs.push((k, p));
                }
                out.values.push(v);
            };
            match &self.space {
                Some(w) => self.willingness_at(w, beta, (n, r), &mut emit),
                None => {
                    for t in &self.terms {
                        let (_, dm) = drawn_slope(t, beta, &self.panel, n, r);
                        by_parameters(t, &self.panel, (n, r), dm, &mut |p, v| {
                            emit(t.location, p, v)
                        });
                    }
                }
            }
        }
        true
    }
}

/// Each decision maker's conditional mean of every random coefficient:
/// sum_r w_nr beta_nr, with w_nr the draw's share of the person's likelihood.
pub(super) fn conditional(m: &Mixed, d: &Design, beta: &[f64]) -> Conditional {
    let panel = m.panel(d);
    let plan = pass::Plan::new(m, d, &panel, beta);
    let dims = m.terms.len();
    let r = panel.draws;
    let parts = crate::design::on_ranges(crate::design::heavy_pieces(panel.units, 16), |units| {
        let mut w = pass::Work::new(&plan);
        let mut out = Vec::with_capacity(units.len() * dims);
        for n in units {
            pass::coefficients(&plan, n, &mut w);
            pass::unit::<false>(&plan, n, &mut w, false);
            pass::close_unit(&mut w);
            for dim in 0..dims {
                let c = &w.coef[dim * r..(dim + 1) * r];
                out.push(c.iter().zip(&w.omega).map(|(c, o)| c * o).sum());
            }
        }
        out
    });
    Conditional {
        first: (0..panel.units)
            .map(|n| {
                panel
                    .situations_of(n)
                    .first()
                    .map(|&i| i as usize)
                    .unwrap_or(0)
            })
            .collect(),
        means: parts.concat(),
    }
}
