//! The side-by-side report of `sharecast compare`: the models named M1, M2,
//! ...; each parameter as a block with one line per model (value ± error, the
//! errors named per model); the fit statistics one model per line; the AIC and
//! BIC ranking only when the models share their data; likelihood-ratio tests.

use std::fmt::Write;

use crate::analysis::compare::Comparison;
use crate::estimate::Fit;

pub fn text(labels: &[String], fits: &[&Fit], c: &Comparison) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "━━ sharecast compare ━━ {} models", fits.len());
    for ((id, l), f) in c.ids.iter().zip(labels).zip(fits) {
        let _ = writeln!(s, "  {id:<4}{l}");
        let _ = writeln!(
            s,
            "      {} · {} situations · errors {}",
            f.family.name(),
            f.stats.situations,
            super::errors_label(f)
        );
    }
    estimates(&mut s, fits, c);
    statistics(&mut s, fits, c);
    ranking(&mut s, c);
    s
}

/// Each parameter as a block, one line per model that has it.
fn estimates(s: &mut String, fits: &[&Fit], c: &Comparison) {
    let _ = writeln!(
        s,
        "\nestimates: value ± standard error (each model's own errors, named above); a model without the parameter is left out"
    );
    let nw = c
        .parameters
        .iter()
        .map(|p| p.chars().count())
        .max()
        .unwrap_or(9)
        .clamp(9, 28);
    for name in &c.parameters {
        let mut first = true;
        for (id, f) in c.ids.iter().zip(fits) {
            let Some(k) = f.names.iter().position(|n| n == name) else {
                continue;
            };
            let p = &f.parameters[k];
            let label = if first { name.as_str() } else { "" };
            first = false;
            let cell = if p.fixed {
                format!("{} (fixed)", super::num(p.estimate, 0).trim())
            } else {
                format!(
                    "{} ± {}",
                    super::num(p.estimate, 10),
                    super::num(super::shown_error(f, p), 0).trim()
                )
            };
            let _ = writeln!(s, "  {label:<nw$}  {id:<4}{cell}");
        }
    }
}

/// The fit statistics, one model per line.
fn statistics(s: &mut String, fits: &[&Fit], c: &Comparison) {
    let _ = writeln!(s, "\nfit (zero model: every coefficient 0, so each situation's available alternatives are equally likely)");
    let _ = writeln!(
        s,
        "  {:<6}{:>11}{:>11}{:>16}{:>15}{:>15}{:>13}{:>13}  converged",
        "model",
        "situations",
        "estimated",
        "log-likelihood",
        "rho² vs zero",
        "adjusted rho²",
        "AIC",
        "BIC"
    );
    for (id, f) in c.ids.iter().zip(fits) {
        let st = &f.stats;
        let _ = writeln!(
            s,
            "  {id:<6}{:>11}{:>11}{:>16.4}{:>15.4}{:>15.4}{:>13.4}{:>13.4}  {}",
            st.situations,
            st.estimated_parameters,
            st.log_likelihood,
            st.rho_squared,
            st.adjusted_rho_squared,
            st.aic,
            st.bic,
            if st.converged { "yes" } else { "NO" }
        );
    }
}

/// The AIC and BIC ranking (or why there is none) and the likelihood-ratio tests.
fn ranking(s: &mut String, c: &Comparison) {
    let order = |r: &[usize]| {
        r.iter()
            .map(|&i| c.ids[i].clone())
            .collect::<Vec<_>>()
            .join(", ")
    };
    match &c.note {
        Some(n) => {
            let _ = writeln!(s, "\n{n}");
        }
        None => {
            let _ = writeln!(
                s,
                "\nbest first (lower is better) · by AIC: {} · by BIC: {}",
                order(&c.aic_rank),
                order(&c.bic_rank)
            );
        }
    }
    if c.nested.is_empty() {
        let _ = writeln!(
            s,
            "no model nests another on the same data, so no likelihood-ratio test applies"
        );
    }
    for n in &c.nested {
        let _ = writeln!(
            s,
            "likelihood ratio, {} within {}: statistic {:.4}, {} df, p {}",
            c.ids[n.restricted],
            c.ids[n.general],
            n.test.statistic,
            n.test.df,
            super::pval(n.test.p_value)
        );
    }
}
