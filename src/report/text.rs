//! The terminal fit report, in sharecast's own layout: a header block, the
//! fit block, estimates grouped by the spec term they come from, shares,
//! diagnostics and the cautions line.

use std::fmt::Write;

use super::{cautions, num, pval, red};
use crate::estimate::{DiagnosticKind, Fit};
use crate::spec::{Spec, Term};

pub fn header(spec: &Spec, fit: &Fit, colour: bool) -> String {
    let mut s = String::new();
    let st = &fit.stats;
    let title = spec.title.as_deref().unwrap_or("(untitled model)");
    let _ = writeln!(s, "━━ sharecast ━━ {title}");
    let shape = if fit.family.abilities().ordered {
        format!("{} ordered categories", spec.alternatives.len())
    } else {
        format!(
            "{} alternatives · base `{}`",
            spec.alternatives.len(),
            spec.alternatives[spec.base].name
        )
    };
    let _ = writeln!(
        s,
        "model    {} · {shape} · {} parameters estimated",
        spec.family, st.estimated_parameters
    );
    for line in fit.family.structure(spec) {
        let _ = writeln!(s, "         {line}");
    }
    let groups = if fit.design.obs.group.is_some() {
        format!(" · {} decision makers", st.groups)
    } else {
        String::new()
    };
    let _ = writeln!(
        s,
        "data     {} · {} situations{groups}",
        spec.data.file_written, st.situations
    );
    let status = if st.converged {
        "converged".to_string()
    } else {
        red("DID NOT CONVERGE", colour)
    };
    let _ = writeln!(
        s,
        "search   {status}: {} quasi-Newton iterations, {} Newton steps, {} passes over the data, {:.3} s (gradient norm {:.2e})",
        st.iterations, st.newton_steps, st.passes, st.seconds, st.gradient_norm
    );
    let _ = writeln!(s);
    let _ = writeln!(s, "how well it fits");
    let _ = writeln!(
        s,
        "  log-likelihood {:>14.4}   zero model {:>19.4}   constants only {:>14.4}",
        st.log_likelihood, st.null_log_likelihood, st.constants_log_likelihood
    );
    let _ = writeln!(
        s,
        "  rho² vs zero   {:>14.4}   rho² vs constants {:>12.4}   adjusted rho² {:>15.4}",
        st.rho_squared, st.rho_squared_constants, st.adjusted_rho_squared
    );
    let _ = writeln!(
        s,
        "  AIC            {:>14.4}   BIC             {:>14.4}",
        st.aic, st.bic
    );
    let _ = writeln!(
        s,
        "  (zero model: every coefficient 0, so each situation's available alternatives are equally likely)"
    );
    s
}

pub fn estimates(spec: &Spec, fit: &Fit) -> String {
    let mut s = String::new();
    let robust = fit.stats.inference == "robust";
    let odds = fit.family.abilities().odds_ratios;
    let _ = writeln!(
        s,
        "estimates · value ± standard error {}; t, p and the 95% interval use these errors{}",
        super::errors_label(fit),
        if robust {
            " (the Hessian's errors beside)"
        } else {
            ""
        }
    );
    let _ = writeln!(
        s,
        "  {:<26}{:>24}{:>9}{:>10}   {:<25}{}{}",
        "parameter",
        "value ± s.e.",
        "t",
        "p",
        "95% interval",
        if robust { "   Hessian s.e." } else { "" },
        if odds { "  odds ×" } else { "" }
    );
    let mut last_term: Option<String> = None;
    for (k, row) in fit.parameters.iter().enumerate() {
        if last_term.as_deref() != Some(row.term.as_str()) {
            let _ = writeln!(s, "  ┌ {}", row.term);
            last_term = Some(row.term.clone());
        }
        if row.fixed {
            let _ = writeln!(s, "  │ {:<24}{}   (fixed)", row.name, num(row.estimate, 12));
            continue;
        }
        let interval = format!("{} … {}", num(row.ci_low, 0), num(row.ci_high, 0));
        let hessian = if robust {
            format!("  {}", num(row.std_error, 13))
        } else {
            String::new()
        };
        let odds_col = match (&spec.parameters[k].term, odds) {
            (Term::Characteristic(_), true) => format!("  {}", num(row.estimate.exp(), 8)),
            _ => String::new(),
        };
        let value = format!(
            "{} ± {:<9}",
            num(row.estimate, 12),
            num(super::shown_error(fit, row), 0).trim()
        );
        let _ = writeln!(
            s,
            "  │ {:<24}{value}{}{:>10}   {:<25}{hessian}{odds_col}",
            row.name,
            tstat(row.t_stat),
            pval(row.p_value),
            interval
        );
    }
    let against: Vec<String> = fit
        .parameters
        .iter()
        .filter(|r| r.null != 0.0 && !r.fixed)
        .map(|r| format!("{} against {}", r.name, (r.null * 1e6).round() / 1e6))
        .collect();
    if !against.is_empty() {
        let _ = writeln!(
            s,
            "  t and p test each value against 0, except {}",
            against.join(", ")
        );
    }
    s
}

/// A t statistic in its column, a dash when there is none.
fn tstat(t: f64) -> String {
    if t.is_finite() {
        format!("{t:>9.2}")
    } else {
        format!("{:>9}", "—")
    }
}

pub fn shares(fit: &Fit) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "shares (weighted)   observed   predicted");
    for r in &fit.shares {
        let _ = writeln!(
            s,
            "  {:<16}{:>11.4}{:>12.4}",
            r.alternative, r.observed, r.predicted
        );
    }
    s
}

pub fn diagnostics(fit: &Fit, colour: bool) -> String {
    let mut s = String::new();
    if fit.diagnostics.is_empty() {
        let _ = writeln!(
            s,
            "diagnostics: none — the Hessian is well conditioned and no coefficient runs off"
        );
        return s;
    }
    let _ = writeln!(s, "diagnostics");
    for d in &fit.diagnostics {
        let line = format!("  ! {}", d.message);
        let line = if d.kind == DiagnosticKind::NotConverged {
            red(&line, colour)
        } else {
            line
        };
        let _ = writeln!(s, "{line}");
    }
    s
}

/// The whole fit report without analysis sections.
pub fn fit_report(spec: &Spec, fit: &Fit, colour: bool) -> String {
    let mut s = header(spec, fit, colour);
    s.push('\n');
    s.push_str(&estimates(spec, fit));
    s.push('\n');
    s.push_str(&shares(fit));
    s.push('\n');
    s.push_str(&diagnostics(fit, colour));
    s
}

/// The closing line of every report.
pub fn closing(spec: &Spec, fit: &Fit) -> String {
    format!("{}\n", cautions(spec, &*fit.family))
}

/// The simulation check: each estimate on the second seed's draws.
pub fn draws_check(c: &crate::estimate::simcheck::DrawsCheck) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "simulation check: refitted on the draws of seed {} (the fit used seed {})",
        c.other_seed, c.seed
    );
    let _ = writeln!(
        s,
        "  {:<22}{:>13}{:>13}{:>13}{:>12}",
        "parameter", "this fit", "other seed", "difference", "in s.e."
    );
    for r in &c.rows {
        let _ = writeln!(
            s,
            "  {:<22}{:>13.5}{:>13.5}{:>13.5}{:>12.3}",
            r.name, r.estimate, r.other, r.difference, r.in_std_errors
        );
    }
    let verdict = if !c.largest.is_finite() {
        "cannot be judged: the fit has no standard errors to measure the moves against"
    } else if c.largest < 0.1 {
        "the draws are enough: no estimate moves by a tenth of its standard error"
    } else if c.largest < 0.5 {
        "simulation noise is small next to sampling noise; more draws would tighten it"
    } else {
        "estimates move by half a standard error or more: use more draws ([simulation].draws)"
    };
    let _ = writeln!(
        s,
        "  log-likelihood {:.4} against {:.4} · largest move {:.3} s.e.: {verdict}",
        c.log_likelihood, c.other_log_likelihood, c.largest
    );
    s
}
