//! The latent class model's probabilities as the analyses see them: each
//! situation averages the classes' logits (one coefficient point per class)
//! weighted by the membership model's class shares at its decision maker's
//! membership columns.

use std::sync::Arc;

use super::Layout;
use crate::data::Observations;
use crate::model::{CoefficientDerivatives, Points};

/// One coefficient point per class, weighted by the class shares.
pub(super) struct ClassPoints {
    pub lay: Layout,
    pub obs: Arc<Observations>,
}

impl Points for ClassPoints {
    fn count(&self) -> usize {
        self.lay.classes
    }

    fn fill(&self, beta: &[f64], _i: usize, out: &mut [f64]) {
        let k = beta.len();
        for (c, row) in out.chunks_mut(k).enumerate().take(self.lay.classes) {
            self.lay.class_beta(beta, c, row);
        }
    }

    fn weights(&self, beta: &[f64], i: usize, out: &mut [f64]) {
        self.lay.shares(&self.obs, beta, i, out);
    }

    /// Class c's coefficient in a slot is its copy there (1 by it, 0 by the
    /// other classes' copies); its share π_c moves with class d's membership
    /// coefficient on column z by π_c (1[c = d] − π_d) z.
    fn derivatives(&self, beta: &[f64], i: usize, out: &mut CoefficientDerivatives) -> bool {
        let (lay, k) = (&self.lay, self.lay.classes);
        out.pairs.clear();
        out.values.clear();
        for (s, &slot) in lay.slots.iter().enumerate() {
            if lay.index.iter().any(|ix| ix[s] != slot) {
                out.pairs.extend(lay.index.iter().map(|ix| (slot, ix[s])));
            }
        }
        let np = out.pairs.len();
        for c in 0..k {
            out.values
                .extend((0..np).map(|e| f64::from(u8::from(e % k == c))));
        }
        out.weight_params.clear();
        out.weight_values.clear();
        for m in &lay.member {
            out.weight_params.push(m[0]);
            out.weight_params
                .extend(&m[1..m.len().min(lay.columns.len() + 1)]);
        }
        // The shares first, in the same buffer (no allocation), then dropped.
        let wv = &mut out.weight_values;
        wv.resize(k, 0.0);
        lay.shares(&self.obs, beta, i, &mut wv[..k]);
        for c in 0..k {
            for (d, m) in lay.member.iter().enumerate() {
                let by = wv[c] * (f64::from(u8::from(c == d + 1)) - wv[d + 1]);
                wv.push(by);
                for &col in lay.columns.iter().take(m.len() - 1) {
                    wv.push(by * self.obs.characteristics[col][i]);
                }
            }
        }
        wv.drain(..k);
        true
    }
}
