//! "Tasks": every task's block and levels, as written to the design file.

use std::fmt::Write;

use super::{level, DesignSection};
use crate::experiment::Outcome;
use crate::report::html::page::{num_cell, table};

pub struct Tasks;

impl DesignSection for Tasks {
    fn names(&self) -> (&'static str, &'static str) {
        ("tasks", "Tasks")
    }

    fn html(&self, o: &Outcome) -> String {
        let mut header = vec!["task", "block"];
        header.extend(o.columns.iter().map(String::as_str));
        let rows: Vec<String> = o
            .tasks
            .iter()
            .map(|t| {
                let mut r = num_cell(&t.task.to_string()) + &num_cell(&t.block.to_string());
                for v in &t.levels {
                    r.push_str(&num_cell(&level(*v)));
                }
                r
            })
            .collect();
        table("tasks", &header, &rows)
    }

    fn text(&self, o: &Outcome) -> Option<String> {
        let w = o.columns.iter().map(|c| c.len()).max().unwrap_or(6).max(6);
        let mut s = String::from("Tasks\n  task block");
        for c in &o.columns {
            let _ = write!(s, " {c:>w$}");
        }
        s.push('\n');
        for t in &o.tasks {
            let _ = write!(s, "  {:>4} {:>5}", t.task, t.block);
            for v in &t.levels {
                let _ = write!(s, " {:>w$}", level(*v));
            }
            s.push('\n');
        }
        Some(s)
    }
}
