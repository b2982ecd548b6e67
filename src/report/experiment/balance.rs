//! "Level balance": how often each level of each column appears, over the
//! design and in each block.

use std::fmt::Write;

use super::{level, DesignSection};
use crate::experiment::Outcome;
use crate::report::html::page::{label_cell, note, num_cell, table};

pub struct Balance;

/// "2: 8, 4: 8" — each level with its count.
fn counts(levels: &[f64], counts: &[usize]) -> String {
    levels
        .iter()
        .zip(counts)
        .map(|(l, n)| format!("{}: {n}", level(*l)))
        .collect::<Vec<_>>()
        .join(", ")
}

impl DesignSection for Balance {
    fn names(&self) -> (&'static str, &'static str) {
        ("balance", "Level balance")
    }

    fn html(&self, o: &Outcome) -> String {
        let rows: Vec<String> = o
            .level_counts
            .iter()
            .map(|c| {
                let blocks: Vec<String> = c
                    .by_block
                    .iter()
                    .map(|b| {
                        b.iter()
                            .map(|n| n.to_string())
                            .collect::<Vec<_>>()
                            .join("/")
                    })
                    .collect();
                [
                    label_cell(&c.column),
                    label_cell(&counts(&c.levels, &c.counts)),
                    num_cell(&blocks.join(" · ")),
                ]
                .concat()
            })
            .collect();
        let mut s = table("balance", &["column", "level: tasks", "per block"], &rows);
        s.push_str(&note(
            "Per block: each level's count in block 1, 2, … in the order of the levels.",
        ));
        s
    }

    fn text(&self, o: &Outcome) -> Option<String> {
        let mut s = String::from("Level balance (level: tasks; per block in the levels' order)\n");
        for c in &o.level_counts {
            let blocks: Vec<String> = c
                .by_block
                .iter()
                .map(|b| {
                    b.iter()
                        .map(|n| n.to_string())
                        .collect::<Vec<_>>()
                        .join("/")
                })
                .collect();
            let _ = writeln!(
                s,
                "  {:<18} {}   [{}]",
                c.column,
                counts(&c.levels, &c.counts),
                blocks.join(" · ")
            );
        }
        Some(s)
    }
}
