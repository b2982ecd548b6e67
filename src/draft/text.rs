//! Writes the draft spec as commented TOML: every guess has a comment above
//! it saying what was guessed and what to check; columns left out are listed
//! (characteristics as commented-out tables ready to switch on).

use std::fmt::Write;

use super::layout::{Guess, Layout, RATING_WORDS};
use super::roles::Plan;

/// A TOML string literal.
pub fn q(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

/// A TOML key: bare when it can be, quoted otherwise.
pub fn k(s: &str) -> String {
    if !s.is_empty()
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
    {
        s.to_string()
    } else {
        q(s)
    }
}

/// What family the draft proposes, with the comment that says why.
pub struct FamilyGuess {
    pub family: &'static str,
    pub why: String,
}

pub fn family(g: &Guess) -> FamilyGuess {
    let n = g.alternatives.len();
    let codes = g.alternatives.iter().all(|a| a.code.is_some());
    let column = match &g.layout {
        Layout::Wide { choice } => choice.as_str(),
        Layout::Long { alternative, .. } => alternative.as_str(),
    };
    let rating_name = column
        .to_lowercase()
        .split(['_', '.', '-', ' '])
        .any(|w| RATING_WORDS.contains(&w));
    if codes
        && n >= 3
        && g.bound.is_empty()
        && matches!(g.layout, Layout::Wide { .. })
        && rating_name
    {
        return FamilyGuess {
            family: "ordered-logit",
            why: format!("guessed: `{column}` holds whole-number codes that no column's name carries, and its name says ratings, so the categories are taken as ordered (lowest first); if they are unordered options, write family = \"logit\" and a base, or \"ordered-probit\" for normal errors"),
        };
    }
    if n == 2 {
        return FamilyGuess {
            family: "logit",
            why: "two alternatives: a binary logit (family = \"probit\" fits them too)".into(),
        };
    }
    let hint = if codes {
        "; if the codes are ordered ratings, family = \"ordered-logit\" (no base)"
    } else {
        ""
    };
    FamilyGuess {
        family: "logit",
        why: format!("the multinomial logit, the usual first model; \"nested\" groups close alternatives once this one works{hint}"),
    }
}

/// The alternative the draft makes the base: the most often chosen.
pub fn base(g: &Guess) -> usize {
    (0..g.alternatives.len())
        .max_by_key(|&k| (g.alternatives[k].chosen, usize::MAX - k))
        .unwrap_or(0)
}

/// The whole draft.
pub fn spec_text(
    file_label: &str,
    data_rel: &str,
    g: &Guess,
    plan: &Plan,
    fam: &FamilyGuess,
) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# Draft spec written by `sharecast new` from {file_label}."
    );
    let _ = writeln!(
        s,
        "# Every guess has a comment saying so and what to check: read them, fix"
    );
    let _ = writeln!(
        s,
        "# what is wrong, then run `sharecast check` on this file (docs/spec-format.md"
    );
    let _ = writeln!(s, "# describes every key).\n");
    let stem = std::path::Path::new(file_label)
        .file_name()
        .map(|f| f.to_string_lossy().to_string())
        .unwrap_or_default();
    let _ = writeln!(s, "title = {}", q(&format!("Draft model of {stem}")));
    let _ = writeln!(s, "# not guessed: field = \"transport\" (or \"retail\", \"health\", \"energy\") adds that field's cautions to every report\n");
    data_section(&mut s, data_rel, g, plan);
    let _ = writeln!(s, "[model]\n# {}\nfamily = {}", fam.why, q(fam.family));
    let ordered = fam.family.starts_with("ordered");
    if !ordered {
        let b = base(g);
        let a = &g.alternatives[b];
        let _ = writeln!(s, "# the most often chosen ({} of {} situations): constants and characteristic coefficients are measured from it; any alternative will do", a.chosen, g.situations);
        let _ = writeln!(s, "base = {}", q(&a.name));
    }
    s.push('\n');
    alternatives(&mut s, g, plan, ordered);
    attributes(&mut s, g, plan);
    characteristics(&mut s, plan, ordered);
    left_out(&mut s, plan);
    s
}

fn data_section(s: &mut String, data_rel: &str, g: &Guess, plan: &Plan) {
    let _ = writeln!(s, "[data]\nfile = {}", q(data_rel));
    for w in &g.why {
        let _ = writeln!(s, "# {w}");
    }
    match &g.layout {
        Layout::Wide { choice } => {
            let _ = writeln!(s, "layout = \"wide\"\nchoice = {}", q(choice));
        }
        Layout::Long {
            situation,
            alternative,
            chosen,
        } => {
            let _ = writeln!(
                s,
                "layout = \"long\"\nsituation = {}\nalternative = {}\nchosen = {}",
                q(situation),
                q(alternative),
                q(chosen)
            );
        }
    }
    match &plan.weight {
        Some((col, why)) => {
            let _ = writeln!(s, "# {why}\nweight = {}", q(col));
        }
        None => {
            let _ = writeln!(s, "# no column looks like a weight: every situation counts once (weight = \"COLUMN\" to weight them)");
        }
    }
    match &plan.group {
        Some((col, why)) => {
            let _ = writeln!(s, "# {why}\ngroup = {}", q(col));
        }
        None => {
            let _ = writeln!(s, "# no column looks like a decision maker's id: if one person made several choices, group = \"COLUMN\" clusters the errors");
        }
    }
    s.push('\n');
}

fn alternatives(s: &mut String, g: &Guess, plan: &Plan, ordered: bool) {
    if ordered {
        let _ = writeln!(
            s,
            "# the ordered categories, lowest first: rename them (a word per rating) if you like"
        );
    }
    for (i, a) in g.alternatives.iter().enumerate() {
        let _ = writeln!(
            s,
            "[alternatives.{}]   # chosen {} times",
            k(&a.name),
            a.chosen
        );
        if let Some(c) = a.code {
            let _ = writeln!(s, "code = {c}");
        }
        if let Some((_, col, why)) = plan.availability.iter().find(|x| x.0 == i) {
            let _ = writeln!(s, "# {why}\navailable = {}", q(col));
        }
    }
    if matches!(g.layout, Layout::Wide { .. }) && plan.availability.is_empty() && !ordered {
        let _ = writeln!(s, "# no availability column found: every alternative is taken as available in every row (available = \"COLUMN\" under an alternative if not)");
    }
    if matches!(g.layout, Layout::Long { .. }) {
        let _ = writeln!(
            s,
            "# long layout: an alternative with no row in a situation is unavailable there"
        );
    }
    s.push('\n');
}

fn attributes(s: &mut String, g: &Guess, plan: &Plan) {
    for a in &plan.attributes {
        let _ = writeln!(s, "[[attribute]]");
        for n in &a.notes {
            let _ = writeln!(s, "# {n}");
        }
        let _ = writeln!(s, "name = {}", q(&a.name));
        if a.columns.len() == 1 && a.columns[0].0 == usize::MAX {
            let _ = writeln!(s, "# varies between the alternatives of a situation: one coefficient for all (coefficient = \"per-alternative\" gives each its own)");
            let _ = writeln!(s, "column = {}\n", q(&a.columns[0].1));
            continue;
        }
        let pairs: Vec<String> = a
            .columns
            .iter()
            .map(|(alt, col)| format!("{} = {}", k(&g.alternatives[*alt].name), q(col)))
            .collect();
        let missing: Vec<&str> = (0..g.alternatives.len())
            .filter(|i| !a.columns.iter().any(|(x, _)| x == i))
            .map(|i| g.alternatives[i].name.as_str())
            .collect();
        let absent = if missing.is_empty() {
            String::new()
        } else {
            format!("; absent for {} (no column carries it)", missing.join(", "))
        };
        let _ = writeln!(s, "# columns whose names carry each alternative; one coefficient shared (coefficient = \"per-alternative\" gives each its own){absent}");
        let _ = writeln!(s, "columns = {{ {} }}\n", pairs.join(", "));
    }
}

fn characteristics(s: &mut String, plan: &Plan, ordered: bool) {
    let how = if ordered {
        "one coefficient on the latent index"
    } else {
        "one coefficient per alternative but the base (alternatives = [...] limits them)"
    };
    for c in plan.characteristics.iter().filter(|c| c.left_out.is_none()) {
        let _ = writeln!(
            s,
            "[[characteristic]]\n# one value per situation: {how}\nname = {}\ncolumn = {}\n",
            q(&c.name),
            q(&c.column)
        );
    }
    for c in plan.characteristics.iter().filter(|c| c.left_out.is_some()) {
        let why = c.left_out.as_deref().unwrap_or("");
        let _ = writeln!(
            s,
            "# left out: `{}` {why}\n# [[characteristic]]\n# name = {}\n# column = {}\n",
            c.column,
            q(&c.name),
            q(&c.column)
        );
    }
}

fn left_out(s: &mut String, plan: &Plan) {
    if plan.left_out.is_empty() {
        return;
    }
    let _ = writeln!(s, "# columns not used:");
    for (col, why) in &plan.left_out {
        let _ = writeln!(s, "#   {col}: {why}");
    }
}
