//! `sharecast bench --model mixed --correlated`: the mixed logit panel of
//! `bench::mixed` simulated with correlated tastes (the four random
//! coefficients' normals jointly normal, a known Cholesky factor), fitted in
//! one run twice on the same data: the independent model and the correlated
//! one (`correlated = true`). For each it times one likelihood + gradient
//! pass and the whole `estimate::fit`, split into its search stages (the
//! logit, the independent mixed model with the Cholesky entries held at 0,
//! the full model) by the search's own progress reports.

use std::path::Path;
use std::process::ExitCode;
use std::sync::{Arc, Mutex};
use std::time::Instant;

use serde::Serialize;
use serde_json::json;

use super::mixed::{diagonal, spec_text, time_passes, truth, MixedOptions, ATTRS};
use super::ms;
use crate::design::Design;
use crate::error::{Error, Result};
use crate::estimate::Step;

/// The true Cholesky factor's entries below the diagonal (row, column,
/// value; rows and columns in the attributes' order); the diagonal is the
/// spreads of `bench::mixed::TRUTH`.
pub const OFF_DIAGONAL: &[(usize, usize, f64)] = &[
    (1, 0, 0.15),
    (2, 0, -0.2),
    (2, 1, 0.1),
    (3, 0, 0.3),
    (3, 1, 0.0),
    (3, 2, -0.2),
];

/// The full true Cholesky factor.
fn cholesky() -> [[f64; 4]; 4] {
    let mut l = diagonal();
    for &(i, j, v) in OFF_DIAGONAL {
        l[i][j] = v;
    }
    l
}

/// The true value of a parameter of either spec (`chol_<row>_<column>` included).
fn true_value(name: &str) -> f64 {
    OFF_DIAGONAL
        .iter()
        .find(|(i, j, _)| name == format!("chol_{}_{}", ATTRS[*i], ATTRS[*j]))
        .map_or_else(|| truth(name), |t| t.2)
}

/// One search stage of a fit as its progress reports show it.
#[derive(Clone, Debug, Serialize)]
pub struct Stage {
    pub name: &'static str,
    /// Quasi-Newton evaluations (one pass over the data each).
    pub quasi_newton_passes: usize,
    /// Newton iterations reported: the steps taken (each on a Hessian
    /// differenced from the gradient, or reused) and the one that confirms
    /// convergence.
    pub newton_iterations: usize,
    /// Wall time from the stage's start to the next stage's first report.
    pub seconds: f64,
}

/// One model's figures.
#[derive(Clone, Debug, Serialize)]
pub struct ModelFigures {
    pub parameters: usize,
    pub pass_seconds: f64,
    pub fit_seconds: f64,
    /// Every pass the fit counted (differenced Hessians' included).
    pub passes: usize,
    pub stages: Vec<Stage>,
    /// After the search: covariances, reference model, statistics.
    pub finish_seconds: f64,
    pub log_likelihood: f64,
    pub converged: bool,
    /// The largest |estimate - truth| / standard error.
    pub worst_t: f64,
}

/// Splits the progress reports (seconds since the fit began, phase) into
/// stages: a stage is a run of quasi-Newton reports then Newton reports, or
/// of the quasi-Newton reports of a search for a start alone
/// (`optimise::APPROACH`), so any other change of phase opens the next; the
/// first stage of a fit that starts from the logit is Newton's alone.
fn stages(steps: &[(f64, &'static str)], names: &[&'static str]) -> Vec<Stage> {
    let mut out: Vec<Stage> = Vec::new();
    let mut last = "";
    for &(t, phase) in steps {
        // A search's quasi-Newton reports are followed by its Newton ones;
        // any other change of phase opens the next stage.
        let opens =
            out.is_empty() || (phase != last && !(last == "quasi-Newton" && phase == "Newton"));
        if opens {
            if let Some(prev) = out.last_mut() {
                prev.seconds = t - prev.seconds;
            }
            let name = names.get(out.len()).copied().unwrap_or("further search");
            out.push(Stage {
                name,
                quasi_newton_passes: 0,
                newton_iterations: 0,
                seconds: if out.is_empty() { 0.0 } else { t },
            });
        }
        if let Some(s) = out.last_mut() {
            match phase {
                "Newton" => s.newton_iterations += 1,
                _ => s.quasi_newton_passes += 1,
            }
        }
        last = phase;
    }
    if let (Some(s), Some(&(t, _))) = (out.last_mut(), steps.last()) {
        s.seconds = t - s.seconds;
    }
    out
}

/// Times one pass and the whole fit of the spec at `path`.
fn one_model(path: &Path, repeats: usize, names: &[&'static str]) -> Result<ModelFigures> {
    let (spec, ds) = crate::workspace::open(path, &Default::default())?;
    let family = crate::model::for_spec(&spec)?;
    let d = Design::build(&spec, Arc::new(ds.obs.clone()));
    family
        .check_data(&spec, &d)
        .map_err(|m| Error::spec(&spec.path, m))?;
    let theta: Vec<f64> = spec
        .parameters
        .iter()
        .map(|p| true_value(&p.name))
        .collect();
    let (_, _, pass_s, _) = time_passes(&*family, &d, &theta, repeats);
    drop((family, d));
    let log: Mutex<Vec<(f64, &'static str)>> = Mutex::new(Vec::new());
    let t = Instant::now();
    let record = |s: Step| {
        if let Ok(mut l) = log.lock() {
            l.push((t.elapsed().as_secs_f64(), s.phase));
        }
    };
    let fit = crate::estimate::fit(&spec, Arc::new(ds.obs), &record)?;
    let fit_s = t.elapsed().as_secs_f64();
    let steps = log.into_inner().unwrap_or_default();
    let stages = stages(&steps, names);
    let searched = steps.last().map_or(0.0, |s| s.0);
    let worst_t = fit
        .parameters
        .iter()
        .map(|r| (r.estimate - true_value(&r.name)).abs() / r.std_error)
        .fold(0.0, f64::max);
    Ok(ModelFigures {
        parameters: spec.parameters.len(),
        pass_seconds: pass_s,
        fit_seconds: fit_s,
        passes: fit.stats.passes,
        stages,
        finish_seconds: fit_s - searched,
        log_likelihood: fit.stats.log_likelihood,
        converged: fit.stats.converged,
        worst_t,
    })
}

/// Writes the correlated panel and both specs into `dir`, fits both and
/// reports them side by side.
pub fn measure(o: &MixedOptions, dir: &Path) -> Result<ExitCode> {
    let t = Instant::now();
    let independent = super::mixed::write_set(dir, o, &cholesky())?;
    let correlated = dir.join("correlated.toml");
    std::fs::write(&correlated, spec_text(o.draws, true)).map_err(|e| Error::io(&correlated, e))?;
    let generate_s = t.elapsed().as_secs_f64();
    if o.write_only {
        crate::outln!(
            "wrote {}, {} and their data ({:.1} s)",
            independent.display(),
            correlated.display(),
            generate_s
        );
        return Ok(ExitCode::SUCCESS);
    }
    let ind = one_model(&independent, o.repeats, &["logit", "independent mixed"])?;
    let cor = one_model(
        &correlated,
        o.repeats,
        &[
            "logit",
            "independent mixed, approached (Cholesky entries held at 0)",
            "correlated mixed",
        ],
    )?;
    let ratio = cor.fit_seconds / ind.fit_seconds;
    if o.json {
        let doc = json!({
            "decision_makers": o.decision_makers, "tasks": o.tasks, "alternatives": 4,
            "draws": o.draws, "generate_seconds": generate_s,
            "independent": ind, "correlated": cor, "fit_ratio": ratio,
        });
        crate::outln!("{doc}");
        return Ok(ExitCode::SUCCESS);
    }
    crate::outln!(
        "mixed logit panel with correlated tastes: {} decision makers x {} tasks x 4 alternatives, 4 correlated random + 3 fixed coefficients, {} Halton draws",
        o.decision_makers, o.tasks, o.draws
    );
    crate::outln!("  data written              {}", ms(generate_s));
    for (label, f) in [("independent", &ind), ("correlated", &cor)] {
        print_model(label, f)?;
    }
    crate::outln!("  correlated fit / independent fit: {ratio:.2}x (goal: within 1.5x)");
    Ok(ExitCode::SUCCESS)
}

fn print_model(label: &str, f: &ModelFigures) -> Result<()> {
    crate::outln!(
        "  {label} model, {} parameters: one pass {} · whole fit {} ({} passes counted, log-likelihood {:.4}{}; largest |estimate - truth| / s.e. {:.2})",
        f.parameters,
        ms(f.pass_seconds),
        ms(f.fit_seconds),
        f.passes,
        f.log_likelihood,
        if f.converged { "" } else { ", not converged" },
        f.worst_t
    );
    // Each stage's time also in passes' time: where the differenced
    // Hessians of the Newton steps go.
    let passes = |t: f64| t / f.pass_seconds;
    for s in &f.stages {
        crate::outln!(
            "    {:<48} {:>4} quasi-Newton passes, {:>2} Newton iterations  {:>9}  ({:.0} passes' time)",
            s.name,
            s.quasi_newton_passes,
            s.newton_iterations,
            ms(s.seconds),
            passes(s.seconds)
        );
    }
    crate::outln!(
        "    {:<48} {:>57}  ({:.0} passes' time)",
        "after the search",
        ms(f.finish_seconds),
        passes(f.finish_seconds)
    );
    Ok(())
}
