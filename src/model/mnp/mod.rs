//! Multinomial probit (Train, Discrete Choice Methods with Simulation, 2nd
//! ed., ch. 5; Hajivassiliou, McFadden and Ruud 1996): utilities with
//! jointly normal errors whose covariance the spec chooses (`[errors]`), so
//! that alternatives may share unobserved traits without IIA or a nesting
//! tree. Choice probabilities are rectangle probabilities of the utility
//! differences, simulated by GHK on uniforms fixed through a fit: each
//! situation its own draws in the likelihood, one common set for the
//! analyses (probabilities of every alternative, scaled to sum to one).
//! `rules` reads the keys, `covariance` builds the differenced covariance and
//! its Cholesky derivatives, `kernel` is the simulator, `pass` the
//! likelihood. With two alternatives the spec's probit is the exact binary
//! probit (`model::probit`); this family is built for three or more.

pub mod covariance;
pub mod kernel;
pub(crate) mod pass;
mod report;
pub mod rules;
pub mod vector;

use std::cell::RefCell;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

use super::draws::{PerData, Simulation, BAND_DRAWS};
use super::logit::{Compensated, Logit};
use super::{Abilities, Added, Derived, Eval, Family, FamilyRef, FamilyWarning};
use crate::design::Design;
use crate::spec::Spec;

pub use covariance::Structure;
pub use rules::{Kind, Rules, MAX_ALTERNATIVES};

use covariance::{factor, Pattern};
use pass::Prepared;

/// Below this many draws per situation the fit carries a warning.
pub const FEW_DRAWS: usize = 100;

/// The logit's difference of two errors has standard deviation pi / sqrt(3);
/// the probit's is 1 here: logit estimates divided by this start the search.
const LOGIT_SCALE: f64 = 1.813_799_364_234_217_8;

/// The multinomial probit built for one spec.
#[derive(Debug)]
pub struct Mnp {
    pub base: usize,
    pub j: usize,
    /// Each alternative's place among the differences against the base.
    pub pos: Vec<Option<usize>>,
    pub structure: Structure,
    pub kind: Kind,
    pub simulation: Simulation,
    /// Draws per situation in the analyses (fewer for the passes of bands).
    analysis_draws: usize,
    /// The analyses' common uniforms, `[dimension][draw]`.
    common: Arc<Vec<f64>>,
    prepared: Arc<PerData<Prepared>>,
    /// Set when a search met a covariance that was not positive definite.
    singular: Arc<AtomicBool>,
    /// Uniforms given from outside (`[situation][dimension][draw]`) for reference checks.
    given: Option<Arc<Vec<f64>>>,
}

thread_local! {
    static SCRATCH: RefCell<Scratch> = RefCell::new(Scratch::default());
}

/// Per-thread scratch of the analyses' probabilities.
#[derive(Default)]
struct Scratch {
    work: kernel::Work,
    b: Vec<f64>,
    raw: Vec<f64>,
    /// d P_raw_c / d V_k, J x J.
    draw: Vec<f64>,
}

fn positions(j: usize, base: usize) -> Vec<Option<usize>> {
    let mut next = 0;
    (0..j)
        .map(|a| {
            (a != base).then(|| {
                next += 1;
                next - 1
            })
        })
        .collect()
}

impl Mnp {
    /// Builds the family for a spec with three or more alternatives.
    pub fn new(spec: &Spec) -> crate::error::Result<Mnp> {
        let err = |m: String| crate::error::Error::spec(&spec.path, m);
        let simulation = Simulation::from_keys(&spec.family_keys).map_err(err)?;
        let kind = rules::structure(&spec.family_keys).map_err(err)?;
        let j = spec.alternatives.len();
        let structure = match kind {
            Kind::Independent => Structure::Independent,
            Kind::Full => {
                let names =
                    rules::non_base(spec.alternatives.iter().map(|a| a.name.as_str()), spec.base);
                let first = format!("chol_{}_{}", names[1], names[0]);
                let first = spec.parameter_index(&first).ok_or_else(|| {
                    err(format!(
                        "the multinomial probit's parameter `{first}` is missing"
                    ))
                })?;
                Structure::Full { first }
            }
        };
        Ok(Mnp::build(spec.base, j, structure, kind, simulation))
    }

    /// The family with independent errors over `j` alternatives (two give the
    /// exact binary probit through this path: a check of the simulator).
    pub fn independent(base: usize, j: usize, sim: Simulation) -> Mnp {
        Mnp::build(base, j, Structure::Independent, Kind::Independent, sim)
    }

    fn build(base: usize, j: usize, structure: Structure, kind: Kind, sim: Simulation) -> Mnp {
        let dims = j.saturating_sub(2);
        Mnp {
            base,
            j,
            pos: positions(j, base),
            structure,
            kind,
            simulation: sim,
            analysis_draws: sim.draws,
            common: Arc::new(sim.uniforms(1, dims)),
            prepared: Arc::new(PerData::default()),
            singular: Arc::new(AtomicBool::new(false)),
            given: None,
        }
    }

    /// The same family with the likelihood's uniforms given from outside,
    /// `[situation][dimension][draw]` with `draws` per situation.
    pub fn with_uniforms(mut self, uniforms: Vec<f64>, draws: usize) -> Mnp {
        self.simulation.draws = draws;
        self.given = Some(Arc::new(uniforms));
        self
    }

    /// Dimensions of the draws: J - 2 (the first difference needs none).
    fn dims(&self) -> usize {
        self.j.saturating_sub(2)
    }

    /// The patterns and draws of `d` (built once per data set).
    pub(crate) fn prepared(&self, d: &Design) -> Arc<Prepared> {
        self.prepared.get_or_build(&d.obs, || {
            let (n, dims, r) = (d.situations(), self.dims(), self.simulation.draws);
            let uniforms = match &self.given {
                Some(u) if u.len() == n * dims * r => u.to_vec(),
                _ => self.simulation.uniforms(n, dims),
            };
            Prepared::new(&d.obs, uniforms, dims, r)
        })
    }

    /// Raw simulated probabilities of every available alternative of one
    /// situation on the common draws (and, with `deriv`, d P_c / d V_k into
    /// `s.draw`); returns false when the covariance is not positive definite.
    fn simulate_one(&self, beta: &[f64], v: &[f64], s: &mut Scratch, deriv: bool) -> bool {
        let j = v.len();
        let n = self.j - 1;
        let l = self.structure.factor(n, beta);
        s.raw.clear();
        s.raw.resize(j, 0.0);
        if deriv {
            s.draw.clear();
            s.draw.resize(j * j, 0.0);
        }
        let avail: Vec<usize> = (0..j).filter(|&a| v[a].is_finite()).collect();
        if avail.len() == 1 {
            s.raw[avail[0]] = 1.0;
            return true;
        }
        let stride = self.simulation.draws;
        for &c in &avail {
            let others: Vec<usize> = avail.iter().copied().filter(|&a| a != c).collect();
            let p = Pattern { chosen: c, others };
            let Some(f) = factor(&p, &self.pos, &l, n, None) else {
                return false;
            };
            s.b.clear();
            s.b.extend(p.others.iter().map(|&o| v[c] - v[o]));
            let lp = kernel::log_probability(
                &f.c,
                f.m,
                &s.b,
                &self.common,
                stride,
                self.analysis_draws,
                deriv,
                &mut s.work,
            );
            let pc = lp.exp();
            s.raw[c] = pc;
            if deriv {
                let total: f64 = s.work.gb.iter().sum();
                s.draw[c * j + c] = pc * total;
                for (t, &o) in p.others.iter().enumerate() {
                    s.draw[c * j + o] = -pc * s.work.gb[t];
                }
            }
        }
        true
    }

    fn with_draws(&self, analysis_draws: usize) -> Mnp {
        Mnp {
            base: self.base,
            j: self.j,
            pos: self.pos.clone(),
            structure: self.structure.clone(),
            kind: self.kind,
            simulation: self.simulation,
            analysis_draws,
            common: self.common.clone(),
            prepared: self.prepared.clone(),
            singular: self.singular.clone(),
            given: self.given.clone(),
        }
    }
}

impl Family for Mnp {
    fn name(&self) -> &'static str {
        "probit"
    }

    fn abilities(&self) -> Abilities {
        Abilities {
            simulation_draws: true,
            // `with_added` refuses them under a full covariance, saying why.
            new_alternatives: true,
            ..Abilities::default()
        }
    }

    fn evaluate(&self, d: &Design, beta: &[f64], want_grad: bool, _want_hess: bool) -> Eval {
        let k = d.params;
        let prep = self.prepared(d);
        let Some(factors) = pass::factors(self, &prep, beta, want_grad) else {
            self.singular.store(true, Ordering::Relaxed);
            return Eval {
                ll: f64::NEG_INFINITY,
                grad: vec![0.0; if want_grad { k } else { 0 }],
                hess: None,
            };
        };
        let parts = crate::design::on_ranges(pass::pieces(d.situations(), prep.draws), |r| {
            let mut acc = pass::Acc::new(k, d.alternatives(), want_grad);
            for i in r {
                pass::situation(self, d, &prep, &factors, beta, i, &mut acc);
            }
            acc
        });
        let mut ll = Compensated::default();
        let mut grad = vec![0.0; if want_grad { k } else { 0 }];
        let mut impossible = false;
        for p in parts {
            impossible |= p.impossible;
            ll.add(p.ll.value());
            grad.iter_mut().zip(&p.grad).for_each(|(a, b)| *a += b);
        }
        Eval {
            ll: if impossible {
                f64::NEG_INFINITY
            } else {
                ll.value()
            },
            grad,
            hess: None,
        }
    }

    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
        let k = d.params;
        let prep = self.prepared(d);
        let Some(factors) = pass::factors(self, &prep, beta, true) else {
            return;
        };
        let parts = crate::design::on_ranges(pass::pieces(d.situations(), prep.draws), |r| {
            let mut acc = pass::Acc::new(k, d.alternatives(), true);
            let mut out = Vec::with_capacity(r.len() * k);
            for i in r {
                acc.grad.iter_mut().for_each(|g| *g = 0.0);
                pass::situation(self, d, &prep, &factors, beta, i, &mut acc);
                out.extend_from_slice(&acc.grad);
            }
            out
        });
        let mut i = 0;
        for p in parts {
            for score in p.chunks(k) {
                f(i, score);
                i += 1;
            }
        }
    }

    fn probabilities(&self, beta: &[f64], v: &[f64], p: &mut [f64]) {
        SCRATCH.with(|s| {
            let mut s = s.borrow_mut();
            if !self.simulate_one(beta, v, &mut s, false) {
                p.iter_mut().for_each(|x| *x = f64::NAN);
                return;
            }
            let total: f64 = s.raw.iter().sum();
            for (pj, r) in p.iter_mut().zip(&s.raw) {
                *pj = r / total;
            }
        })
    }

    fn dprob(&self, beta: &[f64], v: &[f64], _p: &[f64], dp: &mut [f64]) {
        let j = v.len();
        SCRATCH.with(|s| {
            let mut s = s.borrow_mut();
            if !self.simulate_one(beta, v, &mut s, true) {
                dp.iter_mut().for_each(|x| *x = f64::NAN);
                return;
            }
            // d (P_a / S) / d V_k = (dP_a/dV_k - (P_a / S) dS/dV_k) / S.
            let total: f64 = s.raw.iter().sum();
            for k in 0..j {
                let ds: f64 = (0..j).map(|a| s.draw[a * j + k]).sum();
                for a in 0..j {
                    dp[a * j + k] = (s.draw[a * j + k] - s.raw[a] / total * ds) / total;
                }
            }
        })
    }

    fn caution(&self, _spec: &Spec) -> Option<String> {
        Some(format!(
            "Multinomial probit: the errors are assumed jointly normal with the {} covariance of the spec; only their differences are identified (the first difference against the base has variance 1), so the covariance is reported for differences. Probabilities are simulated (GHK, {} {} draws per situation), so every figure carries simulation noise.",
            self.kind.name(),
            self.simulation.draws,
            self.simulation.sequence.name()
        ))
    }

    fn held_in_first_search(&self) -> Vec<usize> {
        match self.structure {
            Structure::Independent => Vec::new(),
            Structure::Full { first } => {
                (first..first + self.structure.count(self.j - 1)).collect()
            }
        }
    }

    fn reduces_to(&self) -> Option<&'static str> {
        (self.kind == Kind::Full).then_some("the probit with independent errors")
    }

    fn start_from(&self) -> Option<FamilyRef> {
        Some(Arc::new(Logit { binary: false }))
    }

    fn after_first_search(&self, spec: &Spec, _d: &Design, beta: &mut [f64], by_simpler: bool) {
        if !by_simpler {
            return;
        }
        for (b, p) in beta.iter_mut().zip(&spec.parameters) {
            if !matches!(p.term, crate::spec::Term::Family(_)) {
                *b /= LOGIT_SCALE;
            }
        }
    }

    fn with_added(&self, spec: &Spec, added: &[Added]) -> Result<Option<FamilyRef>, String> {
        if let Some(a) = added.iter().find(|a| a.group.is_some()) {
            return Err(format!(
                "[[new_alternative]] {}: `nest` applies to the nested family, not to the probit",
                a.name
            ));
        }
        if added.is_empty() {
            return Ok(None);
        }
        if self.kind == Kind::Full {
            return Err(format!(
                "[[new_alternative]] {}: the multinomial probit with [errors].structure = \"full\" estimated the covariance of the spec's alternatives only; a new alternative's covariances with them are unknown (use structure = \"independent\", or model the alternative in the data)",
                added[0].name
            ));
        }
        let _ = spec;
        let j = self.j + added.len();
        Ok(Some(Arc::new(Mnp::build(
            self.base,
            j,
            Structure::Independent,
            Kind::Independent,
            self.simulation,
        ))))
    }

    fn check_observations(
        &self,
        _spec: &Spec,
        obs: &crate::data::Observations,
    ) -> Result<(), String> {
        self.simulation.check_size(obs.situations, self.dims())
    }

    fn warnings(&self, _spec: &Spec, _d: &Design, beta: &[f64]) -> Vec<FamilyWarning> {
        report::warnings(self, beta)
    }

    fn for_bands(&self) -> Option<FamilyRef> {
        (self.analysis_draws > BAND_DRAWS)
            .then(|| Arc::new(self.with_draws(BAND_DRAWS)) as FamilyRef)
    }

    fn derived(&self, spec: &Spec, _d: &Design, beta: &[f64]) -> Vec<Derived> {
        report::derived(self, spec, beta)
    }

    fn structure(&self, spec: &Spec) -> Vec<String> {
        report::structure(self, spec)
    }
}
