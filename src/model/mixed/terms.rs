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
use crate::model::{Conditional, Points, RandomCoefficient};
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
    let u: f64 = t
        .loadings
        .iter()
        .map(|&(p, dim)| beta[p] * panel.draws_of(n, dim)[r])
        .sum();
    t.distribution.coefficient(beta[t.location], 1.0, u)
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
