//! The analysis sections of the terminal report: elasticity and diversion
//! matrices, marginal effects, value ratios, validation and tests.

use std::fmt::Write;

use crate::analysis::Analysis;
use crate::spec::Spec;

use super::value_se;

fn cell(v: f64, se: f64) -> String {
    value_se(v, se, "±")
}

/// A matrix with row labels, column labels and pre-formatted cells.
fn matrix(
    s: &mut String,
    corner: &str,
    rows: &[String],
    cols: &[String],
    cells: &dyn Fn(usize, usize) -> String,
) {
    let w = cols
        .iter()
        .map(|c| c.chars().count())
        .chain(
            (0..rows.len())
                .flat_map(|r| (0..cols.len()).map(move |c| (r, c)))
                .map(|(r, c)| cells(r, c).chars().count()),
        )
        .max()
        .unwrap_or(6)
        + 2;
    let lw = rows
        .iter()
        .map(|r| r.chars().count())
        .chain([corner.chars().count()])
        .max()
        .unwrap_or(8)
        + 2;
    let _ = write!(s, "  {corner:<lw$}");
    for c in cols {
        let _ = write!(s, "{c:>w$}");
    }
    let _ = writeln!(s);
    for (r, label) in rows.iter().enumerate() {
        let _ = write!(s, "  {label:<lw$}");
        for c in 0..cols.len() {
            let _ = write!(s, "{:>w$}", cells(r, c));
        }
        let _ = writeln!(s);
    }
}

pub fn sections(spec: &Spec, a: &Analysis) -> String {
    let mut s = String::new();
    let names = spec.alternative_names();
    let _ = writeln!(
        s,
        "elasticities of predicted shares (sample enumeration, weighted; ± delta-method s.e.)"
    );
    for attr in &spec.attributes {
        let rows: Vec<&crate::analysis::ElasticityRow> = a
            .elasticities
            .iter()
            .filter(|e| e.variable == attr.name)
            .collect();
        if rows.is_empty() {
            continue; // a 0/1 flag: see the flag section
        }
        let changed: Vec<String> = names
            .iter()
            .filter(|n| {
                rows.iter()
                    .any(|e| e.changed.as_deref() == Some(n.as_str()))
            })
            .cloned()
            .collect();
        let _ = writeln!(
            s,
            "  {} of the row's alternative changes → share of the column's alternative",
            attr.name
        );
        matrix(&mut s, "changed \\ share", &changed, &names, &|r, c| {
            rows.iter()
                .find(|e| {
                    e.changed.as_deref() == Some(changed[r].as_str()) && e.affected == names[c]
                })
                .map(|e| cell(e.value, e.std_error))
                .unwrap_or_default()
        });
    }
    let vars: Vec<String> = spec
        .characteristics
        .iter()
        .map(|c| c.name.clone())
        .filter(|n| a.elasticities.iter().any(|e| &e.variable == n))
        .collect();
    if !vars.is_empty() {
        let _ = writeln!(
            s,
            "  characteristics (the decision maker's value changes) → share"
        );
        matrix(&mut s, "variable \\ share", &vars, &names, &|r, c| {
            a.elasticities
                .iter()
                .find(|e| e.variable == vars[r] && e.changed.is_none() && e.affected == names[c])
                .map(|e| cell(e.value, e.std_error))
                .unwrap_or_default()
        });
        let _ = writeln!(
            s,
            "\naverage marginal effects of characteristics: change in each share per one unit more of the variable (± s.e.)"
        );
        matrix(&mut s, "variable \\ share", &vars, &names, &|r, c| {
            a.marginal_effects
                .iter()
                .find(|e| e.variable == vars[r] && e.changed.is_none() && e.alternative == names[c])
                .map(|e| cell(e.value, e.std_error))
                .unwrap_or_default()
        });
        if !a.expected_category.is_empty() {
            let _ = writeln!(
                s,
                "  effect on the expected category (categories numbered 1 to {}), per unit:",
                names.len()
            );
            for e in &a.expected_category {
                let _ = writeln!(s, "    {:<18}{}", e.variable, cell(e.value, e.std_error));
            }
        }
    }
    flag_section(&mut s, &names, a);
    let own: Vec<&crate::analysis::ElasticityRow> = a
        .elasticities
        .iter()
        .filter(|e| e.changed.as_deref() == Some(e.affected.as_str()))
        .collect();
    if !own.is_empty() {
        let _ = writeln!(
            s,
            "\nown elasticities, point and arc ({:+.0}% change by re-simulation)",
            100.0 * a.arc_change
        );
        for e in own {
            let _ = writeln!(
                s,
                "  {:<12} {:<14} point {:>9.4}   arc {:>9.4}",
                e.variable, e.affected, e.value, e.arc
            );
        }
    }
    random_coefficients(&mut s, a);
    derived(&mut s, a);
    if !a.ratios.is_empty() {
        let _ = writeln!(
            s,
            "\nvalue ratios: willingness to pay, positive when the change named is desirable (value ± delta-method s.e.)"
        );
        for r in &a.ratios {
            let kr = if r.draws == 0 {
                "— … — (no draws)".to_string()
            } else {
                format!(
                    "{:.4} … {:.4} ({} draws, seed {})",
                    r.kr_low, r.kr_high, r.draws, r.seed
                )
            };
            let _ = writeln!(
                s,
                "  {:<18}{:>10.4} ± {:<9.4} {}",
                r.name,
                r.value,
                r.std_error,
                r.unit.as_deref().unwrap_or("")
            );
            let _ = writeln!(
                s,
                "  {:<18}for {} of `{}` against `{}` · 95% delta {:.4} … {:.4} · Krinsky-Robb {kr}",
                "",
                per_units(r.scale, &r.per),
                r.numerator,
                r.denominator,
                r.ci_low,
                r.ci_high
            );
            if let Some(dist) = &r.distribution {
                let q: Vec<String> = dist
                    .quantiles
                    .iter()
                    .map(|x| format!("{:.0}% {:.4}", 100.0 * x.level, x.value))
                    .collect();
                let _ = writeln!(
                    s,
                    "  {:<18}varies across decision makers: the value is the median · {} · above zero {:.1}% ({} simulated, seed {})",
                    "",
                    q.join("  "),
                    100.0 * dist.share_positive,
                    dist.draws,
                    dist.seed
                );
            }
        }
    }
    if !a.diversion.is_empty() {
        let removed: Vec<String> = names
            .iter()
            .filter(|n| a.diversion.iter().any(|d| &d.removed == *n))
            .cloned()
            .collect();
        let _ = writeln!(
            s,
            "\ndiversion on withdrawal: share of the row's demand that moves to each column"
        );
        matrix(&mut s, "removed \\ to", &removed, &names, &|r, c| {
            if removed[r] == names[c] {
                return "—".into();
            }
            a.diversion
                .iter()
                .find(|d| d.removed == removed[r] && d.to == names[c])
                .map(|d| format!("{:.3}", d.share))
                .unwrap_or_default()
        });
    }
    if let Some(first) = a.price_diversion.first() {
        let changed: Vec<String> = names
            .iter()
            .filter(|n| a.price_diversion.iter().any(|d| &d.changed == *n))
            .cloned()
            .collect();
        let _ = writeln!(
            s,
            "\n{} diversion ratios -(dQ_to/dx)/(dQ_row/dx) for a change in the row's {}",
            first.attribute, first.attribute
        );
        matrix(&mut s, "changed \\ to", &changed, &names, &|r, c| {
            if changed[r] == names[c] {
                return "—".into();
            }
            a.price_diversion
                .iter()
                .find(|d| d.changed == changed[r] && d.to == names[c])
                .map(|d| format!("{:.3}", d.ratio))
                .unwrap_or_default()
        });
    }
    let v = &a.validation;
    let _ = writeln!(
        s,
        "\nvalidation: hit rate {:.4} (most probable alternative chosen), mean probability of the choice {:.4}",
        v.hit_rate, v.mean_chosen_probability
    );
    if let Some(h) = &v.holdout {
        let _ = writeln!(
            s,
            "  hold-out: {} situations scored by a fit on the other {}; log-likelihood {:.4} (zero model {:.4})",
            h.situations, h.estimation_situations, h.log_likelihood, h.null_log_likelihood
        );
        for r in &h.shares {
            let _ = writeln!(
                s,
                "    {:<16} observed {:.4}   predicted {:.4}",
                r.alternative, r.observed, r.predicted
            );
        }
    }
    if !a.segments.is_empty() {
        let _ = writeln!(
            s,
            "  by segment        alternative        n   observed  predicted"
        );
        for r in &a.segments {
            let _ = writeln!(
                s,
                "    {:<16}{:<16}{:>6}{:>11.4}{:>11.4}",
                r.segment, r.alternative, r.situations, r.observed, r.predicted
            );
        }
    }
    if let Some(t) = &a.single_index {
        let _ = writeln!(
            s,
            "\n{}: likelihood ratio {:.4}, {} df, p {} (unordered logit log-likelihood {:.4})\n  note: {}",
            t.name,
            t.statistic,
            t.df,
            super::pval(t.p_value),
            t.unordered_log_likelihood,
            t.note
        );
    }
    for t in a.family_test.iter().chain(a.wald.iter()) {
        let _ = writeln!(
            s,
            "\n{}: statistic {:.4}, {} df, p {}",
            t.name,
            t.statistic,
            t.df,
            super::pval(t.p_value)
        );
    }
    if let Some(t) = &a.iia {
        let _ = writeln!(
            s,
            "\nIIA (Hausman-McFadden, `{}` dropped): statistic {:.4}, {} df, p {}",
            t.dropped,
            t.statistic,
            t.df,
            super::pval(t.p_value),
        );
        let _ = writeln!(
            s,
            "  the coefficients {} are estimated again without `{}`; if IIA holds they should barely move. The {} degrees of freedom count the independent ways they can move that the test measures.",
            t.compared.join(", "),
            t.dropped,
            t.df
        );
        if let Some(n) = &t.note {
            let _ = writeln!(s, "  note: {n}");
        }
    }
    for w in &a.warnings {
        let _ = writeln!(s, "  ! {w}");
    }
    s
}

/// 0/1 variables: the change in shares when the flag switches from 0 to 1.
fn flag_section(s: &mut String, names: &[String], a: &Analysis) {
    let mut seen: Vec<(String, Option<String>)> = Vec::new();
    for f in &a.flag_effects {
        let key = (f.variable.clone(), f.changed.clone());
        if !seen.contains(&key) {
            seen.push(key);
        }
    }
    if seen.is_empty() {
        return;
    }
    let _ = writeln!(
        s,
        "\n0/1 variables (no elasticity: a 1% change means nothing for a flag): change in each share when the flag switches from 0 to 1 in every situation (± delta-method s.e.)"
    );
    let rows: Vec<String> = seen
        .iter()
        .map(|(v, c)| match c {
            Some(k) => format!("{v} of {k}"),
            None => v.clone(),
        })
        .collect();
    matrix(s, "flag \\ share", &rows, names, &|r, c| {
        a.flag_effects
            .iter()
            .find(|f| f.variable == seen[r].0 && f.changed == seen[r].1 && f.affected == names[c])
            .map(|f| cell(f.change, f.std_error))
            .unwrap_or_default()
    });
}

/// "one unit more", "60 units less": what a ratio's willingness to pay is for.
fn per_units(scale: f64, per: &str) -> String {
    let way = per.strip_prefix("unit ").unwrap_or(per);
    if scale == 1.0 {
        format!("one unit {way}")
    } else {
        format!("{} units {way}", scale.abs())
    }
}

/// The family's derived figures (the multinomial probit's error covariance),
/// one block per group.
fn derived(s: &mut String, a: &Analysis) {
    let mut group: Option<&str> = None;
    for r in &a.derived {
        if group != Some(r.group.as_str()) {
            let _ = writeln!(
                s,
                "\n{} (implied by the estimates; ± delta-method s.e.)",
                r.group
            );
            group = Some(&r.group);
        }
        let _ = writeln!(s, "  {:<28} {}", r.name, cell(r.value, r.std_error));
    }
}

/// Each random coefficient's implied distribution across decision makers.
fn random_coefficients(s: &mut String, a: &Analysis) {
    if a.random_coefficients.is_empty() {
        return;
    }
    let _ = writeln!(
        s,
        "\nrandom coefficients across decision makers (implied by each location and spread; ± delta-method s.e.)"
    );
    for r in &a.random_coefficients {
        let _ = writeln!(
            s,
            "  {} · {} (location {:.4}, spread {:.4})",
            r.coefficient, r.distribution, r.location, r.spread
        );
        let _ = writeln!(
            s,
            "      mean {}   std. dev. {}   median {}",
            cell(r.mean.value, r.mean.std_error),
            cell(r.std_dev.value, r.std_dev.std_error),
            cell(r.median.value, r.median.std_error)
        );
        let q: Vec<String> = r
            .quantiles
            .iter()
            .map(|x| format!("{:.0}% {}", 100.0 * x.level, cell(x.value, f64::NAN)))
            .collect();
        let _ = writeln!(
            s,
            "      above 0 {:.1}%   below 0 {:.1}%   {}",
            100.0 * r.share_positive.value,
            100.0 * r.share_negative.value,
            q.join("   ")
        );
    }
}
