//! Sampled choice sets for estimation (`[sampling]`): per situation the
//! chosen alternative in slot 0, then alternatives drawn from the situation's
//! other available ones, uniformly without replacement or in proportion to a
//! weight with replacement. Each situation's draws come from its own
//! generator seeded by the seed and its file row, so the sets do not depend
//! on chunks, threads or subsets.
//!
//! Weighted draws carry the correction ln(k_j / q_j) into the utility (k_j
//! the times j was drawn, plus 1 for the chosen; q_j its probability per
//! draw): the probability of the drawn counts given that j was chosen is a
//! factor common to the set's members times k_j / q_j, so the logit on the
//! set with this offset is the conditional likelihood of McFadden (1978). As
//! q_j's denominator is the same for every member, ln k_j - ln w_j is used.

use crate::data::Observations;
use crate::rng::Rng;
use crate::spec::{Sampling, Scheme};

/// Empty slot marker in `Sets::members`.
pub const EMPTY: u32 = u32::MAX;

/// The sampled sets of some situations: `slots` per situation.
#[derive(Clone, Debug, PartialEq)]
pub struct Sets {
    pub slots: usize,
    /// `[i * slots + s]`: the alternative in slot s (slot 0 the chosen), or `EMPTY`.
    pub members: Vec<u32>,
    /// How many times each member was drawn (plus 1 for the chosen).
    pub counts: Vec<u32>,
}

/// One situation's candidates: its available alternatives in increasing
/// order, with their cumulative sampling weights for scheme "weighted".
pub struct Candidates<'a> {
    pub open: &'a [u32],
    pub cumulative: Option<&'a [f64]>,
}

/// Scratch space of one thread: the slot of each alternative in the set
/// being drawn (`EMPTY` when not in it).
pub struct Scratch {
    slot_of: Vec<u32>,
}

impl Scratch {
    pub fn new(alternatives: usize) -> Scratch {
        Scratch {
            slot_of: vec![EMPTY; alternatives],
        }
    }
}

/// The generator of the situation on file row `row`.
pub fn generator(seed: u64, row: usize) -> Rng {
    Rng::new(seed.wrapping_mul(0xD1B5_4A32_D192_ED03) ^ row as u64)
}

/// Draws one situation's set into `members` and `counts` (length `slots`).
pub fn draw(
    sampling: &Sampling,
    rng: &mut Rng,
    (chosen, c): (u32, &Candidates),
    scratch: &mut Scratch,
    (members, counts): (&mut [u32], &mut [u32]),
) {
    members.fill(EMPTY);
    counts.fill(0);
    members[0] = chosen;
    counts[0] = 1;
    scratch.slot_of[chosen as usize] = 0;
    let mut filled = 1;
    match (&sampling.scheme, c.cumulative) {
        (Scheme::Weighted(_), Some(cum)) => {
            let total = cum.last().copied().unwrap_or(0.0);
            for _ in 0..sampling.alternatives {
                let u = rng.uniform() * total;
                let at = cum.partition_point(|&x| x <= u).min(cum.len() - 1);
                let j = c.open[at];
                let s = scratch.slot_of[j as usize];
                if s == EMPTY {
                    scratch.slot_of[j as usize] = filled as u32;
                    members[filled] = j;
                    counts[filled] = 1;
                    filled += 1;
                } else {
                    counts[s as usize] += 1;
                }
            }
        }
        _ => {
            let others = c.open.len().saturating_sub(1);
            let want = sampling.alternatives.min(others);
            while filled <= want {
                let j = c.open[rng.below(c.open.len())];
                if scratch.slot_of[j as usize] == EMPTY {
                    scratch.slot_of[j as usize] = filled as u32;
                    members[filled] = j;
                    counts[filled] = 1;
                    filled += 1;
                }
            }
        }
    }
    for &j in &members[..filled] {
        scratch.slot_of[j as usize] = EMPTY;
    }
}

/// The sampled sets of full-set observations (every alternative of the
/// table in `obs`), with `weights` per alternative for scheme "weighted".
pub fn sets_of(obs: &Observations, sampling: &Sampling, weights: Option<&[f64]>) -> Sets {
    let (n, nj) = (obs.situations, obs.alternatives);
    let slots = sampling.alternatives + 1;
    let mut members = vec![EMPTY; n * slots];
    let mut counts = vec![0u32; n * slots];
    let parts = split(&mut members, &mut counts, n, slots);
    std::thread::scope(|scope| {
        for (first, m, k) in parts {
            scope.spawn(move || {
                let mut scratch = Scratch::new(nj);
                let mut open: Vec<u32> = Vec::with_capacity(nj);
                let mut cum: Vec<f64> = Vec::with_capacity(nj);
                for (b, (m, k)) in m.chunks_mut(slots).zip(k.chunks_mut(slots)).enumerate() {
                    let i = first + b;
                    open.clear();
                    cum.clear();
                    let mut total = 0.0;
                    for j in 0..nj {
                        if obs.available[i * nj + j] {
                            open.push(j as u32);
                            total += weights.map_or(1.0, |w| w[j]);
                            cum.push(total);
                        }
                    }
                    let c = Candidates {
                        open: &open,
                        cumulative: weights.map(|_| cum.as_slice()),
                    };
                    let mut rng = generator(sampling.seed, obs.first_row[i]);
                    draw(
                        sampling,
                        &mut rng,
                        (obs.chosen[i], &c),
                        &mut scratch,
                        (m, k),
                    );
                }
            });
        }
    });
    Sets {
        slots,
        members,
        counts,
    }
}

/// The outputs cut into one piece per core: (first situation, members, counts).
fn split<'a>(
    members: &'a mut [u32],
    counts: &'a mut [u32],
    n: usize,
    slots: usize,
) -> Vec<(usize, &'a mut [u32], &'a mut [u32])> {
    let threads = std::thread::available_parallelism()
        .map(|t| t.get())
        .unwrap_or(1)
        .clamp(1, 64);
    let step = n.div_ceil(threads).max(1);
    let mut out = Vec::new();
    let (mut m, mut k) = (members, counts);
    let mut first = 0;
    while first < n {
        let take = step.min(n - first);
        let (a, rest_m) = m.split_at_mut(take * slots);
        let (b, rest_k) = k.split_at_mut(take * slots);
        out.push((first, a, b));
        m = rest_m;
        k = rest_k;
        first += take;
    }
    out
}

/// The observations of the sampled sets: one "alternative" per slot,
/// available where filled, each attribute's value that of the slot's
/// member, and for scheme "weighted" the correction ln k - ln w as offset.
pub fn sampled(obs: &Observations, sets: &Sets, weights: Option<&[f64]>) -> Observations {
    let (n, nj, slots) = (obs.situations, obs.alternatives, sets.slots);
    let pick = |x: &[f64]| -> Vec<f64> {
        let mut out = vec![0.0; n * slots];
        for (t, (o, &j)) in out.iter_mut().zip(&sets.members).enumerate() {
            if j != EMPTY {
                *o = x[(t / slots) * nj + j as usize];
            }
        }
        out
    };
    let offset = weights.map(|w| {
        sets.members
            .iter()
            .zip(&sets.counts)
            .map(|(&j, &k)| {
                if j == EMPTY {
                    0.0
                } else {
                    (k as f64).ln() - w[j as usize].ln()
                }
            })
            .collect()
    });
    Observations {
        situations: n,
        alternatives: slots,
        chosen: vec![0; n],
        available: sets.members.iter().map(|&j| j != EMPTY).collect(),
        weight: obs.weight.clone(),
        weight_total: obs.weight_total,
        group: obs.group.clone(),
        groups: obs.groups,
        attributes: obs.attributes.iter().map(|x| pick(x)).collect(),
        characteristics: obs.characteristics.clone(),
        first_row: obs.first_row.clone(),
        offset,
        tables: None,
    }
}
