//! Model families: the room between the design and estimation. Each family is
//! one module implementing `Family`: its log-likelihood with gradient and
//! per-situation scores (the Hessian where it has an analytic one), the choice
//! probabilities of one situation from its utilities and their derivatives,
//! what it can do (`Abilities`) and its line for the report's cautions. Its
//! spec keys are checked through `spec::FamilyRules`. `registry` maps the
//! spec's `[model].family` name to the family; `enumerate` is the one place
//! where utilities become probabilities for every situation (base and what-if).
//!
//! Code outside this room asks a family what it can do and never matches on
//! which family it is.

pub mod classes;
pub mod distribution;
pub mod draws;
pub mod enumerate;
pub mod ghk;
pub mod hessian;
pub mod logit;
pub mod mixed;
pub mod mnp;
pub mod nested;
pub mod normal;
pub mod ordered;
pub mod probit;
pub mod registry;
pub mod space;
mod values;

pub use values::{
    correlated_group, covariance, Conditional, Derived, Posteriors, RandomCoefficient, Starts,
};

use std::sync::Arc;

use crate::data::Observations;
use crate::design::Design;
use crate::spec::Spec;

pub use classes::SHARES;
pub use enumerate::{Baseline, Situation, WhatIf};
pub use registry::{for_spec, parse_spec, read_spec, Registry};

/// Refuses a spec and data that the fit would refuse before its search: no
/// situations, or the family's own checks of the observations. Run when a
/// model is opened (`workspace::open`, hence `check`) and by the fit, with
/// the same messages.
pub fn admit(spec: &Spec, obs: &Observations) -> crate::error::Result<()> {
    admit_family(spec, &*for_spec(spec)?, obs)
}

/// `admit` with the family already built.
pub fn admit_family(
    spec: &Spec,
    family: &dyn Family,
    obs: &Observations,
) -> crate::error::Result<()> {
    if obs.situations == 0 {
        return Err(crate::error::Error::Estimate(
            "no choice situations to fit".into(),
        ));
    }
    family
        .check_observations(spec, obs)
        .map_err(|m| crate::error::Error::spec(&spec.path, m))
}

/// What a pass returns: log-likelihood, gradient (length K) and Hessian (K x K row-major, when asked).
#[derive(Clone, Debug)]
pub struct Eval {
    pub ll: f64,
    pub grad: Vec<f64>,
    pub hess: Option<Vec<f64>>,
}

/// A warning a family raises about its fit (a scale outside the range where
/// the model is consistent with utility maximisation, ...).
#[derive(Clone, Debug, PartialEq)]
pub struct FamilyWarning {
    /// A short name for the kind of warning (`scale_above_one`, ...).
    pub code: &'static str,
    /// Parameters it concerns.
    pub parameters: Vec<String>,
    pub message: String,
}

/// An alternative a what-if adds: it behaves like spec alternative `like`
/// (its place in the model's error structure), or joins the named group.
#[derive(Clone, Debug, PartialEq)]
pub struct Added {
    pub name: String,
    pub like: usize,
    /// A nest (or other group) named by the scenario, instead of `like`'s.
    pub group: Option<String>,
}

/// What a family can do; callers ask instead of matching on the family.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Abilities {
    /// `evaluate` returns an analytic Hessian (otherwise it is differenced from the gradient).
    pub analytic_hessian: bool,
    /// With `analytic_hessian`: the Hessian costs many gradient passes, so
    /// the search starts quasi-Newton from the scores' outer product and
    /// evaluates the Hessian only in Newton's last steps near the optimum.
    pub costly_hessian: bool,
    /// Scenarios may add alternatives.
    pub new_alternatives: bool,
    /// Independence from irrelevant alternatives holds (the Hausman-McFadden test applies).
    pub iia: bool,
    /// Exactly two alternatives.
    pub binary_only: bool,
    /// Probabilities are simulated with draws fixed through a fit.
    pub simulation_draws: bool,
    /// Scores are per decision maker rather than per situation.
    pub per_decision_maker: bool,
    /// Coefficients read as log odds ratios (binary logit).
    pub odds_ratios: bool,
    /// Ordered categories on one latent index: no base, and categories are
    /// neither withdrawn nor added (no diversion between them).
    pub ordered: bool,
    /// The coefficient points of `mixture` are latent classes weighted by
    /// membership shares (figures are then also reported by class).
    pub latent_classes: bool,
}

/// A model family, built for one spec by `registry::for_spec`.
pub trait Family: Send + Sync + std::fmt::Debug {
    /// The name the spec uses in `[model].family`.
    fn name(&self) -> &'static str;

    fn abilities(&self) -> Abilities;

    /// One pass: log-likelihood and, if asked, gradient and Hessian at `beta`
    /// (all K parameters). A family without an analytic Hessian ignores `want_hess`.
    fn evaluate(&self, d: &Design, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval;

    /// Each situation's weighted score (gradient of its log-likelihood term),
    /// passed to `f(i, score)` in situation order.
    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64]));

    /// Choice probabilities of one situation from its utilities (-inf = unavailable).
    fn probabilities(&self, beta: &[f64], v: &[f64], p: &mut [f64]);

    /// What-if probabilities `p1` at utilities `v1`, given the base utilities `v0`
    /// and probabilities `p0` of the same situation (same alternatives). A family
    /// may take a shortcut here; the default recomputes.
    fn probabilities_after(
        &self,
        beta: &[f64],
        v0: &[f64],
        p0: &[f64],
        v1: &[f64],
        p1: &mut [f64],
    ) {
        let _ = (v0, p0);
        self.probabilities(beta, v1, p1)
    }

    /// Choice probabilities of one situation at many coefficient points at
    /// once, for a family whose one-point probabilities depend on the
    /// coefficients only through the utilities: `v` holds the utilities in one
    /// row per alternative over the points (`[alternative * points + point]`,
    /// -inf = unavailable) and is replaced by the probabilities (zeros for a
    /// point with nothing available); `scratch` is the family's to grow.
    /// `false` (the default): the family has no such form (asked with empty
    /// rows to learn whether it has), and callers take one point at a time.
    fn probabilities_of_points(
        &self,
        v: &mut [f64],
        points: usize,
        scratch: &mut Vec<f64>,
    ) -> bool {
        let _ = (v, points, scratch);
        false
    }

    /// dP_j/dV_k of one situation into `dp` (J x J row-major, row = affected j).
    fn dprob(&self, beta: &[f64], v: &[f64], p: &[f64], dp: &mut [f64]);

    /// dP_j/dV_k of one situation for the alternatives k in `columns` only,
    /// into `dp` (J x columns, row = affected j): what an analysis of a few of
    /// many alternatives reads. By default taken from `dprob` into `full`
    /// (J x J scratch); a family may give them directly.
    fn dprob_columns(
        &self,
        beta: &[f64],
        (v, p): (&[f64], &[f64]),
        columns: &[usize],
        full: &mut [f64],
        dp: &mut [f64],
    ) {
        self.dprob(beta, v, p, full);
        let (n, c) = (p.len(), columns.len());
        for j in 0..n {
            for (q, &k) in columns.iter().enumerate() {
                dp[j * c + q] = full[j * n + k];
            }
        }
    }

    /// Second derivatives d²P_j/(dV_k dV_m) of one situation into `d2p`
    /// (J x J x J row-major, `[(j * J + k) * J + m]`; zero where an alternative
    /// is unavailable), for a family whose probabilities depend on the
    /// parameters only through the utilities (no parameters of its own; with
    /// coefficient points, at each point, whose derivatives by the parameters
    /// `Points::derivatives` gives). The analyses then differentiate aggregate
    /// figures by the parameters analytically, in one pass. `false` (the default): the
    /// family has none, and they are differenced numerically.
    fn d2prob(&self, v: &[f64], p: &[f64], dp: &[f64], d2p: &mut [f64]) -> bool {
        let _ = (v, p, dp, d2p);
        false
    }

    /// The second derivatives contracted with the utilities' derivatives by
    /// `kf` parameters: `g[(k * kf + q) * J + j]` = Σ_m d²P_j/(dV_k dV_m) ·
    /// `x[q * J + m]` (x = dV/dβ), given `e[q * J + j]` = Σ_m dP_j/dV_m ·
    /// `x[q * J + m]`. The default contracts `d2prob` (written into `d2p`,
    /// scratch of J³); a family may have a shorter form. `false` when the
    /// family has no second derivatives.
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
        let _ = e;
        if !self.d2prob(v, p, dp, d2p) {
            return false;
        }
        let j = p.len();
        for k in 0..j {
            for q in 0..kf {
                let xq = &x[q * j..(q + 1) * j];
                for (jj, out) in g[(k * kf + q) * j..(k * kf + q + 1) * j]
                    .iter_mut()
                    .enumerate()
                {
                    let t = &d2p[(jj * j + k) * j..(jj * j + k + 1) * j];
                    *out = t.iter().zip(xq).map(|(a, b)| a * b).sum();
                }
            }
        }
        true
    }

    /// The family's sentence for the report's cautions, if it has one.
    fn caution(&self, spec: &Spec) -> Option<String>;

    /// Parameters held at their starting values in a first search, then freed
    /// (the nested logit starts from the logit: its scales held at 1).
    fn held_in_first_search(&self) -> Vec<usize> {
        Vec::new()
    }

    /// The family it reduces to when its own parameters are at their null
    /// values (the nested logit is the logit with every scale at 1).
    fn reduces_to(&self) -> Option<&'static str> {
        self.simpler().map(|f| f.name())
    }

    /// That simpler family, built to evaluate this one's design exactly when
    /// its own parameters sit at their null values (faster passes, an analytic
    /// Hessian): used for the first search and the constants-only model.
    fn simpler(&self) -> Option<FamilyRef> {
        None
    }

    /// The family over the spec's alternatives followed by `added` ones (a
    /// scenario's new alternatives). `Ok(None)`: this same family handles any
    /// number of alternatives. An error says why the addition is not possible.
    fn with_added(&self, spec: &Spec, added: &[Added]) -> Result<Option<FamilyRef>, String> {
        let _ = spec;
        match added.iter().find(|a| a.group.is_some()) {
            Some(a) => Err(format!(
                "[[new_alternative]] {}: `nest` applies to the nested family, not to {}",
                a.name,
                self.name()
            )),
            None => Ok(None),
        }
    }

    /// Checks the observations the family is fitted to (an ordered model
    /// needs every category observed; a panel's weight is constant within a
    /// decision maker); the message names what is wrong. It depends on the
    /// spec and the data alone, so that opening a model (`check`) refuses
    /// what the fit would (`admit`).
    fn check_observations(&self, spec: &Spec, obs: &Observations) -> Result<(), String> {
        let _ = (spec, obs);
        Ok(())
    }

    /// `check_observations` on a design's observations.
    fn check_data(&self, spec: &Spec, d: &Design) -> Result<(), String> {
        self.check_observations(spec, &d.obs)
    }

    /// Checks a population the family forecasts over (whole or a chunk of
    /// it): what a forecast needs of the data, which can be less than what a
    /// fit needs (an ordered model forecasts over a file in which a rating is
    /// never observed). By default, what the fit needs.
    fn check_forecast_data(&self, spec: &Spec, d: &Design) -> Result<(), String> {
        self.check_data(spec, d)
    }

    /// Warnings about the fit at `beta` (its own parameters' values, how the data use them).
    fn warnings(&self, spec: &Spec, d: &Design, beta: &[f64]) -> Vec<FamilyWarning> {
        let _ = (spec, d, beta);
        Vec::new()
    }

    /// The coefficient points of every situation of `d` when probabilities
    /// average over coefficient draws; `None` (the default): one point, `beta`.
    fn mixture(&self, d: &Design) -> Option<Arc<dyn Points>> {
        let _ = d;
        None
    }

    /// A cheaper version of the family for the many passes of uncertainty
    /// bands (fewer simulation draws per decision maker); `None`: itself.
    fn for_bands(&self) -> Option<FamilyRef> {
        None
    }

    /// The same family over a part of a larger data set (a population read
    /// in chunks) whose first decision maker is the `first`-th (from 0) of
    /// the whole: a family that gives each decision maker their own simulation
    /// draws numbers them from there, so that the parts together get the
    /// draws of the whole. `None` (the default): nothing depends on the position.
    fn at_unit(&self, first: usize) -> Option<FamilyRef> {
        let _ = first;
        None
    }

    /// The coefficients that vary across decision makers.
    fn random_coefficients(&self) -> Vec<RandomCoefficient> {
        Vec::new()
    }

    /// A cheaper family whose estimates of the shared parameters, turned by
    /// `after_first_search`, start this one's search when nothing `simpler`
    /// evaluates it exactly (the multinomial probit starts from the logit,
    /// rescaled); this family's own parameters are held meanwhile.
    fn start_from(&self) -> Option<FamilyRef> {
        None
    }

    /// Turns the estimates of the first search into starting values of the
    /// full search (`by_simpler`: the simpler family ran it, on its own scale;
    /// `d` the data, whose units set the size of a start).
    fn after_first_search(&self, spec: &Spec, d: &Design, beta: &mut [f64], by_simpler: bool) {
        let _ = (spec, d, beta, by_simpler);
    }

    /// Parameters held in a middle search, after the first and before the
    /// full one (the correlated mixed logit fits its independent model
    /// first: its correlation terms held at 0); `after_middle_search` then
    /// moves them off their null values.
    fn held_in_middle_search(&self) -> Vec<usize> {
        Vec::new()
    }

    /// Turns the middle search's estimates into the full search's start.
    fn after_middle_search(&self, beta: &mut [f64]) {
        let _ = beta;
    }

    /// The model is written in willingness-to-pay space: which parameter is
    /// the price scale and which are values (`None`: preference space).
    fn willingness(&self) -> Option<&space::Willingness> {
        None
    }

    /// Each decision maker's random coefficients conditional on their choices.
    fn conditional(&self, d: &Design, beta: &[f64]) -> Option<Conditional> {
        let _ = (d, beta);
        None
    }

    /// Figures the family derives from its parameters, reported with
    /// delta-method errors (the multinomial probit's implied error covariance
    /// and correlations); the same list, in the same order, at any `beta`.
    fn derived(&self, spec: &Spec, d: &Design, beta: &[f64]) -> Vec<Derived> {
        let _ = (spec, d, beta);
        Vec::new()
    }

    /// A search the family starts itself from several points (a latent
    /// class model's EM runs from random starts): the best point found,
    /// from which maximum likelihood continues, and how the starts fared.
    /// `None` (the default): the search starts from `start`.
    fn search_starts(
        &self,
        spec: &Spec,
        d: &Design,
        start: &[f64],
        free: &[usize],
    ) -> Option<(Vec<f64>, Starts)> {
        let _ = (spec, d, start, free);
        None
    }

    /// Puts estimates identified only up to a relabelling into the family's
    /// one order (latent classes by their share, largest first), in place;
    /// `true` when they moved (the likelihood is the same).
    fn canonical(&self, d: &Design, beta: &mut [f64]) -> bool {
        let _ = (d, beta);
        false
    }

    /// Adjusts `scales` (each parameter's size in the data's units, from
    /// `hessian::scales`) for parameters the design's features do not name:
    /// another latent class's copy takes its first class's scale.
    fn adjust_scales(&self, d: &Design, scales: &mut [f64]) {
        let _ = (d, scales);
    }

    /// Latent classes: each decision maker's probabilities of belonging to
    /// each class given their choices (`None`: the family has no classes).
    fn posterior_classes(&self, d: &Design, beta: &[f64]) -> Option<Posteriors> {
        let _ = (d, beta);
        None
    }

    /// Latent classes: each situation's prior class shares (the membership
    /// model's), `[i * classes + c]` (`None`: the family has no classes).
    fn prior_classes(&self, d: &Design, beta: &[f64]) -> Option<Posteriors> {
        let _ = (d, beta);
        None
    }

    /// Lines describing the model's structure for reports and the workbench
    /// (the nests and their alternatives).
    fn structure(&self, spec: &Spec) -> Vec<String> {
        let _ = spec;
        Vec::new()
    }
}

/// The coefficient points a situation's probabilities average over, for a
/// family whose coefficients vary across decision makers: each point is a full
/// parameter vector with drawn coefficients in place of their locations, and
/// the family's `probabilities`/`dprob` give one point's figures.
pub trait Points: Send + Sync {
    /// Points per situation (the draws of its decision maker).
    fn count(&self) -> usize;
    /// The `count()` coefficient vectors of situation `i` into `out` (rows of K).
    fn fill(&self, beta: &[f64], i: usize, out: &mut [f64]);
    /// Whether situation `i` has the same points and weights as situation
    /// `previous` at any parameters (two situations of one decision maker),
    /// so that a pass may keep them rather than fill them again. `false`
    /// (the default): each situation's are filled.
    fn same_as(&self, i: usize, previous: usize) -> bool {
        let _ = (i, previous);
        false
    }
    /// Each point's weight in situation `i`'s average (summing to 1): equal
    /// for simulation draws (the default), the class shares of a latent
    /// class model.
    fn weights(&self, beta: &[f64], i: usize, out: &mut [f64]) {
        let _ = (beta, i);
        let r = out.len().max(1) as f64;
        out.iter_mut().for_each(|w| *w = 1.0 / r);
    }
    /// The derivatives of situation `i`'s points' coefficients (and of
    /// their weights, when those depend on the parameters) by the
    /// parameters: `false` (the default) when not available (the analyses
    /// then difference). A coefficient that no pair names is its parameter itself.
    fn derivatives(&self, beta: &[f64], i: usize, out: &mut CoefficientDerivatives) -> bool {
        let _ = (beta, i, out);
        false
    }
}

/// The derivatives of a situation's coefficient points by the parameters:
/// d c_r[k] / d beta_p = `values[r * pairs.len() + e]` for each pair
/// `pairs[e]` = (k, p); the same pairs for every situation (a pair may repeat:
/// its values add). Points whose weights depend on the parameters give them
/// too: d w_r / d beta_p = `weight_values[r * weight_params.len() + e]` for p
/// = `weight_params[e]` (empty: constant weights). `Points::derivatives`
/// clears and refills what it gives.
#[derive(Clone, Debug, Default)]
pub struct CoefficientDerivatives {
    pub pairs: Vec<(usize, usize)>,
    pub values: Vec<f64>,
    pub weight_params: Vec<usize>,
    pub weight_values: Vec<f64>,
}

/// A family shared by a fit, its analyses and the workbench.
pub type FamilyRef = Arc<dyn Family>;
