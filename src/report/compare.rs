//! The side-by-side report of `sharecast compare`.

use std::fmt::Write;

use crate::analysis::compare::Comparison;
use crate::estimate::Fit;

pub fn text(labels: &[String], fits: &[&Fit], c: &Comparison) -> String {
    let mut s = String::new();
    let w = labels
        .iter()
        .map(|l| l.chars().count())
        .max()
        .unwrap_or(10)
        .clamp(14, 28)
        + 2;
    let _ = writeln!(s, "━━ sharecast compare ━━ {} models", fits.len());
    for (i, l) in labels.iter().enumerate() {
        let _ = writeln!(s, "  [{}] {l}", i + 1);
    }
    let _ = writeln!(s, "\nestimates (s.e. below; blank = not in that model)");
    let _ = write!(s, "  {:<24}", "parameter");
    for i in 0..fits.len() {
        let _ = write!(s, "{:>w$}", format!("[{}]", i + 1));
    }
    let _ = writeln!(s);
    for name in &c.parameters {
        let _ = write!(s, "  {name:<24}");
        let mut ses = String::new();
        for f in fits {
            match f.names.iter().position(|n| n == name) {
                Some(k) => {
                    let p = &f.parameters[k];
                    let _ = write!(s, "{}", super::num(p.estimate, w));
                    let se = if p.fixed {
                        "(fixed)".to_string()
                    } else {
                        format!("({})", super::num(p.std_error, 0).trim())
                    };
                    let _ = write!(ses, "{se:>w$}");
                }
                None => {
                    let _ = write!(s, "{:>w$}", "");
                    let _ = write!(ses, "{:>w$}", "");
                }
            }
        }
        let _ = writeln!(s);
        let _ = writeln!(s, "  {:<24}{ses}", "");
    }
    let _ = writeln!(s, "\nfit");
    type Row<'a> = (&'a str, &'a dyn Fn(&Fit) -> String);
    let rows: [Row; 8] = [
        ("situations", &|f| f.stats.situations.to_string()),
        ("estimated parameters", &|f| {
            f.stats.estimated_parameters.to_string()
        }),
        ("log-likelihood", &|f| {
            format!("{:.4}", f.stats.log_likelihood)
        }),
        ("rho² vs equal shares", &|f| {
            format!("{:.4}", f.stats.rho_squared)
        }),
        ("adjusted rho²", &|f| {
            format!("{:.4}", f.stats.adjusted_rho_squared)
        }),
        ("AIC", &|f| format!("{:.4}", f.stats.aic)),
        ("BIC", &|f| format!("{:.4}", f.stats.bic)),
        ("converged", &|f| f.stats.converged.to_string()),
    ];
    for (label, f) in rows {
        let _ = write!(s, "  {label:<24}");
        for fit in fits {
            let _ = write!(s, "{:>w$}", f(fit));
        }
        let _ = writeln!(s);
    }
    let order = |r: &[usize]| {
        r.iter()
            .map(|i| format!("[{}]", i + 1))
            .collect::<Vec<_>>()
            .join(" < ")
    };
    let _ = writeln!(
        s,
        "\nranking, best first:  AIC {}   BIC {}",
        order(&c.aic_rank),
        order(&c.bic_rank)
    );
    if c.nested.is_empty() {
        let _ = writeln!(
            s,
            "no model nests another on the same data, so no likelihood-ratio test applies"
        );
    }
    for n in &c.nested {
        let _ = writeln!(
            s,
            "likelihood ratio [{}] within [{}]: statistic {:.4}, {} df, p {}",
            n.restricted + 1,
            n.general + 1,
            n.test.statistic,
            n.test.df,
            super::pval(n.test.p_value)
        );
    }
    s
}
