//! The terminal report of `sharecast simulate` and `sharecast sweep`.

use std::fmt::Write;

use crate::scenario::sweep::Sweep;
use crate::scenario::Forecast;

/// A band "low … high", or a dash when there were no draws.
fn band(low: f64, high: f64, signed: bool) -> String {
    if low.is_nan() || high.is_nan() {
        return format!("{:^19}", "—");
    }
    if signed {
        format!("{low:>+8.4} … {high:<+8.4}")
    } else {
        format!("{low:>7.4} … {high:<7.4}")
    }
}

/// Where a forecast's bands come from (the text and HTML reports').
pub(crate) fn bands(f: &Forecast) -> String {
    if f.draws > 0 {
        format!(
            "95% bands from {} parameter draws (seed {})",
            f.draws, f.seed
        )
    } else {
        "no uncertainty bands (0 draws)".to_string()
    }
}

pub fn text(f: &Forecast) -> String {
    text_top(f, None)
}

/// The rows shown: every alternative up to `WHOLE_UP_TO`, else the `top`
/// (default `TOP_DEFAULT`) whose shares change most, largest change first;
/// and how many are not shown.
fn shown(f: &Forecast, top: Option<usize>) -> (Vec<&crate::scenario::ShareRow>, usize) {
    use crate::analysis::{TOP_DEFAULT, WHOLE_UP_TO};
    let n = f.shares.len();
    let keep = match top {
        Some(t) => t.clamp(1, n.max(1)),
        None if n <= WHOLE_UP_TO => n,
        None => TOP_DEFAULT,
    };
    if keep >= n {
        return (f.shares.iter().collect(), 0);
    }
    let mut rows: Vec<&crate::scenario::ShareRow> = f.shares.iter().collect();
    rows.sort_by(|a, b| {
        b.change
            .abs()
            .total_cmp(&a.change.abs())
            .then(b.base.total_cmp(&a.base))
    });
    rows.truncate(keep);
    (rows, n - keep)
}

/// `text` with the shares table over the `top` alternatives whose shares change most.
pub fn text_top(f: &Forecast, top: Option<usize>) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "━━ sharecast forecast ━━ {}", f.scenario);
    let _ = writeln!(
        s,
        "{} situations by sample enumeration · {}",
        f.situations,
        bands(f)
    );
    if let Some(c) = &f.calibration {
        calibration(&mut s, c);
    }
    shares(&mut s, f, top);
    if let Some(g) = &f.by_alternative {
        grouped(&mut s, g);
    }
    switching(&mut s, f);
    segments(&mut s, f);
    classes(&mut s, f);
    for w in &f.warnings {
        let _ = writeln!(s, "  ! {w}");
    }
    s
}

/// The calibrated constants.
fn calibration(s: &mut String, c: &crate::scenario::calibrate::Calibrated) {
    let _ = writeln!(
        s,
        "\nconstants calibrated to target shares in {} iterations (largest gap {:.1e})",
        c.iterations, c.max_error
    );
    let _ = writeln!(
        s,
        "  alternative      parameter         target   estimated  calibrated   share before"
    );
    for r in &c.rows {
        let _ = writeln!(
            s,
            "  {:<16} {:<16} {:>7.4} {:>11.4} {:>11.4} {:>14.4}",
            r.alternative, r.parameter, r.target, r.estimated, r.calibrated, r.share_before
        );
    }
}

/// The largest flows of demand between alternatives (at most 20 with many alternatives).
fn switching(s: &mut String, f: &Forecast) {
    if f.switching.is_empty() {
        return;
    }
    let _ = writeln!(s, "\nswitching: share of all demand that moves (losses paired with gains within each situation)");
    let mut rows: Vec<&crate::scenario::SwitchRow> =
        f.switching.iter().filter(|r| r.share >= 5e-5).collect();
    let many = f.shares.len() > crate::analysis::WHOLE_UP_TO && rows.len() > 20;
    if many {
        rows.sort_by(|a, b| b.share.total_cmp(&a.share));
        rows.truncate(20);
    }
    for r in &rows {
        let _ = writeln!(s, "  {:<16} → {:<16} {:>9.4}", r.from, r.to, r.share);
    }
    if many {
        let _ = writeln!(s, "  (the 20 largest flows; every one in --json)");
    }
}

/// Shares summed by a column of the table of alternatives.
fn grouped(s: &mut String, g: &crate::scenario::grouped::GroupedForecast) {
    let _ = writeln!(
        s,
        "\nby {} (alternatives grouped)   alternatives       base   scenario     change",
        g.column
    );
    for r in &g.groups {
        let _ = writeln!(
            s,
            "  {:<30}{:>12}{:>11.4}{:>11.4}{:>+11.4}",
            r.group, r.alternatives, r.base, r.scenario, r.change
        );
    }
}

/// Base and scenario shares with their bands, volumes and revenue.
fn shares(s: &mut String, f: &Forecast, top: Option<usize>) {
    let volumes = f.market.is_some();
    let revenue = f.shares.iter().any(|r| r.base_revenue.is_some());
    let _ = writeln!(
        s,
        "\n  alternative          base   scenario     change   relative    scenario 95%          change 95%{}{}",
        if volumes { "          volume before → after" } else { "" },
        if revenue { "          revenue before → after" } else { "" }
    );
    let (rows, hidden) = shown(f, top);
    for r in rows {
        let relative = if r.relative_change.is_finite() {
            format!("{:+.1}%", 100.0 * r.relative_change)
        } else {
            "new".to_string()
        };
        let mut line = format!(
            "  {:<16}{:>9.4}{:>11.4}{:>+11.4}{:>11}   {}   {}",
            r.alternative,
            r.base,
            r.scenario,
            r.change,
            relative,
            band(r.low, r.high, false),
            band(r.change_low, r.change_high, true)
        );
        if let (Some(b), Some(a)) = (r.base_volume, r.scenario_volume) {
            let _ = write!(line, "   {b:>12.1} → {a:<12.1}");
        }
        if let (Some(b), Some(a)) = (r.base_revenue, r.scenario_revenue) {
            let _ = write!(line, "   {b:>12.1} → {a:<12.1}");
        }
        let _ = writeln!(s, "{}", line.trim_end());
    }
    if hidden > 0 {
        let _ = writeln!(
            s,
            "  … and {hidden} more alternatives (the largest changes are above; every one in --json and --out)"
        );
    }
}

/// Shares by segment.
fn segments(s: &mut String, f: &Forecast) {
    if !f.segments.is_empty() {
        let _ = writeln!(
            s,
            "\nby {}        alternative          n       base   scenario     change    scenario 95%",
            f.segment_column.as_deref().unwrap_or("segment")
        );
        for r in &f.segments {
            let _ = writeln!(
                s,
                "  {:<14}{:<16}{:>7}{:>11.4}{:>11.4}{:>+11.4}   {}",
                r.segment,
                r.alternative,
                r.situations,
                r.base,
                r.scenario,
                r.change,
                band(r.low, r.high, false)
            );
        }
    }
}

pub fn sweep(sw: &Sweep) -> String {
    let mut s = String::new();
    let what = match &sw.alternative {
        Some(alt) => format!("{} of {alt}", sw.attribute),
        None => format!("{} of every decision maker", sw.attribute),
    };
    let _ = writeln!(s, "━━ sharecast demand curve ━━ {what} multiplied");
    let _ = write!(s, "  {:>10}", "multiplier");
    for a in &sw.alternatives {
        let _ = write!(s, "{a:>12}");
    }
    let _ = writeln!(s);
    for p in &sw.points {
        let _ = write!(s, "  {:>10.4}", p.multiplier);
        for v in &p.shares {
            let _ = write!(s, "{v:>12.4}");
        }
        let _ = writeln!(s);
    }
    s
}

/// Latent classes: each class's shares at the base and under the scenario.
fn classes(s: &mut String, f: &Forecast) {
    if f.classes.is_empty() {
        return;
    }
    let _ = writeln!(
        s,
        "\nby latent class (point forecast; each class's logit weighted by its membership probabilities)"
    );
    let _ = writeln!(
        s,
        "  {:<10} {:>7}  {:<16} {:>9} {:>9} {:>9}",
        "class", "size", "alternative", "base", "scenario", "change"
    );
    for c in &f.classes {
        for (k, row) in f.shares.iter().enumerate() {
            let (b, n) = (
                c.base.get(k).copied().unwrap_or(0.0),
                c.scenario.get(k).copied().unwrap_or(0.0),
            );
            let lead = if k == 0 {
                (c.class.as_str(), format!("{:.3}", c.size))
            } else {
                ("", String::new())
            };
            let _ = writeln!(
                s,
                "  {:<10} {:>7}  {:<16} {:>9.4} {:>9.4} {:>+9.4}",
                lead.0,
                lead.1,
                row.alternative,
                b,
                n,
                n - b
            );
        }
    }
}
