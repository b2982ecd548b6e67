//! The forecast from its figures, however the situations were passed over
//! (in memory or chunk by chunk): shares with bands, volumes and revenue,
//! switching, segments and the warnings.

use super::{calibrate, simulate, Forecast, Options, Scenario, SegmentRow, ShareRow, SwitchRow};
use crate::analysis::delta::quantile;

/// What a forecast's figures come from, however the situations were passed over.
pub(super) struct Figures {
    pub(super) names: Vec<String>,
    pub(super) point: simulate::Pass,
    /// Per alternative, the scenario share and the change under each parameter draw.
    pub(super) band_scen: Vec<Vec<f64>>,
    pub(super) band_change: Vec<Vec<f64>>,
    /// Per segment and alternative, the scenario share under each draw.
    pub(super) band_seg: Vec<Vec<f64>>,
    pub(super) labels: Option<Vec<String>>,
    pub(super) situations: usize,
    pub(super) stranded_situations: usize,
    pub(super) lost_share: f64,
    pub(super) market: Option<f64>,
    pub(super) calibration: Option<calibrate::Calibrated>,
    pub(super) warnings: Vec<String>,
}

/// The warning for situations a withdrawal leaves with nothing to choose.
fn stranded_warning(count: usize, lost: f64, total: usize) -> Option<String> {
    (count > 0).then(|| {
        format!(
            "{count} of {total} situations have no available alternative left in this scenario; their demand ({:.2}% of the weight) is counted as lost, so the scenario shares add up to {:.4} rather than 1",
            100.0 * lost,
            1.0 - lost
        )
    })
}

/// The forecast from its figures: shares with bands, volumes and revenue,
/// switching, segments and warnings.
pub(super) fn assemble(scenario: &Scenario, opts: &Options, fig: Figures) -> Forecast {
    let Figures {
        names,
        point,
        mut band_scen,
        mut band_change,
        mut band_seg,
        labels,
        situations,
        stranded_situations,
        lost_share,
        market,
        calibration,
        mut warnings,
    } = fig;
    // The stranded warning comes first.
    if let Some(w) = stranded_warning(stranded_situations, lost_share, situations) {
        warnings.insert(0, w);
    }
    let shares = share_rows(&names, &point, market, &mut band_scen, &mut band_change);
    if names.len() > simulate::SWITCHING_UP_TO {
        warnings.push(format!(
            "no switching matrix: with more than {} alternatives pairing each situation's losses with its gains is alternatives² work per situation; the changes of the shares say where demand goes (`--by-alternative COLUMN` sums them by a column of the table of alternatives)",
            simulate::SWITCHING_UP_TO
        ));
    }
    if point.revenue.is_some() && market.is_none() {
        warnings.push("a price attribute is named but no market size is given (--market), so no revenue is shown".into());
    }
    let segments = match &labels {
        Some(labels) => segment_rows(labels, &names, &point, &mut band_seg),
        None => Vec::new(),
    };
    Forecast {
        scenario: scenario.name.clone(),
        draws: if band_scen.first().is_some_and(|v| !v.is_empty()) {
            opts.draws
        } else {
            0
        },
        seed: opts.seed,
        situations,
        shares,
        switching: switch_rows(&names, &point),
        segments,
        segment_column: opts.by.clone(),
        market,
        calibration,
        stranded_situations,
        lost_share,
        warnings,
        classes: Vec::new(),
        by_alternative: None,
    }
}

/// The 2.5% and 97.5% points of draws (sorted in place).
fn band(v: &mut [f64]) -> (f64, f64) {
    v.sort_by(|a, b| a.total_cmp(b));
    (quantile(v, 0.025), quantile(v, 0.975))
}

/// Each alternative's base and scenario share with bands, volumes and revenue.
fn share_rows(
    names: &[String],
    point: &simulate::Pass,
    market: Option<f64>,
    band_scen: &mut [Vec<f64>],
    band_change: &mut [Vec<f64>],
) -> Vec<ShareRow> {
    // Alternative a's revenue in the base (false) or the scenario (true).
    let revenue = |a: usize, scenario: bool| {
        point
            .revenue
            .as_ref()
            .and_then(|(base, scen)| market.map(|t| t * if scenario { scen[a] } else { base[a] }))
    };
    let mut shares = Vec::new();
    for (a, name) in names.iter().enumerate() {
        let (low, high) = band(&mut band_scen[a]);
        let (change_low, change_high) = band(&mut band_change[a]);
        let (b, s) = (point.base[a], point.scenario[a]);
        shares.push(ShareRow {
            alternative: name.clone(),
            base: b,
            scenario: s,
            change: s - b,
            relative_change: if b > 0.0 { (s - b) / b } else { f64::NAN },
            low,
            high,
            change_low,
            change_high,
            base_volume: market.map(|t| t * b),
            scenario_volume: market.map(|t| t * s),
            base_revenue: revenue(a, false),
            scenario_revenue: revenue(a, true),
        });
    }
    shares
}

/// The shares that switch from one alternative to another.
fn switch_rows(names: &[String], point: &simulate::Pass) -> Vec<SwitchRow> {
    let m = names.len();
    let mut switching = Vec::new();
    for from in 0..m {
        for to in 0..m {
            let share = point.switching[from * m + to];
            if from != to && share > 0.0 {
                switching.push(SwitchRow {
                    from: names[from].clone(),
                    to: names[to].clone(),
                    share,
                });
            }
        }
    }
    switching
}

/// Each segment's base and scenario shares with bands.
fn segment_rows(
    labels: &[String],
    names: &[String],
    point: &simulate::Pass,
    band_seg: &mut [Vec<f64>],
) -> Vec<SegmentRow> {
    let m = names.len();
    let mut segments = Vec::new();
    for (s, label) in labels.iter().enumerate() {
        let (b, sc) = &point.segments[s];
        for a in 0..m {
            let (low, high) = band(&mut band_seg[s * m + a]);
            segments.push(SegmentRow {
                segment: label.clone(),
                alternative: names[a].clone(),
                situations: point.segment_count[s] as usize,
                base: b[a],
                scenario: sc[a],
                change: sc[a] - b[a],
                low,
                high,
            });
        }
    }
    segments
}
