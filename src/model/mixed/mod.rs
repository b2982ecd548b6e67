//! Mixed logit (random coefficients; Train, Discrete Choice Methods with
//! Simulation, 2nd ed., ch. 6 and 10): coefficients vary across decision makers
//! following the distributions the spec names, the logit is the kernel given
//! the coefficients, and the probabilities are simulated by averaging over
//! draws fixed through a fit. With `[data].group` one set of draws per
//! decision maker is shared by all of that person's situations (a panel: the
//! likelihood of a person is the average over draws of the product of their
//! choice probabilities); without it each situation is its own decision maker.
//! `rules` checks the spec keys, `pass` has the simulated log-likelihood and
//! its analytic gradient; the Hessian is differenced (`model::hessian`).

pub mod correlated;
mod panel;
pub(crate) mod pass;
mod rules;
mod score;
mod terms;

use std::sync::Arc;

use super::distribution::Distribution;
use super::draws::{PerData, Simulation};
use super::logit::{softmax, Logit};
use super::space::Willingness;
use super::{Abilities, Conditional, Eval, Family, FamilyRef, Points, RandomCoefficient};
use crate::design::Design;
use crate::spec::Spec;

pub use panel::Panel;
pub use rules::{constants_of, Rules};
use terms::{conditional, random_terms, MixedPoints};

/// The mixed logit built for one spec.
#[derive(Debug)]
pub struct Mixed {
    pub terms: Vec<RandomCoefficient>,
    pub simulation: Simulation,
    binary: bool,
    /// Written in willingness-to-pay space.
    pub space: Option<Willingness>,
    /// Uniforms given from outside (`[unit][dim][draw]`), used instead of the sequence.
    given: Option<Arc<Vec<f64>>>,
    /// Draws built per data set, found again by its observations (shared
    /// with the cheaper family of bands, which uses the first of them).
    panels: Arc<PerData<Panel>>,
    /// The analyses (not the likelihood) use only this many of each decision
    /// maker's draws: the cheaper family of uncertainty bands.
    limit: Option<usize>,
    /// The position of the data set's first decision maker in a larger one
    /// (a chunk of a population): the draws start there.
    first_unit: usize,
}

pub use super::draws::BAND_DRAWS;

/// Below this many draws per decision maker the fit carries a warning.
pub const FEW_DRAWS: usize = 100;

impl Mixed {
    /// Builds the family for a spec `Rules` accepted.
    pub fn new(spec: &Spec) -> crate::error::Result<Mixed> {
        let simulation = Simulation::from_keys(&spec.family_keys)
            .map_err(|m| crate::error::Error::spec(&spec.path, m))?;
        let terms = random_terms(spec);
        let space = Willingness::of(spec);
        if let Some(w) = &space {
            let log_scale = terms.iter().any(|t| t.location == w.price);
            super::space::check_fixed(spec, w, log_scale)
                .map_err(|m| crate::error::Error::spec(&spec.path, m))?;
        }
        Ok(Mixed {
            terms,
            simulation,
            binary: spec.alternatives.len() == 2,
            space,
            given: None,
            panels: Arc::new(PerData::default()),
            limit: None,
            first_unit: 0,
        })
    }

    /// The same family with uniform draws given from outside, `[unit][dim][draw]`
    /// with `draws` per unit (a reference check on fixed draws).
    pub fn with_uniforms(mut self, uniforms: Vec<f64>, draws: usize) -> Mixed {
        self.simulation.draws = draws;
        self.given = Some(Arc::new(uniforms));
        self
    }

    /// The decision makers and draws of `d` (built once per data set).
    pub fn panel(&self, d: &Design) -> Arc<Panel> {
        self.panels.get_or_build(&d.obs, || {
            let units = match &d.obs.group {
                Some(_) => d.obs.groups,
                None => d.obs.situations,
            };
            let dims = self.terms.len();
            let r = self.simulation.draws;
            let uniforms = match &self.given {
                Some(u) if u.len() == units * dims * r && self.first_unit == 0 => u.to_vec(),
                _ => self.simulation.uniforms_from(self.first_unit, units, dims),
            };
            Panel::new(&d.obs, &self.terms, r, uniforms)
        })
    }

    fn logit(&self) -> Logit {
        Logit {
            binary: self.binary,
        }
    }
}

impl Family for Mixed {
    fn name(&self) -> &'static str {
        "mixed"
    }

    fn abilities(&self) -> Abilities {
        Abilities {
            new_alternatives: true,
            simulation_draws: true,
            per_decision_maker: true,
            ..Abilities::default()
        }
    }

    fn evaluate(&self, d: &Design, beta: &[f64], want_grad: bool, _want_hess: bool) -> Eval {
        let panel = self.panel(d);
        let plan = pass::Plan::new(self, d, &panel, beta);
        let mut ll = crate::model::logit::Compensated::default();
        let mut grad = vec![0.0; if want_grad { d.params } else { 0 }];
        for p in pass::pieces(&plan, want_grad, false) {
            ll.add(p.ll.value());
            grad.iter_mut().zip(&p.grad).for_each(|(a, b)| *a += b);
        }
        Eval {
            ll: ll.value(),
            grad,
            hess: None,
        }
    }

    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
        let panel = self.panel(d);
        let plan = pass::Plan::new(self, d, &panel, beta);
        let k = d.params;
        let mut n = 0;
        for p in pass::pieces(&plan, false, true) {
            for score in p.scores.chunks(k) {
                if let Some(&i) = panel.situations_of(n).first() {
                    f(i as usize, score);
                }
                n += 1;
            }
        }
    }

    fn probabilities(&self, _beta: &[f64], v: &[f64], p: &mut [f64]) {
        softmax(v, p);
    }

    fn probabilities_after(
        &self,
        beta: &[f64],
        v0: &[f64],
        p0: &[f64],
        v1: &[f64],
        p1: &mut [f64],
    ) {
        self.logit().probabilities_after(beta, v0, p0, v1, p1)
    }

    fn probabilities_of_points(
        &self,
        v: &mut [f64],
        points: usize,
        scratch: &mut Vec<f64>,
    ) -> bool {
        self.logit().probabilities_of_points(v, points, scratch)
    }

    fn dprob(&self, beta: &[f64], v: &[f64], p: &[f64], dp: &mut [f64]) {
        self.logit().dprob(beta, v, p, dp)
    }

    /// At one coefficient point: the logit's (the analyses differentiate
    /// the points' coefficients through `Points::derivatives`).
    fn d2prob(&self, v: &[f64], p: &[f64], dp: &[f64], d2p: &mut [f64]) -> bool {
        self.logit().d2prob(v, p, dp, d2p)
    }

    #[allow(clippy::too_many_arguments)]
    fn d2prob_along(
        &self,
        v: &[f64],
        p: &[f64],
        dp: &[f64],
        d2p: &mut [f64],
        x: &[f64],
        e: &[f64],
        kf: usize,
        g: &mut [f64],
    ) -> bool {
        self.logit().d2prob_along(v, p, dp, d2p, x, e, kf, g)
    }

    fn caution(&self, spec: &Spec) -> Option<String> {
        let panel = if spec.data.group.is_some() {
            "each decision maker's tastes are assumed the same across all of their situations (a panel)"
        } else {
            "each situation is treated as a separate decision maker (no [data].group), so repeated choices of one person are not linked"
        };
        Some(format!(
            "Mixed logit: the random coefficients are assumed to follow the distributions named in the spec, {}; {panel}.{} Probabilities are simulated with {} {} draws per decision maker, so every figure carries simulation noise (`fit --draws-check` shows how much).",
            if !super::correlated_group(&self.terms).is_empty() {
                "the listed ones jointly normal (their logarithms, for lognormals) and the rest independent, and all independent of the observed variables"
            } else {
                "independently of each other and of the observed variables"
            },
            match &self.space {
                Some(w) => format!(
                    " The model is written in willingness-to-pay space: `{}` is the price scale and every other coefficient a value in its units.",
                    spec.parameters[w.price].name
                ),
                None => String::new(),
            },
            self.simulation.draws,
            self.simulation.sequence.name()
        ))
    }

    fn held_in_first_search(&self) -> Vec<usize> {
        self.terms
            .iter()
            .flat_map(|t| t.loadings.iter().map(|l| l.0))
            .collect()
    }

    fn held_in_middle_search(&self) -> Vec<usize> {
        self.terms
            .iter()
            .flat_map(|t| t.loadings[1..].iter().map(|l| l.0))
            .collect()
    }

    fn after_middle_search(&self, beta: &mut [f64]) {
        // Small off-diagonals: a hundredth of the row's spread.
        for t in &self.terms {
            let s = beta[t.spread].abs().max(1e-3);
            for &(p, _) in &t.loadings[1..] {
                if beta[p] == 0.0 {
                    beta[p] = 0.01 * s;
                }
            }
        }
    }

    fn simpler(&self) -> Option<FamilyRef> {
        // In willingness space no simpler family evaluates the model exactly:
        // it starts from the preference-space logit instead (`start_from`).
        match self.space {
            None => Some(Arc::new(self.logit())),
            Some(_) => None,
        }
    }

    fn start_from(&self) -> Option<FamilyRef> {
        self.space
            .as_ref()
            .map(|_| Arc::new(self.logit()) as FamilyRef)
    }

    fn willingness(&self) -> Option<&Willingness> {
        self.space.as_ref()
    }

    fn after_first_search(&self, spec: &Spec, d: &Design, beta: &mut [f64], by_simpler: bool) {
        if let (Some(w), true) = (&self.space, by_simpler) {
            // The preference-space logit's estimates, mapped to values.
            let b = beta.to_vec();
            w.from_preference(&b, beta);
        }
        // Floors of the starts in the variable's units: a coefficient of 1 / sd
        // moves utility by one standard deviation. In ordinary units (sd
        // between 0.01 and 100) the floors are those of unit variables.
        // In willingness space a value moves utility by the price scale times
        // its variable.
        // (Just mapped from the preference logit, the price's parameter is
        // alpha itself, not yet its logarithm.)
        let alpha = match (&self.space, by_simpler) {
            (Some(w), true) => Some(beta[w.price].abs()).filter(|a| *a > 0.0 && a.is_finite()),
            _ => super::space::price_scale(self, beta),
        }
        .unwrap_or(1.0);
        let unit = |p: usize| {
            let value = self.space.as_ref().is_some_and(|w| w.values.contains(&p));
            let s = super::hessian::variable_spread(d, p) * if value { alpha } else { 1.0 };
            if (0.01..=100.0).contains(&s) {
                1.0
            } else {
                1.0 / s
            }
        };
        for t in &self.terms {
            let b = beta[t.location];
            let fixed = spec.parameters[t.location].fixed.is_some();
            let unit = unit(t.location);
            if by_simpler && t.distribution.is_log() && !fixed {
                // The logit estimated the coefficient itself: its logarithm
                // (of minus it for a negative lognormal) is the location.
                let sign = if t.distribution == Distribution::Lognormal {
                    1.0
                } else {
                    -1.0
                };
                beta[t.location] = (sign * b).max(1e-3 * unit).ln();
            }
            let p = &spec.parameters[t.spread];
            if p.fixed.is_none() && p.start == 0.0 && beta[t.spread] == 0.0 {
                // A spread of exactly 0 is a stationary point: start away from it.
                beta[t.spread] = if t.distribution.is_log() {
                    0.5
                } else {
                    (0.5 * b.abs()).max(0.1 * unit)
                };
            }
        }
    }

    fn mixture(&self, d: &Design) -> Option<Arc<dyn Points>> {
        let panel = self.panel(d);
        let count = self.limit.unwrap_or(panel.draws).min(panel.draws);
        Some(Arc::new(MixedPoints {
            panel,
            terms: self.terms.clone(),
            space: self.space.clone(),
            count,
        }))
    }

    fn for_bands(&self) -> Option<FamilyRef> {
        (self.simulation.draws > BAND_DRAWS).then(|| {
            Arc::new(Mixed {
                terms: self.terms.clone(),
                simulation: self.simulation,
                space: self.space.clone(),
                binary: self.binary,
                given: self.given.clone(),
                panels: self.panels.clone(),
                limit: Some(BAND_DRAWS),
                first_unit: self.first_unit,
            }) as FamilyRef
        })
    }

    fn at_unit(&self, first: usize) -> Option<FamilyRef> {
        Some(Arc::new(Mixed {
            terms: self.terms.clone(),
            simulation: self.simulation,
            space: self.space.clone(),
            binary: self.binary,
            given: self.given.clone(),
            panels: Arc::new(PerData::default()),
            limit: self.limit,
            first_unit: first,
        }))
    }

    fn random_coefficients(&self) -> Vec<RandomCoefficient> {
        self.terms.clone()
    }

    fn conditional(&self, d: &Design, beta: &[f64]) -> Option<Conditional> {
        Some(conditional(self, d, beta))
    }

    fn check_observations(
        &self,
        spec: &Spec,
        obs: &crate::data::Observations,
    ) -> Result<(), String> {
        let units = match &obs.group {
            Some(_) => obs.groups,
            None => obs.situations,
        };
        self.simulation.check_size(units, self.terms.len())?;
        if let (Some(g), Some(col)) = (&obs.group, &spec.data.weight) {
            let mut first = vec![f64::NAN; obs.groups];
            for (i, &u) in g.iter().enumerate() {
                let w = obs.weight[i];
                let f = &mut first[u as usize];
                if f.is_nan() {
                    *f = w;
                } else if *f != w {
                    return Err(format!(
                        "[data].weight `{col}`: the weight changes within decision maker (row {} of the data); a panel mixed logit weighs each decision maker once, so the weight must be the same in all of a person's situations",
                        obs.first_row.get(i).copied().unwrap_or(i + 1)
                    ));
                }
            }
        }
        Ok(())
    }

    fn warnings(&self, spec: &Spec, _d: &Design, _beta: &[f64]) -> Vec<super::FamilyWarning> {
        let r = self.simulation.draws;
        if r >= FEW_DRAWS {
            return Vec::new();
        }
        vec![super::FamilyWarning {
            code: "few_draws",
            parameters: self
                .terms
                .iter()
                .map(|t| spec.parameters[t.spread].name.clone())
                .collect(),
            message: format!(
                "only {r} simulation draw{} per decision maker: the spreads and everything simulated carry large simulation error and bias; use a few hundred or more ([simulation].draws) and check with `fit --draws-check`",
                if r == 1 { "" } else { "s" }
            ),
        }]
    }

    fn structure(&self, spec: &Spec) -> Vec<String> {
        let terms: Vec<String> = self
            .terms
            .iter()
            .map(|t| {
                format!(
                    "{} {}",
                    spec.parameters[t.location].name,
                    t.distribution.name()
                )
            })
            .collect();
        let s = &self.simulation;
        let who = match &spec.data.group {
            Some(g) => format!(
                "panel: one set of draws per decision maker (`{g}`), shared by all of their situations"
            ),
            None => "cross-section: each situation is its own decision maker (no [data].group)"
                .to_string(),
        };
        let mut lines = vec![format!("random coefficients: {}", terms.join(", "))];
        let group = super::correlated_group(&self.terms);
        if !group.is_empty() {
            let names: Vec<&str> = group
                .iter()
                .map(|&i| spec.parameters[self.terms[i].location].name.as_str())
                .collect();
            lines.push(format!(
                "correlated: {} (jointly normal; Cholesky factor in this order)",
                names.join(", ")
            ));
        }
        if let Some(w) = &self.space {
            lines.push(crate::model::logit::willingness::structure_line(spec, w));
        }
        lines.extend([
            format!(
                "simulation: {} {} draws per decision maker, seed {}",
                s.draws,
                s.sequence.name(),
                s.seed
            ),
            who,
        ]);
        lines
    }
}
