//! A finished design as a results document: its tasks, criteria, expected
//! precision, the sample sizes it implies, level counts and how the search went.

use serde::{Deserialize, Serialize};

use super::file::{Plan, Prior};
use super::info::{criteria, standard_errors, Draws};
use super::rehearse::Recovery;
use super::tasks::{level_counts, LevelCount, Tasks};
use crate::data::write::Values;

/// The t-ratio the sample sizes are for.
pub const T_RATIO: f64 = 1.96;

/// One task of the design.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TaskRow {
    pub task: usize,
    pub block: usize,
    /// The levels, in the order of `columns`.
    pub levels: Vec<f64>,
}

/// One parameter's expected precision and the sample it needs.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Precision {
    pub parameter: String,
    pub prior: Prior,
    /// Expected standard error for one respondent answering every task, at the prior means.
    pub standard_error: Option<f64>,
    /// Respondents answering every task for a t-ratio of 1.96: (1.96 · se / |prior mean|)²;
    /// `None` when the prior mean is 0 (no sample is enough) or the information is singular.
    pub sample_size: Option<f64>,
    /// The same in respondents who each answer one block (`sample_size` × blocks).
    pub respondents: Option<f64>,
}

/// How the search went.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SearchFigures {
    pub starts: usize,
    /// The best start (1-based).
    pub best_start: usize,
    /// The D-error of each random level-balanced start before the search, and after it.
    pub start_d_errors: Vec<f64>,
    pub reached_d_errors: Vec<f64>,
    pub sweeps: usize,
    pub swaps_tried: usize,
    pub seconds: f64,
    /// When each start finished, in seconds from the search's beginning.
    pub start_seconds: Vec<f64>,
}

/// The results document of `sharecast design`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Outcome {
    pub title: Option<String>,
    pub alternatives: Vec<String>,
    pub parameters: Vec<String>,
    /// The design columns after `task` and `block`: `<attribute>_<alternative>`.
    pub columns: Vec<String>,
    pub tasks: Vec<TaskRow>,
    pub blocks: usize,
    /// Whether any prior has an sd: `d_error` and `a_error` are then means over the prior draws.
    pub bayesian: bool,
    /// Prior draws averaged over (1 with fixed priors).
    pub draws: usize,
    pub d_error: f64,
    pub a_error: f64,
    /// The D-error at the prior means (equal to `d_error` with fixed priors).
    pub d_error_at_means: f64,
    pub standard_errors: Vec<Precision>,
    /// The largest of the parameters' `sample_size` (those with a non-zero prior).
    pub sample_size: Option<f64>,
    /// The same in respondents who each answer one block.
    pub respondents: Option<f64>,
    pub level_counts: Vec<LevelCount>,
    /// Whether every column's levels are balanced within one count in each block.
    pub balanced: bool,
    pub search: SearchFigures,
    /// The rehearsal (`--simulate`), when run.
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub rehearsal: Option<Recovery>,
}

/// Gathers the document of a finished design.
pub fn assemble(plan: &Plan, tasks: &Tasks, draws: &Draws, search: SearchFigures) -> Outcome {
    let per = plan.per_block();
    let rows = (0..tasks.count())
        .map(|t| TaskRow {
            task: t + 1,
            block: t / per + 1,
            levels: tasks.values(plan, t),
        })
        .collect();
    let c = criteria(plan, tasks, draws);
    let at_means = criteria(plan, tasks, &Draws::means(plan));
    let ses = standard_errors(plan, tasks);
    let precision: Vec<Precision> = plan
        .parameters()
        .into_iter()
        .zip(plan.priors())
        .enumerate()
        .map(|(k, (parameter, prior))| {
            let se = ses.as_ref().map(|s| s[k]);
            let n = se
                .filter(|_| prior.mean != 0.0)
                .map(|s| (T_RATIO * s / prior.mean.abs()).powi(2));
            Precision {
                parameter,
                prior,
                standard_error: se,
                sample_size: n,
                respondents: n.map(|n| n * plan.blocks as f64),
            }
        })
        .collect();
    let sample_size = precision
        .iter()
        .filter_map(|p| p.sample_size)
        .fold(None, |m: Option<f64>, v| Some(m.map_or(v, |m| m.max(v))));
    let counts = level_counts(plan, tasks);
    Outcome {
        title: plan.title.clone(),
        alternatives: plan.alternatives.clone(),
        parameters: plan.parameters(),
        columns: plan.columns.iter().map(|c| c.name.clone()).collect(),
        tasks: rows,
        blocks: plan.blocks,
        bayesian: plan.bayesian(),
        draws: draws.count(),
        d_error: c.d_error,
        a_error: c.a_error,
        d_error_at_means: at_means.d_error,
        standard_errors: precision,
        sample_size,
        respondents: sample_size.map(|n| n * plan.blocks as f64),
        balanced: super::tasks::balanced(&counts),
        level_counts: counts,
        search,
        rehearsal: None,
    }
}

impl Outcome {
    /// The design as the table `fit` reads (wide layout): `task`, `block`, then the columns.
    pub fn table(&self) -> Vec<(String, Values)> {
        let mut out = vec![
            (
                "task".to_string(),
                Values::Int(self.tasks.iter().map(|t| t.task as i64).collect()),
            ),
            (
                "block".to_string(),
                Values::Int(self.tasks.iter().map(|t| t.block as i64).collect()),
            ),
        ];
        for (c, name) in self.columns.iter().enumerate() {
            out.push((
                name.clone(),
                Values::Num(self.tasks.iter().map(|t| t.levels[c]).collect()),
            ));
        }
        out
    }
}
