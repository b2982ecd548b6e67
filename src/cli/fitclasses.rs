//! The latent class parts of `sharecast fit`: `--classes 1..4` (the fit by
//! number of classes instead of the report) and `--classes-out FILE` (each
//! decision maker's class probabilities, prior and posterior).

use std::path::Path;
use std::process::ExitCode;

use crate::analysis::class_count::{self, CountRow};
use crate::data::write::Values;
use crate::data::Dataset;
use crate::error::{Error, Result};
use crate::estimate::Fit;
use crate::spec::Spec;

/// `fit --classes RANGE`: fits each number of classes and prints the table.
pub fn counts(spec: &Spec, ds: &Dataset, range: &str, json: bool) -> Result<ExitCode> {
    let counts = class_count::parse_counts(range)?;
    let obs = std::sync::Arc::new(ds.obs.clone());
    let rows =
        super::with_line(|line| class_count::by_count(spec, obs, counts, &|s| line.step(s)))?;
    if json {
        let doc = serde_json::json!({ "class_counts": rows });
        crate::outln!("{}", serde_json::to_string_pretty(&doc).unwrap_or_default());
    } else {
        crate::out!("{}", table(&rows, spec.data.group.is_some()));
    }
    Ok(ExitCode::SUCCESS)
}

/// The text table of the fit by number of classes.
fn table(rows: &[CountRow], panel: bool) -> String {
    let best = |f: fn(&CountRow) -> f64| {
        rows.iter()
            .filter(|r| r.log_likelihood.is_finite())
            .min_by(|a, b| f(a).total_cmp(&f(b)))
            .map(|r| r.classes)
    };
    let (aic, bic, bic_n) = (
        best(|r| r.aic),
        best(|r| r.bic),
        best(|r| r.bic_decision_makers),
    );
    let mark = |on: Option<usize>, k: usize| if on == Some(k) { "◂" } else { " " };
    let mut s =
        String::from("fit by number of latent classes · the same data; one class is the logit\n");
    s.push_str(&format!(
        "  {:>7}  {:>14}  {:>10}  {:>13}  {:>13}  {:>15}  {:>14}  {:>14}\n",
        "classes",
        "log-likelihood",
        "parameters",
        "AIC",
        "BIC",
        "BIC by people",
        "smallest class",
        "starts at best"
    ));
    for r in rows {
        s.push_str(&format!(
            "  {:>7}  {:>14.4}  {:>10}  {:>12.2}{}  {:>12.2}{}  {:>14.2}{}  {:>14.3}  {:>14}{}\n",
            r.classes,
            r.log_likelihood,
            r.estimated_parameters,
            r.aic,
            mark(aic, r.classes),
            r.bic,
            mark(bic, r.classes),
            r.bic_decision_makers,
            mark(bic_n, r.classes),
            r.smallest_share,
            format!("{} of {}", r.reached_best, r.starts),
            if r.converged {
                ""
            } else {
                "  (did not converge)"
            }
        ));
    }
    s.push_str(&format!(
        "  ◂ the lowest of its column. BIC counts situations; \"BIC by people\" counts {} instead. A class with a very small share, or a number of classes few starts agree on, is a sign of too many.\n",
        if panel { "decision makers (the panel's independent units)" } else { "decision makers (here each situation is one)" }
    ));
    s
}

/// `fit --classes-out FILE`: one row per decision maker (named by the group
/// column, or the data row of their situation), with the membership model's
/// class probabilities, the posterior ones given their choices, and the
/// likeliest class.
pub fn write_classes(spec: &Spec, fit: &Fit, ds: &Dataset, path: &Path, force: bool) -> Result<()> {
    let d = &fit.design;
    let (Some(post), Some(prior)) = (
        fit.family.posterior_classes(d, &fit.beta),
        fit.family.prior_classes(d, &fit.beta),
    ) else {
        return Err(Error::Usage(format!(
            "--classes-out: the {} family has no latent classes (they come with [model].family = \"latent-class\")",
            fit.family.name()
        )));
    };
    let c = post.classes;
    let rows: Vec<usize> = post.first.iter().map(|&i| d.obs.first_row[i]).collect();
    let mut columns = Vec::new();
    match &spec.data.group {
        Some(g) => {
            let keys = ds.table.keys(g, "[data].group")?;
            let named = rows
                .iter()
                .map(|&r| keys.get(r - 1).cloned().unwrap_or_default());
            columns.push((g.clone(), Values::Text(named.collect())));
        }
        None => columns.push((
            "row".to_string(),
            Values::Int(rows.iter().map(|&r| r as i64).collect()),
        )),
    }
    for k in 0..c {
        let col = post
            .first
            .iter()
            .map(|&i| prior.probabilities[i * c + k])
            .collect();
        columns.push((format!("prior_class{}", k + 1), Values::Num(col)));
    }
    for k in 0..c {
        let col = (0..post.first.len())
            .map(|n| post.probabilities[n * c + k])
            .collect();
        columns.push((format!("posterior_class{}", k + 1), Values::Num(col)));
    }
    let likeliest = (0..post.first.len())
        .map(|n| {
            let p = &post.probabilities[n * c..(n + 1) * c];
            (0..c)
                .max_by(|&a, &b| p[a].total_cmp(&p[b]))
                .map_or(1, |k| k as i64 + 1)
        })
        .collect();
    columns.push(("likeliest_class".to_string(), Values::Int(likeliest)));
    crate::data::write::table(path, force, &columns)?;
    crate::errln!(
        "wrote {} decision makers' class probabilities to {}",
        rows.len(),
        path.display()
    );
    Ok(())
}
