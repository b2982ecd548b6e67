//! The decision makers of one data set and their draws: which situations
//! belong to whom (a panel with `[data].group`, else one situation each) and
//! the standardised draws `[unit][dim][draw]`, made once per data set.

use crate::data::Observations;
use crate::design::Design;
use crate::model::RandomCoefficient;

/// Decision makers and their draws for one data set.
#[derive(Debug)]
pub struct Panel {
    pub units: usize,
    pub draws: usize,
    pub dims: usize,
    /// Whether situations are grouped by decision maker (`[data].group`).
    pub grouped: bool,
    /// Situations of each decision maker: `members[start[n]..start[n + 1]]`, in data order.
    start: Vec<usize>,
    members: Vec<u32>,
    /// The decision maker of each situation.
    unit_of: Vec<u32>,
    /// Standardised draws `[unit][dim][draw]`.
    e: Vec<f64>,
}

impl Panel {
    /// Decision makers of `obs` with standardised draws from `uniforms`
    /// (`[unit][dim][draw]`).
    pub(crate) fn new(
        obs: &Observations,
        terms: &[RandomCoefficient],
        draws: usize,
        uniforms: Vec<f64>,
    ) -> Panel {
        let (units, unit_of): (usize, Vec<u32>) = match &obs.group {
            Some(g) => (obs.groups, g.clone()),
            None => (obs.situations, (0..obs.situations as u32).collect()),
        };
        let mut start = vec![0usize; units + 1];
        for &u in &unit_of {
            start[u as usize + 1] += 1;
        }
        for n in 0..units {
            start[n + 1] += start[n];
        }
        let mut fill = start.clone();
        let mut members = vec![0u32; unit_of.len()];
        for (i, &u) in unit_of.iter().enumerate() {
            members[fill[u as usize]] = i as u32;
            fill[u as usize] += 1;
        }
        let dims = terms.len();
        // The standardised draws (normal quantiles), over the cores.
        let per_unit = dims * draws;
        // In place, so that the draws are held once.
        let mut e = uniforms;
        let mut items = Vec::new();
        let mut rest = e.as_mut_slice();
        for r in crate::design::heavy_pieces(units, 64) {
            let (a, b) = rest.split_at_mut((r.len() * per_unit).min(rest.len()));
            items.push(a);
            rest = b;
        }
        crate::design::run_queue(items, |chunk| {
            for (k, u) in chunk.iter_mut().enumerate() {
                *u = terms[(k / draws) % dims].distribution.standard(*u);
            }
        });
        Panel {
            units,
            draws,
            dims,
            grouped: obs.group.is_some(),
            start,
            members,
            unit_of,
            e,
        }
    }

    pub fn situations_of(&self, n: usize) -> &[u32] {
        &self.members[self.start[n]..self.start[n + 1]]
    }

    pub fn unit_of(&self, i: usize) -> usize {
        self.unit_of[i] as usize
    }

    /// The standardised draws of decision maker `n` in dimension `dim`.
    #[inline]
    pub fn draws_of(&self, n: usize, dim: usize) -> &[f64] {
        let at = (n * self.dims + dim) * self.draws;
        &self.e[at..at + self.draws]
    }

    /// A decision maker's weight: that of their first situation.
    #[inline]
    pub fn weight(&self, d: &Design, n: usize) -> f64 {
        self.situations_of(n)
            .first()
            .map(|&i| d.obs.weight[i as usize])
            .unwrap_or(0.0)
    }
}
