//! A design's tasks as level indices (task × column), the random
//! level-balanced starts of the search, and the level counts the output reports.

use serde::{Deserialize, Serialize};

use super::file::Plan;
use crate::rng::Rng;

/// Level indices, task by task (each row one index per design column).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Tasks {
    pub columns: usize,
    pub levels: Vec<u8>,
}

impl Tasks {
    pub fn count(&self) -> usize {
        self.levels.len() / self.columns.max(1)
    }

    pub fn task(&self, t: usize) -> &[u8] {
        &self.levels[t * self.columns..(t + 1) * self.columns]
    }

    pub fn get(&self, t: usize, c: usize) -> u8 {
        self.levels[t * self.columns + c]
    }

    /// Swaps column `c`'s levels between tasks `a` and `b`.
    pub fn swap(&mut self, c: usize, a: usize, b: usize) {
        self.levels.swap(a * self.columns + c, b * self.columns + c);
    }

    /// A task's levels as the numbers written out.
    pub fn values(&self, plan: &Plan, t: usize) -> Vec<f64> {
        plan.columns
            .iter()
            .enumerate()
            .map(|(c, col)| col.levels[self.get(t, c) as usize])
            .collect()
    }

    /// Tasks from the numbers of a written design (levels must be the plan's).
    pub fn from_values(plan: &Plan, rows: &[Vec<f64>]) -> Option<Tasks> {
        let mut levels = Vec::with_capacity(rows.len() * plan.columns.len());
        for row in rows {
            for (c, col) in plan.columns.iter().enumerate() {
                let lv = &col.levels;
                let v = *row.get(c)?;
                levels.push(lv.iter().position(|x| *x == v)? as u8);
            }
        }
        Some(Tasks {
            columns: plan.columns.len(),
            levels,
        })
    }
}

/// A random start: in each block and column every level appears equally
/// often (within one where the numbers do not divide; the levels that get
/// one more turn with the block, so the whole design is within one too),
/// in a random order.
pub fn balanced_start(plan: &Plan, rng: &mut Rng) -> Tasks {
    let cols = plan.columns.len();
    let per = plan.per_block();
    let mut levels = vec![0u8; plan.tasks * cols];
    let mut list = Vec::with_capacity(per);
    for (c, col) in plan.columns.iter().enumerate() {
        let l = col.levels.len();
        for b in 0..plan.blocks {
            list.clear();
            let offset = (b * (per % l)) % l;
            list.extend((0..per).map(|i| ((i + offset) % l) as u8));
            shuffle(&mut list, rng);
            for (i, v) in list.iter().enumerate() {
                levels[(b * per + i) * cols + c] = *v;
            }
        }
    }
    Tasks {
        columns: cols,
        levels,
    }
}

fn shuffle(v: &mut [u8], rng: &mut Rng) {
    for i in (1..v.len()).rev() {
        let k = rng.below(i + 1);
        v.swap(i, k);
    }
}

/// How often each level of one column appears, over the design and per block.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct LevelCount {
    pub column: String,
    pub attribute: String,
    pub alternative: String,
    pub levels: Vec<f64>,
    pub counts: Vec<usize>,
    pub by_block: Vec<Vec<usize>>,
}

/// The level counts of every column.
pub fn level_counts(plan: &Plan, tasks: &Tasks) -> Vec<LevelCount> {
    let per = plan.per_block();
    plan.columns
        .iter()
        .enumerate()
        .map(|(c, col)| {
            let levels = col.levels.clone();
            let mut by_block = vec![vec![0usize; levels.len()]; plan.blocks];
            for t in 0..tasks.count() {
                by_block[t / per][tasks.get(t, c) as usize] += 1;
            }
            let counts = (0..levels.len())
                .map(|l| by_block.iter().map(|b| b[l]).sum())
                .collect();
            LevelCount {
                column: col.name.clone(),
                attribute: plan.attributes[col.attribute].name.clone(),
                alternative: plan.alternatives[col.alternative].clone(),
                levels,
                counts,
                by_block,
            }
        })
        .collect()
}

/// Whether every column is balanced within one count in each block.
pub fn balanced(counts: &[LevelCount]) -> bool {
    counts.iter().all(|c| {
        c.by_block.iter().all(|b| {
            let lo = b.iter().min().copied().unwrap_or(0);
            let hi = b.iter().max().copied().unwrap_or(0);
            hi - lo <= 1
        })
    })
}
