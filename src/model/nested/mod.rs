//! Nested logit in the form consistent with random utility maximisation,
//! normalised at the top (McFadden 1978; Train, Discrete Choice Methods with
//! Simulation, 2nd ed., ch. 4): for alternative i in nest k,
//! P_i = exp(V_i/l_k) S_k^(l_k - 1) / sum_m S_m^(l_m), S_k the sum of exp(V_j/l_k)
//! over the nest's available alternatives; an alternative in no nest is a
//! group of its own with scale 1, and every l = 1 is exactly the logit.
//! `rules` checks `[[nest]]`, `pass` has the log-likelihood and its analytic
//! gradient, `hessian` its analytic Hessian.

mod block;
mod hessian;
pub(crate) mod pass;
mod rules;
mod warnings;

use std::cell::RefCell;

use super::{Abilities, Eval, Family};
use crate::design::Design;
use crate::spec::Spec;

pub use rules::{nests_of, Rules};

/// The nested logit built for one spec.
#[derive(Clone, Debug)]
pub struct Nested {
    /// Group of each alternative: the nests first, then one group per alternative in no nest.
    pub group_of: Vec<usize>,
    /// Alternatives of each group.
    pub members: Vec<Vec<usize>>,
    /// The scale parameter of each group; `None` for a lone alternative (scale 1).
    pub scale: Vec<Option<usize>>,
    /// Nest names, for groups `0..nests.len()`.
    pub nests: Vec<String>,
}

/// One situation's nest quantities at one parameter vector.
#[derive(Clone, Debug, Default)]
pub(crate) struct Work {
    /// Per group: scale, largest utility, sum of exp((V - max)/l), l * inclusive value, inclusive value, nest probability, mean utility within.
    lam: Vec<f64>,
    max: Vec<f64>,
    sum: Vec<f64>,
    a: Vec<f64>,
    iv: Vec<f64>,
    q: Vec<f64>,
    vbar: Vec<f64>,
    /// Per alternative: probability within its group, and overall.
    cond: Vec<f64>,
    p: Vec<f64>,
    log_denominator: f64,
}

thread_local! {
    static SCRATCH: RefCell<Work> = RefCell::new(Work::default());
}

impl Nested {
    /// Builds the family for a spec whose `[[nest]]` tables `Rules` accepted.
    pub fn new(spec: &Spec) -> crate::error::Result<Nested> {
        let nests = nests_of(&spec.family_keys, &spec.alternatives)
            .map_err(|m| crate::error::Error::spec(&spec.path, m))?;
        Ok(Nested::from_nests(spec, &nests))
    }

    /// The structure from (nest name, member indices), scales looked up by name.
    pub fn from_nests(spec: &Spec, nests: &[(String, Vec<usize>)]) -> Nested {
        let j = spec.alternatives.len();
        let mut group_of = vec![usize::MAX; j];
        let mut members = Vec::new();
        let mut scale = Vec::new();
        for (g, (name, alts)) in nests.iter().enumerate() {
            for &a in alts {
                group_of[a] = g;
            }
            members.push(alts.clone());
            scale.push(spec.parameter_index(&format!("lambda_{name}")));
        }
        for (a, g) in group_of.iter_mut().enumerate() {
            if *g == usize::MAX {
                *g = members.len();
                members.push(vec![a]);
                scale.push(None);
            }
        }
        Nested {
            group_of,
            members,
            scale,
            nests: nests.iter().map(|n| n.0.clone()).collect(),
        }
    }

    pub(crate) fn work(&self) -> Work {
        let g = self.members.len();
        let j = self.group_of.len();
        Work {
            lam: vec![1.0; g],
            max: vec![0.0; g],
            sum: vec![0.0; g],
            a: vec![0.0; g],
            iv: vec![0.0; g],
            q: vec![0.0; g],
            vbar: vec![0.0; g],
            cond: vec![0.0; j],
            p: vec![0.0; j],
            log_denominator: 0.0,
        }
    }

    /// What-if probabilities from the base ones, touching only what changed:
    /// with r_a = exp((V'_a - V_a)/l_g), a group's within-sum scales by
    /// rho_g = sum_a P_{a|g} r_a and its weight by T_g = rho_g^l_g, so that
    /// P'_a = P_a r_a T_g / (rho_g sum_m Q_m T_m), Q_m the base nest shares.
    /// False (the caller recomputes) where the shortcut does not apply: an
    /// alternative becoming available, a large rise, more than 64 groups.
    fn rescale(&self, beta: &[f64], v0: &[f64], p0: &[f64], v1: &[f64], p1: &mut [f64]) -> bool {
        let groups = self.members.len();
        if groups > 64 || v0.len() != self.group_of.len() {
            return false;
        }
        let mut q = [0.0f64; 64];
        let mut rho = [0.0f64; 64];
        let mut changed = [false; 64];
        for (a, g) in self.group_of.iter().enumerate() {
            let (b, n) = (v0[a], v1[a]);
            let lam = self.scale[*g].map(|k| beta[k]).unwrap_or(1.0);
            let r = if b == n || (!b.is_finite() && !n.is_finite()) {
                1.0
            } else if !b.is_finite() || (n - b) / lam > 50.0 {
                return false;
            } else {
                changed[*g] = true;
                if n.is_finite() {
                    ((n - b) / lam).exp()
                } else {
                    0.0
                }
            };
            p1[a] = p0[a] * r; // P_a r_a, rescaled below
            q[*g] += p0[a];
            rho[*g] += p1[a];
        }
        if !changed[..groups].iter().any(|c| *c) {
            p1.copy_from_slice(p0);
            return true;
        }
        let mut t = [1.0f64; 64];
        let mut denominator = 0.0;
        for g in 0..groups {
            if changed[g] {
                if q[g] <= 0.0 {
                    return false;
                }
                rho[g] /= q[g];
                let lam = self.scale[g].map(|k| beta[k]).unwrap_or(1.0);
                t[g] = if rho[g] > 0.0 { rho[g].powf(lam) } else { 0.0 };
            }
            denominator += q[g] * t[g];
        }
        if denominator.is_nan() || denominator <= 0.0 || !denominator.is_finite() {
            return false;
        }
        for (a, g) in self.group_of.iter().enumerate() {
            if changed[*g] {
                p1[a] = if rho[*g] > 0.0 {
                    p1[a] * t[*g] / (rho[*g] * denominator)
                } else {
                    0.0
                };
            } else {
                p1[a] = p0[a] / denominator;
            }
        }
        true
    }

    /// Whether every scale is positive (the likelihood is defined).
    fn scales_valid(&self, beta: &[f64]) -> bool {
        self.scale
            .iter()
            .flatten()
            .all(|&k| beta[k] > 0.0 && beta[k].is_finite())
    }

    /// Fills `w` for utilities `v` (-inf = unavailable), with log-sum-exp throughout.
    pub(crate) fn situation(&self, beta: &[f64], v: &[f64], w: &mut Work) {
        let mut top = f64::NEG_INFINITY;
        for (g, alts) in self.members.iter().enumerate() {
            let lam = self.scale[g].map(|k| beta[k]).unwrap_or(1.0);
            w.lam[g] = lam;
            let m = alts.iter().map(|&a| v[a]).fold(f64::NEG_INFINITY, f64::max);
            w.max[g] = m;
            if !m.is_finite() {
                w.a[g] = f64::NEG_INFINITY;
                continue;
            }
            let mut s = 0.0;
            for &a in alts {
                let e = if v[a].is_finite() {
                    ((v[a] - m) / lam).exp()
                } else {
                    0.0
                };
                w.cond[a] = e;
                s += e;
            }
            let mut vbar = 0.0;
            for &a in alts {
                w.cond[a] /= s;
                if w.cond[a] > 0.0 {
                    vbar += w.cond[a] * v[a];
                }
            }
            w.sum[g] = s;
            w.vbar[g] = vbar;
            w.iv[g] = m / lam + s.ln();
            w.a[g] = m + lam * s.ln();
            top = top.max(w.a[g]);
        }
        let mut d = 0.0;
        for &a in &w.a[..self.members.len()] {
            if a.is_finite() {
                d += (a - top).exp();
            }
        }
        w.log_denominator = top + d.ln();
        for (g, alts) in self.members.iter().enumerate() {
            let q = if w.a[g].is_finite() {
                (w.a[g] - w.log_denominator).exp()
            } else {
                0.0
            };
            w.q[g] = q;
            for &a in alts {
                w.p[a] = if v[a].is_finite() { q * w.cond[a] } else { 0.0 };
            }
        }
    }
}

impl Family for Nested {
    fn name(&self) -> &'static str {
        "nested"
    }

    fn abilities(&self) -> Abilities {
        Abilities {
            new_alternatives: true,
            analytic_hessian: true,
            costly_hessian: true,
            ..Abilities::default()
        }
    }

    fn evaluate(&self, d: &Design, beta: &[f64], want_grad: bool, want_hess: bool) -> Eval {
        let mut e = pass::evaluate(self, d, beta, want_grad || want_hess);
        if want_hess {
            // Outside the model (a scale at or below 0) there is no curvature to give.
            e.hess = Some(if e.ll.is_finite() {
                hessian::hessian(self, d, beta)
            } else {
                vec![0.0; d.params * d.params]
            });
        }
        e
    }

    fn for_each_score(&self, d: &Design, beta: &[f64], f: &mut dyn FnMut(usize, &[f64])) {
        pass::for_each_score(self, d, beta, f)
    }

    fn probabilities(&self, beta: &[f64], v: &[f64], p: &mut [f64]) {
        SCRATCH.with(|cell| {
            let mut w = cell.borrow_mut();
            // Grown, never shrunk: base and what-if families (with added
            // alternatives) share it without reallocating.
            if w.p.len() < v.len() || w.lam.len() < self.members.len() {
                *w = self.work();
            }
            self.situation(beta, v, &mut w);
            p.copy_from_slice(&w.p[..v.len()]);
        })
    }

    fn probabilities_after(
        &self,
        beta: &[f64],
        v0: &[f64],
        p0: &[f64],
        v1: &[f64],
        p1: &mut [f64],
    ) {
        if !self.rescale(beta, v0, p0, v1, p1) {
            self.probabilities(beta, v1, p1);
        }
    }

    /// dP_i/dV_j = P_i (1[i=j]/l_i + 1[same nest] (l_i - 1)/l_i P_{j|nest} - P_j).
    fn dprob(&self, beta: &[f64], v: &[f64], _p: &[f64], dp: &mut [f64]) {
        SCRATCH.with(|cell| {
            let mut w = cell.borrow_mut();
            // Grown, never shrunk: base and what-if families (with added
            // alternatives) share it without reallocating.
            if w.p.len() < v.len() || w.lam.len() < self.members.len() {
                *w = self.work();
            }
            self.situation(beta, v, &mut w);
            let n = v.len();
            for i in 0..n {
                let pi = w.p[i];
                for j in 0..n {
                    dp[i * n + j] = if pi == 0.0 || !v[j].is_finite() {
                        0.0
                    } else {
                        let gi = self.group_of[i];
                        let lam = w.lam[gi];
                        let own = if i == j { 1.0 / lam } else { 0.0 };
                        let within = if self.group_of[j] == gi {
                            (lam - 1.0) / lam * w.cond[j]
                        } else {
                            0.0
                        };
                        pi * (own + within - w.p[j])
                    };
                }
            }
        })
    }

    /// An added alternative joins `like`'s nest (or stands alone like it), or the named nest.
    fn with_added(
        &self,
        _spec: &Spec,
        added: &[super::Added],
    ) -> Result<Option<super::FamilyRef>, String> {
        let mut m = self.clone();
        for a in added {
            let index = m.group_of.len();
            let group = match &a.group {
                Some(name) => m.nests.iter().position(|n| n == name).ok_or_else(|| {
                    format!(
                        "[[new_alternative]] {}: nest `{name}` is not a nest of the model (it has: {})",
                        a.name,
                        m.nests.join(", ")
                    )
                })?,
                None if self.group_of[a.like] < self.nests.len() => self.group_of[a.like],
                None => {
                    m.members.push(Vec::new());
                    m.scale.push(None);
                    m.members.len() - 1
                }
            };
            m.group_of.push(group);
            m.members[group].push(index);
        }
        Ok(Some(std::sync::Arc::new(m)))
    }

    fn held_in_first_search(&self) -> Vec<usize> {
        self.scale.iter().flatten().copied().collect()
    }

    fn simpler(&self) -> Option<super::FamilyRef> {
        Some(std::sync::Arc::new(super::logit::Logit {
            binary: self.group_of.len() == 2,
        }))
    }

    fn warnings(&self, spec: &Spec, d: &Design, beta: &[f64]) -> Vec<super::FamilyWarning> {
        warnings::all(self, spec, d, beta)
    }

    fn structure(&self, spec: &Spec) -> Vec<String> {
        let mut out: Vec<String> = self
            .nests
            .iter()
            .enumerate()
            .map(|(g, name)| {
                let alts: Vec<&str> = self.members[g]
                    .iter()
                    .map(|&a| spec.alternatives[a].name.as_str())
                    .collect();
                format!("nest {name}: {} (scale lambda_{name})", alts.join(", "))
            })
            .collect();
        let alone: Vec<&str> = (0..self.group_of.len())
            .filter(|&a| self.group_of[a] >= self.nests.len())
            .map(|a| spec.alternatives[a].name.as_str())
            .collect();
        if !alone.is_empty() {
            out.push(format!("in no nest (scale 1): {}", alone.join(", ")));
        }
        out
    }

    fn caution(&self, _spec: &Spec) -> Option<String> {
        Some("Nested logit assumes independence from irrelevant alternatives within each nest and between nests; substitution is stronger within a nest the further its scale lies below 1.".to_string())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::Observations;
    use crate::design::{Feature, Value};
    use crate::rng::Rng;
    use std::sync::Arc;

    /// A random design of `j` alternatives: constants, a shared attribute, a characteristic.
    fn design(n: usize, j: usize, seed: u64) -> Design {
        let mut rng = Rng::new(seed);
        let mut available = vec![true; n * j];
        let mut chosen = Vec::new();
        for i in 0..n {
            for a in 1..j {
                available[i * j + a] = rng.uniform() > 0.25;
            }
            let open: Vec<usize> = (0..j).filter(|&a| available[i * j + a]).collect();
            chosen.push(open[rng.below(open.len())] as u32);
        }
        let x: Vec<f64> = (0..n * j).map(|_| 3.0 * rng.normal()).collect();
        let z: Vec<f64> = (0..n).map(|_| 20.0 + 5.0 * rng.normal()).collect();
        let weight: Vec<f64> = (0..n).map(|_| 0.5 + rng.uniform()).collect();
        let mut features = vec![Vec::new(); j];
        let mut k = 0;
        for f in features.iter_mut().skip(1) {
            f.push(Feature {
                param: k,
                value: Value::One,
            });
            f.push(Feature {
                param: k + 1,
                value: Value::Characteristic(0),
            });
            k += 2;
        }
        for f in features.iter_mut() {
            f.push(Feature {
                param: k,
                value: Value::Attribute(0),
            });
        }
        k += 1;
        let obs = Observations {
            offset: None,
            tables: None,
            situations: n,
            alternatives: j,
            chosen,
            available,
            weight_total: weight.iter().sum(),
            weight,
            group: None,
            groups: 0,
            attributes: vec![x],
            characteristics: vec![z],
            first_row: (1..=n).collect(),
        };
        // Two scale parameters after the linear ones.
        Design {
            obs: Arc::new(obs),
            params: k + 2,
            features,
        }
    }

    #[test]
    fn the_blocked_pass_equals_the_per_situation_one() {
        for (n, j) in [(1, 3), (300, 5), (517, 4), (260, 9)] {
            let d = design(n, j, 70 + n as u64);
            let k = d.params;
            let mid = j / 2;
            let m = Nested {
                group_of: (0..j)
                    .map(|a| {
                        if a == 0 {
                            2
                        } else if a <= mid {
                            0
                        } else {
                            1
                        }
                    })
                    .collect(),
                members: vec![(1..=mid).collect(), (mid + 1..j).collect(), vec![0]],
                scale: vec![Some(k - 2), Some(k - 1), None],
                nests: vec!["p".into(), "q".into()],
            };
            let mut rng = Rng::new(3);
            let mut beta: Vec<f64> = (0..k).map(|_| 0.1 * rng.normal()).collect();
            beta[k - 2] = 0.45;
            beta[k - 1] = 0.8;
            let fast = pass::evaluate(&m, &d, &beta, true);
            let slow = pass::evaluate_reference(&m, &d, &beta, true);
            let close = |a: f64, b: f64, s: f64| (a - b).abs() <= 1e-10 * s.max(1.0);
            assert!(
                close(fast.ll, slow.ll, slow.ll.abs()),
                "n {n} j {j}: {} vs {}",
                fast.ll,
                slow.ll
            );
            let gs = slow.grad.iter().fold(0.0f64, |a, x| a.max(x.abs()));
            for (q, (a, b)) in fast.grad.iter().zip(&slow.grad).enumerate() {
                assert!(close(*a, *b, gs), "n {n} j {j}: gradient {q}: {a} vs {b}");
            }
        }
    }
}
