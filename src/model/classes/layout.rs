//! Where each class's parameters sit in the parameter vector. The design's
//! features name the first class's copies (and the parameters all classes
//! share): those are the utility's slots. Class c's coefficient vector is the
//! parameter vector with its own copies written into the first class's
//! slots, so the design's utilities serve every class. The membership model
//! is a logit over classes with class 1 as its reference.

use crate::data::Observations;
use crate::design::Design;
use crate::spec::{Spec, Term};

/// The parameter positions of a latent class model.
#[derive(Clone, Debug, PartialEq)]
pub struct Layout {
    pub classes: usize,
    /// The utility's slots: the parameters the design's features name.
    pub slots: Vec<usize>,
    /// The slot of each parameter, if it is one.
    pub slot_of: Vec<Option<usize>>,
    /// `index[c][s]`: class c's parameter in slot s (the slot's own
    /// parameter for class 0 and for a shared one).
    pub index: Vec<Vec<usize>>,
    /// `member[c - 1]`: class c's membership constant, then its coefficient
    /// on each membership column (c = 1..K-1, from 0).
    pub member: Vec<Vec<usize>>,
    /// The position of each membership column in `Observations::characteristics`.
    pub columns: Vec<usize>,
}

impl Layout {
    pub fn new(spec: &Spec, classes: usize, membership: &[String]) -> Layout {
        let k = spec.parameters.len();
        let slots: Vec<usize> = (0..k)
            .filter(|&p| spec.parameters[p].class <= 1)
            .filter(|&p| !matches!(spec.parameters[p].term, Term::Family(_)))
            .collect();
        let mut slot_of = vec![None; k];
        for (s, &p) in slots.iter().enumerate() {
            slot_of[p] = Some(s);
        }
        let index = (0..classes)
            .map(|c| {
                slots
                    .iter()
                    .map(|&p| {
                        let q = &spec.parameters[p];
                        if q.class != 1 || c == 0 {
                            return p;
                        }
                        let base = q.name.strip_suffix("_class1").unwrap_or(&q.name);
                        spec.parameter_index(&format!("{base}_class{}", c + 1))
                            .unwrap_or(p)
                    })
                    .collect()
            })
            .collect();
        let member = (2..=classes)
            .map(|c| {
                let mut v = Vec::new();
                let mut add = |name: String| {
                    if let Some(p) = spec.parameter_index(&name) {
                        v.push(p);
                    }
                };
                add(format!("member_class{c}"));
                for m in membership {
                    add(format!("member_class{c}_{m}"));
                }
                v
            })
            .collect();
        let first = spec.characteristics.len();
        Layout {
            classes,
            slots,
            slot_of,
            index,
            member,
            columns: (first..first + membership.len()).collect(),
        }
    }

    /// Class c's coefficient vector into `out` (length K): `beta` with the
    /// class's copies in the first class's slots.
    pub fn class_beta(&self, beta: &[f64], c: usize, out: &mut [f64]) {
        out.copy_from_slice(beta);
        for (s, &p) in self.index[c].iter().enumerate() {
            out[self.slots[s]] = beta[p];
        }
    }

    /// The membership model's class shares of situation `i` into `out`
    /// (length K), by log-sum-exp.
    pub fn shares(&self, obs: &Observations, beta: &[f64], i: usize, out: &mut [f64]) {
        out[0] = 0.0;
        for (c, m) in self.member.iter().enumerate() {
            let mut a = beta[m[0]];
            for (x, &col) in m[1..].iter().zip(&self.columns) {
                a += beta[*x] * obs.characteristics[col][i];
            }
            out[c + 1] = a;
        }
        let m = out.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let mut sum = 0.0;
        for o in out.iter_mut() {
            *o = (*o - m).exp();
            sum += *o;
        }
        out.iter_mut().for_each(|o| *o /= sum);
    }

    /// The membership column values of situation `i` with a leading 1 into `z`.
    pub fn covariates(&self, d: &Design, i: usize, z: &mut [f64]) {
        z[0] = 1.0;
        for (zz, &col) in z[1..].iter_mut().zip(&self.columns) {
            *zz = d.obs.characteristics[col][i];
        }
    }
}
