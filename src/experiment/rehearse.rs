//! The rehearsal of a study (`design --simulate N`): respondents simulated
//! from the prior means (each answers one block), their answers and a
//! generated spec written beside the design, the logit fitted to them, and
//! how well the fit recovers the priors.

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::file::Plan;
use super::outcome::Outcome;
use crate::data::write::{self, Values};
use crate::error::{Error, Result};
use crate::rng::Rng;

/// Recovered parameters further than this many standard errors from the
/// truth are flagged (|z| above 3.5 happens about once in 2,000 by chance).
pub const WITHIN: f64 = 3.5;
/// The most respondents a rehearsal simulates.
pub const MAX_RESPONDENTS: usize = 1_000_000;

/// One parameter: the truth (its prior mean) against the estimate.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Recovered {
    pub parameter: String,
    pub truth: f64,
    pub estimate: f64,
    pub standard_error: f64,
    /// (estimate − truth) / standard error.
    pub z: f64,
    pub within: bool,
}

/// The rehearsal's figures.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Recovery {
    pub respondents: usize,
    pub answers: String,
    pub spec: String,
    pub log_likelihood: f64,
    pub rho_squared: f64,
    pub parameters: Vec<Recovered>,
    /// Whether every parameter is within 3.5 standard errors of its truth.
    pub all_within: bool,
}

/// Simulated answers: one row per respondent and task of their block
/// (respondent n answers block (n − 1) mod blocks + 1), choices drawn from
/// the logit at the prior means.
pub fn answers(
    plan: &Plan,
    outcome: &Outcome,
    respondents: usize,
) -> Result<Vec<(String, Values)>> {
    let truth: Vec<f64> = plan.priors().iter().map(|p| p.mean).collect();
    let tasks = super::tasks::Tasks::from_values(
        plan,
        &outcome
            .tasks
            .iter()
            .map(|t| t.levels.clone())
            .collect::<Vec<_>>(),
    )
    .ok_or_else(|| {
        Error::spec(
            &plan.path,
            "the design's levels are not those of this design file",
        )
    })?;
    let coding = super::info::Coding::new(plan);
    let (j, k) = (coding.j, coding.k);
    let mut x = vec![0.0; j * k];
    let mut rng = Rng::new(plan.seed ^ 0x7e4e_a75a_1b0c_5eed);
    let per = plan.per_block();
    let (mut who, mut task, mut block, mut choice) = (vec![], vec![], vec![], vec![]);
    let mut levels: Vec<Vec<f64>> = vec![Vec::new(); outcome.columns.len()];
    for n in 0..respondents {
        let b = n % plan.blocks;
        for t in b * per..(b + 1) * per {
            coding.rows(&tasks, t, &mut x);
            let best = (0..j)
                .map(|alt| {
                    let v: f64 = x[alt * k..(alt + 1) * k]
                        .iter()
                        .zip(&truth)
                        .map(|(a, b)| a * b)
                        .sum();
                    v + rng.gumbel()
                })
                .enumerate()
                .fold(
                    (0, f64::NEG_INFINITY),
                    |m, (i, u)| if u > m.1 { (i, u) } else { m },
                );
            who.push(n as i64 + 1);
            task.push(t as i64 + 1);
            block.push(b as i64 + 1);
            choice.push(plan.alternatives[best.0].clone());
            for (c, col) in levels.iter_mut().enumerate() {
                col.push(outcome.tasks[t].levels[c]);
            }
        }
    }
    let mut out = vec![
        ("respondent".to_string(), Values::Int(who)),
        ("task".to_string(), Values::Int(task)),
        ("block".to_string(), Values::Int(block)),
    ];
    for (name, col) in outcome.columns.iter().zip(levels) {
        out.push((name.clone(), Values::Num(col)));
    }
    out.push(("choice".to_string(), Values::Text(choice)));
    Ok(out)
}

/// The spec that fits the answers: the logit in the wide layout, a
/// constant for each alternative the design gave one (the others held at 0).
pub fn spec_text(plan: &Plan, answers_file: &str) -> String {
    let title = plan.title.as_deref().unwrap_or("the design");
    let mut s = format!(
        "# Written by `sharecast design --simulate`: the logit fitted to simulated answers.\ntitle = {}\n\n[data]\nfile = {}\nlayout = \"wide\"\nchoice = \"choice\"\ngroup = \"respondent\"\n\n[model]\nfamily = \"logit\"\n",
        toml_string(&format!("Rehearsal of {title}")),
        toml_string(answers_file)
    );
    let with: Vec<usize> = plan.constants.iter().map(|c| c.alternative).collect();
    let base = (0..plan.alternatives.len()).find(|j| !with.contains(j));
    match (with.is_empty(), base) {
        (false, Some(b)) => s.push_str(&format!("base = {}\n", toml_string(&plan.alternatives[b]))),
        _ => s.push_str("constants = false\n"),
    }
    s.push('\n');
    for a in &plan.alternatives {
        s.push_str(&format!("[alternatives.{a}]\n"));
    }
    for (i, attr) in plan.attributes.iter().enumerate() {
        let cols: Vec<String> = attr
            .enters
            .iter()
            .filter_map(|&j| plan.column_of(i, j))
            .map(|c| {
                let col = &plan.columns[c];
                format!("{} = \"{}\"", plan.alternatives[col.alternative], col.name)
            })
            .collect();
        s.push_str(&format!(
            "\n[[attribute]]\nname = \"{}\"\ncolumns = {{ {} }}\n",
            attr.name,
            cols.join(", ")
        ));
    }
    let held: Vec<usize> = (0..plan.alternatives.len())
        .filter(|j| !with.is_empty() && Some(*j) != base && !with.contains(j))
        .collect();
    if !held.is_empty() {
        s.push_str("\n[parameters]\n");
        for j in held {
            s.push_str(&format!("asc_{} = {{ fixed = 0 }}\n", plan.alternatives[j]));
        }
    }
    s
}

fn toml_string(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

/// Writes the answers and the spec, fits the spec and compares its
/// estimates with the priors' means.
pub fn run(
    plan: &Plan,
    outcome: &Outcome,
    respondents: usize,
    (answers_path, spec_path): (&Path, &Path),
    force: bool,
    progress: crate::estimate::Progress,
) -> Result<Recovery> {
    write::check_overwrite(answers_path, force)?;
    write::check_overwrite(spec_path, force)?;
    let table = answers(plan, outcome, respondents)?;
    write::table(answers_path, force, &table)?;
    let relative = relative_to(answers_path, spec_path);
    write::text(spec_path, force, &spec_text(plan, &relative))?;
    let spec = crate::model::read_spec(spec_path)?;
    let ds = crate::data::load(&spec, &crate::data::Extra::default())?;
    crate::model::admit(&spec, &ds.obs)?;
    let fit = crate::estimate::fit(&spec, std::sync::Arc::new(ds.obs), progress)?;
    let mut rows = Vec::new();
    for (name, prior) in plan.parameters().into_iter().zip(plan.priors()) {
        let row = fit
            .parameters
            .iter()
            .find(|r| r.name == name)
            .ok_or_else(|| {
                Error::Estimate(format!("the rehearsal's fit has no parameter `{name}`"))
            })?;
        let z = (row.estimate - prior.mean) / row.std_error;
        rows.push(Recovered {
            parameter: name,
            truth: prior.mean,
            estimate: row.estimate,
            standard_error: row.std_error,
            z,
            within: z.abs() <= WITHIN,
        });
    }
    Ok(Recovery {
        respondents,
        answers: answers_path.display().to_string(),
        spec: spec_path.display().to_string(),
        log_likelihood: fit.stats.log_likelihood,
        rho_squared: fit.stats.rho_squared,
        all_within: rows.iter().all(|r| r.within),
        parameters: rows,
    })
}

/// The answers file as the spec names it: its file name when both sit in
/// one folder, else its full path.
fn relative_to(answers: &Path, spec: &Path) -> String {
    let same = answers
        .parent()
        .map(|p| p.to_path_buf())
        .unwrap_or_default()
        == spec.parent().map(|p| p.to_path_buf()).unwrap_or_default();
    match (same, answers.file_name()) {
        (true, Some(name)) => name.to_string_lossy().to_string(),
        _ => std::path::absolute(answers)
            .unwrap_or_else(|_| answers.to_path_buf())
            .display()
            .to_string(),
    }
}

/// Where `--simulate` writes beside the design `out`: `<stem>_answers.csv`
/// and `<stem>_answers.toml`.
pub fn beside(out: &Path) -> (std::path::PathBuf, std::path::PathBuf) {
    let stem = out
        .file_stem()
        .map(|s| s.to_string_lossy().to_string())
        .unwrap_or_else(|| "design".into());
    (
        out.with_file_name(format!("{stem}_answers.csv")),
        out.with_file_name(format!("{stem}_answers.toml")),
    )
}
