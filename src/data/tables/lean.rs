//! Sampled sets drawn straight from the tables, for a fit whose full sets
//! would be too large to hold (a million trips over a thousand zones are a
//! billion utilities): the same sets as `sample::sets_of` over the full
//! sets (each situation's candidates are its available alternatives in
//! order, with the same generator), but only the sampled slots' values are
//! ever made.

use super::full::{assemble, keys, multipliers, Arrays};
use super::sample::{draw, generator, Candidates, Scratch, EMPTY};
use super::Tables;
use crate::data::table::Table;
use crate::data::Observations;
use crate::error::Result;
use crate::spec::{Sampling, Spec};

/// Above this many situations x alternatives, `fit --no-analysis` on
/// sampled sets draws them from the tables (`observations`) rather than
/// building the full sets first.
pub const LEAN_CELLS: usize = 20_000_000;

/// Each pair key's available alternatives in order, and their cumulative
/// sampling weights (empty without weights).
fn candidates(tables: &Tables) -> Vec<(Vec<u32>, Vec<f64>)> {
    let keys = tables.pairs.as_ref().map_or(1, |p| p.keys.len());
    let w = tables.sampling_weight.as_deref();
    (0..keys)
        .map(|o| {
            let open: Vec<u32> = (0..tables.alternatives())
                .filter(|&j| tables.open(o, j))
                .map(|j| j as u32)
                .collect();
            let mut total = 0.0;
            let cum = match w {
                Some(w) => open
                    .iter()
                    .map(|&j| {
                        total += w[j as usize];
                        total
                    })
                    .collect(),
                None => Vec::new(),
            };
            (open, cum)
        })
        .collect()
}

/// The sampled-set observations of the situations in `table`, drawn from
/// the tables without the full sets.
pub fn observations(
    spec: &Spec,
    tables: &Tables,
    table: &Table,
    sampling: &Sampling,
) -> Result<Observations> {
    let n = table.nrows;
    let slots = sampling.alternatives + 1;
    let k = keys(spec, tables, table)?;
    let (members, counts) = draw_all(tables, (table, &k), sampling);
    let times = multipliers(spec, table)?;
    let mut attributes = Vec::with_capacity(spec.attributes.len());
    for (a, times) in times.iter().enumerate() {
        let mut x = vec![0.0; n * slots];
        for (t, (xv, &j)) in x.iter_mut().zip(&members).enumerate() {
            if j != EMPTY {
                let i = t / slots;
                let m = times.map_or(1.0, |v| v[i]);
                *xv = tables.value(a, k.from[i] as usize, j as usize) * m;
            }
        }
        attributes.push(x);
    }
    let offset = tables.sampling_weight.as_ref().map(|w| {
        members
            .iter()
            .zip(&counts)
            .map(|(&j, &c)| {
                if j == EMPTY {
                    0.0
                } else {
                    (c as f64).ln() - w[j as usize].ln()
                }
            })
            .collect()
    });
    let arrays = Arrays {
        alternatives: slots,
        chosen: vec![0; n],
        available: members.iter().map(|&j| j != EMPTY).collect(),
        attributes,
        offset,
    };
    assemble(spec, table, arrays)
}

/// Every situation's sampled set: members and counts, `slots` per situation.
fn draw_all(
    tables: &Tables,
    (table, k): (&Table, &super::full::Keys),
    sampling: &Sampling,
) -> (Vec<u32>, Vec<u32>) {
    let n = table.nrows;
    let slots = sampling.alternatives + 1;
    let cand = candidates(tables);
    let mut members = vec![EMPTY; n * slots];
    let mut counts = vec![0u32; n * slots];
    let threads = std::thread::available_parallelism()
        .map_or(1, |t| t.get())
        .clamp(1, 64);
    let step = n.div_ceil(threads).max(1);
    std::thread::scope(|scope| {
        let parts = members
            .chunks_mut(step * slots)
            .zip(counts.chunks_mut(step * slots));
        for (t, (m, c)) in parts.enumerate() {
            let cand = &cand;
            scope.spawn(move || {
                let mut scratch = Scratch::new(tables.alternatives());
                for (b, (m, c)) in m.chunks_mut(slots).zip(c.chunks_mut(slots)).enumerate() {
                    let i = t * step + b;
                    let (open, cum) = &cand[k.from[i] as usize];
                    let cs = Candidates {
                        open,
                        cumulative: tables.sampling_weight.as_ref().map(|_| cum.as_slice()),
                    };
                    let mut rng = generator(sampling.seed, table.offset + i + 1);
                    draw(sampling, &mut rng, (k.chosen[i], &cs), &mut scratch, (m, c));
                }
            });
        }
    });
    (members, counts)
}
