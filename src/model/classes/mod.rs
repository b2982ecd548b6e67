//! Latent class logit (a finite mixture of logits with a membership model;
//! Greene & Hensher 2003, Train 2009 ch. 14): decision makers belong to one
//! of K classes, each with its own copy of the utility's parameters; the
//! class shares follow a logit over classes on the `membership` columns
//! (class 1 the reference). With `[data].group` a decision maker belongs to
//! one class for all of their situations (a panel); without it each
//! situation is its own decision maker. `rules` reads the keys, `layout`
//! places each class's parameters, `pass` has the log-likelihood and its
//! analytic gradient, `em` the random starts, `order` the numbering of the
//! classes by share, `points` the probabilities as a share-weighted mixture
//! of the classes' logits. With one class the model is the logit.

mod em;
mod layout;
mod order;
mod pass;
mod points;
pub mod rules;

use std::sync::Arc;

use super::draws::PerData;
use super::logit::Logit;
use super::mixed::Panel;
use super::{Abilities, Derived, Eval, Family, FamilyWarning, Points, Posteriors, Starts};
use crate::design::Design;
use crate::spec::Spec;

pub use layout::Layout;
use pass::{Pass, Want};
pub use rules::{Rules, Settings};

/// The latent class logit built for one spec.
#[derive(Debug)]
pub struct LatentClass {
    pub settings: Settings,
    pub lay: Layout,
    logit: Logit,
    /// Decision makers per data set, found again by its observations.
    units: Arc<PerData<Panel>>,
    /// Passes the starts have run (`em`).
    em_passes: std::sync::atomic::AtomicUsize,
    /// `[parameters]` fixes a class's parameter: the classes keep the
    /// numbering the search found, so that a fixed value keeps its name.
    pinned: bool,
}

impl LatentClass {
    pub fn new(spec: &Spec) -> crate::error::Result<LatentClass> {
        let settings = Settings::from_keys(&spec.family_keys)
            .map_err(|m| crate::error::Error::spec(&spec.path, m))?;
        let lay = Layout::new(spec, settings.classes, &settings.membership);
        let pinned = (1..lay.classes)
            .flat_map(|c| lay.index[c].iter().zip(&lay.slots).filter(|(p, s)| p != s))
            .map(|(p, _)| *p)
            .chain(
                lay.index[0]
                    .iter()
                    .copied()
                    .filter(|&p| spec.parameters[p].class == 1),
            )
            .chain(lay.member.iter().flatten().copied())
            .any(|p| spec.parameters[p].fixed.is_some());
        Ok(LatentClass {
            settings,
            lay,
            logit: Logit {
                binary: spec.alternatives.len() == 2,
            },
            units: Arc::new(PerData::default()),
            em_passes: Default::default(),
            pinned,
        })
    }

    /// The decision makers of `d` (built once per data set).
    pub fn units(&self, d: &Design) -> Arc<Panel> {
        self.units
            .get_or_build(&d.obs, || Panel::new(&d.obs, &[], 0, Vec::new()))
    }

    /// One class: the model is the logit, and every pass is the logit's.
    fn single(&self) -> bool {
        self.lay.classes == 1
    }

    fn pass(&self, d: &Design, beta: &[f64], want: Want) -> pass::Totals {
        let units = self.units(d);
        Pass {
            lay: &self.lay,
            d,
            units: &units,
            beta,
            given: None,
            want,
        }
        .run()
    }
}

impl Family for LatentClass {
    fn name(&self) -> &'static str {
        "latent-class"
    }

    fn abilities(&self) -> Abilities {
        if self.single() {
            return Abilities {
                odds_ratios: false,
                ..self.logit.abilities()
            };
        }
        Abilities {
            analytic_hessian: true,
            latent_classes: true,
            new_alternatives: true,
            per_decision_maker: true,
            ..Abilities::default()
        }
    }

    fn evaluate(&self, d: &Design, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
        if self.single() {
            return self.logit.evaluate(d, beta, want_grad, want_hess);
        }
        let t = self.pass(
            d,
            beta,
            Want {
                grad: want_grad || want_hess,
                full: want_hess,
                ..Want::default()
            },
        );
        Eval {
            ll: t.ll,
            grad: t.grad,
            hess: want_hess.then_some(t.full),
        }
    }

    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
        if self.single() {
            return self.logit.for_each_score(d, beta, f);
        }
        let units = self.units(d);
        let t = self.pass(
            d,
            beta,
            Want {
                scores: true,
                ..Want::default()
            },
        );
        for (n, score) in t.scores.chunks(d.params).enumerate() {
            if let Some(&i) = units.situations_of(n).first() {
                f(i as usize, score);
            }
        }
    }

    fn probabilities(&self, beta: &[f64], v: &[f64], p: &mut [f64]) {
        self.logit.probabilities(beta, v, p)
    }

    fn probabilities_after(
        &self,
        beta: &[f64],
        v0: &[f64],
        p0: &[f64],
        v1: &[f64],
        p1: &mut [f64],
    ) {
        self.logit.probabilities_after(beta, v0, p0, v1, p1)
    }

    fn probabilities_of_points(
        &self,
        v: &mut [f64],
        points: usize,
        scratch: &mut Vec<f64>,
    ) -> bool {
        self.logit.probabilities_of_points(v, points, scratch)
    }

    fn dprob(&self, beta: &[f64], v: &[f64], p: &[f64], dp: &mut [f64]) {
        self.logit.dprob(beta, v, p, dp)
    }

    fn d2prob(&self, v: &[f64], p: &[f64], dp: &[f64], d2p: &mut [f64]) -> bool {
        // At one class's point: the logit's (the analyses take the classes'
        // coefficients and shares through `Points::derivatives`).
        self.logit.d2prob(v, p, dp, d2p)
    }

    fn caution(&self, spec: &Spec) -> Option<String> {
        if self.single() {
            return self.logit.caution(spec);
        }
        Some(format!(
            "The latent class logit assumes a fixed number of segments ({}), each a logit (so independence from irrelevant alternatives holds within a class, not across the mixture); the classes and their shares are what fits these data best, not segments known to exist: check that the fit by number of classes supports this number and that several starts reached the best log-likelihood. Forecasts use the membership model's shares.",
            self.lay.classes
        ))
    }

    fn search_starts(
        &self,
        _spec: &Spec,
        d: &Design,
        start: &[f64],
        free: &[usize],
    ) -> Option<(Vec<f64>, Starts)> {
        (!self.single()).then(|| em::run(self, d, start, free))
    }

    fn canonical(&self, d: &Design, beta: &mut [f64]) -> bool {
        !self.single() && !self.pinned && order::canonical(self, d, beta)
    }

    fn adjust_scales(&self, d: &Design, scales: &mut [f64]) {
        let lay = &self.lay;
        for c in 1..lay.classes {
            for (s, &p) in lay.index[c].iter().enumerate() {
                scales[p] = scales[lay.slots[s]];
            }
        }
        let units = self.units(d);
        for m in &lay.member {
            for (x, &col) in m[1..].iter().zip(&lay.columns) {
                scales[*x] = column_spread(d, &units, col);
            }
        }
    }

    fn mixture(&self, d: &Design) -> Option<Arc<dyn Points>> {
        (!self.single()).then(|| {
            Arc::new(points::ClassPoints {
                lay: self.lay.clone(),
                obs: d.obs.clone(),
            }) as Arc<dyn Points>
        })
    }

    fn posterior_classes(&self, d: &Design, beta: &[f64]) -> Option<Posteriors> {
        let units = self.units(d);
        let c = self.lay.classes;
        let probabilities = if self.single() {
            vec![1.0; units.units]
        } else {
            self.pass(
                d,
                beta,
                Want {
                    posteriors: true,
                    ..Want::default()
                },
            )
            .posteriors
        };
        Some(Posteriors {
            classes: c,
            first: (0..units.units)
                .map(|n| units.situations_of(n).first().map_or(0, |&i| i as usize))
                .collect(),
            probabilities,
        })
    }

    fn prior_classes(&self, d: &Design, beta: &[f64]) -> Option<Posteriors> {
        let c = self.lay.classes;
        let n = d.situations();
        let mut probabilities = vec![0.0; n * c];
        for (i, out) in probabilities.chunks_mut(c).enumerate() {
            self.lay.shares(&d.obs, beta, i, out);
        }
        Some(Posteriors {
            classes: c,
            first: (0..n).collect(),
            probabilities,
        })
    }

    fn derived(&self, _spec: &Spec, d: &Design, beta: &[f64]) -> Vec<Derived> {
        if self.single() {
            return Vec::new();
        }
        order::sample_shares(self, d, beta)
            .into_iter()
            .enumerate()
            .map(|(c, value)| Derived {
                group: SHARES.into(),
                name: format!("class{}", c + 1),
                value,
            })
            .collect()
    }

    fn check_observations(
        &self,
        spec: &Spec,
        obs: &crate::data::Observations,
    ) -> Result<(), String> {
        checks::observations(self, spec, obs)
    }

    fn warnings(&self, spec: &Spec, d: &Design, beta: &[f64]) -> Vec<FamilyWarning> {
        checks::warnings(self, spec, d, beta)
    }

    fn structure(&self, spec: &Spec) -> Vec<String> {
        checks::structure(self, spec)
    }
}

/// The group of the class shares among the derived figures.
pub const SHARES: &str = "class shares";

mod checks;

/// The standard deviation of a membership column over the decision makers
/// (1 when it does not vary).
fn column_spread(d: &Design, units: &Panel, col: usize) -> f64 {
    let x: Vec<f64> = (0..units.units)
        .filter_map(|n| units.situations_of(n).first())
        .map(|&i| d.obs.characteristics[col][i as usize])
        .collect();
    let n = x.len().max(1) as f64;
    let mean = x.iter().sum::<f64>() / n;
    let var = x.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / n;
    if var > 0.0 {
        var.sqrt()
    } else {
        1.0
    }
}
