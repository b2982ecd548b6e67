//! Design: the compact arrays the likelihood reads. Attributes are stored per
//! situation and alternative, characteristics and constants per situation;
//! each alternative has a short list of features naming which parameter
//! multiplies which value, so no situations x alternatives x parameters
//! array of structural zeros is ever built.

mod pieces;

use std::sync::Arc;

pub use pieces::{heavy_pieces, on_pieces, on_ranges, pieces, run_queue};

use crate::data::Observations;
use crate::spec::{Coefficient, Spec, Term};

/// Where a feature's value comes from.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Value {
    /// 1 (an alternative-specific constant).
    One,
    /// Attribute `a` at `[i * J + j]`.
    Attribute(usize),
    /// Characteristic `c` at `[i]`.
    Characteristic(usize),
}

/// Parameter `param` multiplies `value` in an alternative's utility.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Feature {
    pub param: usize,
    pub value: Value,
}

#[derive(Clone, Debug)]
pub struct Design {
    pub obs: Arc<Observations>,
    /// Number of parameters (free and fixed), in spec order.
    pub params: usize,
    /// Per alternative, the features entering its utility.
    pub features: Vec<Vec<Feature>>,
}

impl PartialEq for Design {
    /// Equal model arrays (the file rows where situations start are not compared).
    fn eq(&self, other: &Self) -> bool {
        let (a, b) = (&*self.obs, &*other.obs);
        self.params == other.params
            && self.features == other.features
            && a.situations == b.situations
            && a.alternatives == b.alternatives
            && a.chosen == b.chosen
            && a.available == b.available
            && a.weight == b.weight
            && a.group == b.group
            && a.groups == b.groups
            && a.attributes == b.attributes
            && a.characteristics == b.characteristics
    }
}

impl Design {
    pub fn build(spec: &Spec, obs: Arc<Observations>) -> Design {
        let nalt = spec.alternatives.len();
        let mut features = vec![Vec::new(); nalt];
        for (k, p) in spec.parameters.iter().enumerate() {
            if p.class > 1 {
                // Another latent class's copy: its family maps it onto the
                // first class's features.
                continue;
            }
            match &p.term {
                Term::Constant => {
                    if let Some(j) = p.alternative {
                        features[j].push(Feature {
                            param: k,
                            value: Value::One,
                        });
                    }
                }
                Term::Attribute(a) => {
                    let attr = &spec.attributes[*a];
                    let alts: Vec<usize> = match attr.coefficient {
                        Coefficient::Shared => {
                            (0..nalt).filter(|&j| attr.sources[j].is_some()).collect()
                        }
                        Coefficient::PerAlternative => p.alternative.into_iter().collect(),
                    };
                    for j in alts {
                        features[j].push(Feature {
                            param: k,
                            value: Value::Attribute(*a),
                        });
                    }
                }
                Term::Characteristic(c) => {
                    // One coefficient for every alternative it enters (a single
                    // index), or one per alternative.
                    let alts: Vec<usize> = match p.alternative {
                        Some(j) => vec![j],
                        None => spec.characteristics[*c].alternatives.clone(),
                    };
                    for j in alts {
                        features[j].push(Feature {
                            param: k,
                            value: Value::Characteristic(*c),
                        });
                    }
                }
                // A family's own parameters (scales, spreads, ...) are not linear terms.
                Term::Family(_) => {}
            }
        }
        // Sampled sets have a slot per sampled alternative, fewer than the
        // alternatives; `[sampling]` gives every alternative the same
        // features, so the slots take the first ones'.
        features.truncate(obs.alternatives);
        Design {
            obs,
            params: spec.parameters.len(),
            features,
        }
    }

    pub fn situations(&self) -> usize {
        self.obs.situations
    }

    pub fn alternatives(&self) -> usize {
        self.obs.alternatives
    }

    #[inline]
    pub fn value(&self, i: usize, j: usize, v: Value) -> f64 {
        match v {
            Value::One => 1.0,
            Value::Attribute(a) => self.obs.attributes[a][i * self.obs.alternatives + j],
            Value::Characteristic(c) => self.obs.characteristics[c][i],
        }
    }

    #[inline]
    pub fn available(&self, i: usize, j: usize) -> bool {
        self.obs.available[i * self.obs.alternatives + j]
    }

    /// Utilities of situation `i` into `out` (length J); unavailable ones are -inf.
    #[inline]
    pub fn utilities(&self, beta: &[f64], i: usize, out: &mut [f64]) {
        for (j, o) in out.iter_mut().enumerate() {
            if !self.available(i, j) {
                *o = f64::NEG_INFINITY;
                continue;
            }
            let mut v = match &self.obs.offset {
                Some(o) => o[i * self.obs.alternatives + j],
                None => 0.0,
            };
            for f in &self.features[j] {
                v += beta[f.param] * self.value(i, j, f.value);
            }
            *o = v;
        }
    }

    /// Utilities of situation `i` at many coefficient points at once into
    /// `out`, one row per alternative over the points (`[j * points + r]`),
    /// from the points' coefficients laid out one row per parameter
    /// (`coefs[param * points + r]`); each point's utilities equal
    /// `utilities` at its coefficients, term for term.
    pub fn utilities_of_points(&self, coefs: &[f64], points: usize, i: usize, out: &mut [f64]) {
        for (j, row) in out.chunks_exact_mut(points).enumerate() {
            if !self.available(i, j) {
                row.iter_mut().for_each(|x| *x = f64::NEG_INFINITY);
                continue;
            }
            let offset = match &self.obs.offset {
                Some(o) => o[i * self.obs.alternatives + j],
                None => 0.0,
            };
            row.iter_mut().for_each(|x| *x = offset);
            for f in &self.features[j] {
                let x = self.value(i, j, f.value);
                let c = &coefs[f.param * points..(f.param + 1) * points];
                for (v, b) in row.iter_mut().zip(c) {
                    *v += b * x;
                }
            }
        }
    }

    /// Sum of weights.
    pub fn total_weight(&self) -> f64 {
        self.obs.weight.iter().sum()
    }

    /// Runs `f(range, accumulator)` on each piece of the situations (`pieces`),
    /// each with its own zeroed accumulator of length `width`, spread over the
    /// cores, and returns their sum in piece order (the same whatever the cores).
    pub fn par_fold<F>(&self, width: usize, f: F) -> Vec<f64>
    where
        F: Fn(std::ops::Range<usize>, &mut [f64]) + Sync,
    {
        let parts = on_pieces(self.situations(), |r| {
            let mut acc = vec![0.0; width];
            f(r, &mut acc);
            acc
        });
        let mut out = vec![0.0; width];
        for p in parts {
            out.iter_mut().zip(&p).for_each(|(a, b)| *a += b);
        }
        out
    }
}
