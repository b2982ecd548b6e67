//! The latent class model's probabilities as the analyses see them: each
//! situation averages the classes' logits (one coefficient point per class)
//! weighted by the membership model's class shares at its decision maker's
//! membership columns.

use std::sync::Arc;

use super::Layout;
use crate::data::Observations;
use crate::model::Points;

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
}
