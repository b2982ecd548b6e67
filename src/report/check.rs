//! The summary `sharecast check` prints: situations, decision makers,
//! alternatives with choice counts, shares and availability, and parameters.

use std::fmt::Write;

use crate::data::Observations;
use crate::spec::Spec;

pub fn summary(spec: &Spec, obs: &Observations) -> String {
    let mut s = String::new();
    let title = spec.title.as_deref().unwrap_or("(untitled model)");
    let _ = writeln!(s, "spec      {}  —  {title}", spec.path.display());
    let _ = writeln!(
        s,
        "data      {} ({} layout)",
        spec.data.file.display(),
        spec.data.layout.name()
    );
    let _ = match spec.base_name() {
        Some(b) => writeln!(s, "model     {}, base alternative `{b}`", spec.family),
        None => writeln!(s, "model     {}, no base alternative", spec.family),
    };
    let _ = writeln!(s, "situations {}", obs.situations);
    match &obs.group {
        Some(_) => {
            let _ = writeln!(
                s,
                "decision makers {} (column `{}`)",
                obs.groups,
                spec.data.group.as_deref().unwrap_or("")
            );
        }
        None => {
            let _ = writeln!(
                s,
                "decision makers not given (each situation counts as its own)"
            );
        }
    }
    if let Some(w) = &spec.data.weight {
        let _ = writeln!(
            s,
            "weights   column `{w}`, total {:.2} (rescaled to average 1 for estimation)",
            obs.weight_total
        );
    }
    let _ = writeln!(s);
    alternatives(&mut s, spec, obs);
    let _ = writeln!(s);
    parameters(&mut s, spec);
    s
}

/// Each alternative's choices, shares (unweighted and weighted) and availability.
fn alternatives(s: &mut String, spec: &Spec, obs: &Observations) {
    let j = obs.alternatives;
    let weighted = spec.data.weight.is_some();
    let _ = writeln!(
        s,
        "  alternative        chosen  unweighted share{}   available",
        if weighted { "  weighted share" } else { "" }
    );
    let mut counts = vec![0usize; j];
    let mut weights = vec![0.0; j];
    for (i, c) in obs.chosen.iter().enumerate() {
        counts[*c as usize] += 1;
        weights[*c as usize] += obs.weight[i];
    }
    let total_w: f64 = obs.weight.iter().sum::<f64>().max(1e-300);
    for (a, alt) in spec.alternatives.iter().enumerate() {
        let avail = (0..obs.situations)
            .filter(|&i| obs.available[i * j + a])
            .count();
        let w = if weighted {
            format!("{:>16.4}", weights[a] / total_w)
        } else {
            String::new()
        };
        let _ = writeln!(
            s,
            "  {:<16} {:>8} {:>16.4}{w} {:>11} ({:.1}%)",
            alt.name,
            counts[a],
            counts[a] as f64 / obs.situations as f64,
            avail,
            100.0 * avail as f64 / obs.situations as f64
        );
    }
    let _ = writeln!(
        s,
        "  (unweighted: each situation counts once{})",
        if weighted {
            "; weighted: by the weight column, as `fit` reports its shares"
        } else {
            ", as in `fit`, which has no weights to apply here"
        }
    );
}

/// The parameters to estimate, with fixed values and starts.
fn parameters(s: &mut String, spec: &Spec) {
    let _ = writeln!(
        s,
        "parameters to estimate ({}):",
        spec.parameters.iter().filter(|p| p.fixed.is_none()).count()
    );
    for p in &spec.parameters {
        let note = match p.fixed {
            Some(v) => format!("  (fixed at {v})"),
            None if p.start != 0.0 => format!("  (starts at {})", p.start),
            None => String::new(),
        };
        let _ = writeln!(s, "  {:<24} {}{note}", p.name, spec.term_label(&p.term));
    }
}
