//! A forecast's shares summed over groups of alternatives by a column of
//! their table (layout "tables"; `simulate --by-alternative district`).

use serde::Serialize;

use super::Forecast;
use crate::error::Result;
use crate::estimate::Fit;

/// Base and scenario shares of each group (JSON `by_alternative`).
#[derive(Clone, Debug, Serialize)]
pub struct GroupedForecast {
    pub column: String,
    pub groups: Vec<GroupShare>,
}

#[derive(Clone, Debug, Serialize)]
pub struct GroupShare {
    pub group: String,
    pub alternatives: usize,
    pub base: f64,
    pub scenario: f64,
    pub change: f64,
}

/// Label of the group of the scenario's new alternatives (not in the table).
pub const NEW: &str = "(new alternatives)";

/// The forecast's shares by `column` of the table of alternatives the fit
/// was made over (the point forecast: bands are per alternative only).
pub fn by_alternative(f: &Forecast, fit: &Fit, column: &str) -> Result<GroupedForecast> {
    let (of, names) = crate::analysis::grouped::groups_of(fit, column)?;
    let ids = fit
        .design
        .obs
        .tables
        .as_ref()
        .map(|t| t.ids.clone())
        .unwrap_or_default();
    let mut groups: Vec<GroupShare> = names
        .iter()
        .map(|g| GroupShare {
            group: g.clone(),
            alternatives: 0,
            base: 0.0,
            scenario: 0.0,
            change: 0.0,
        })
        .collect();
    for r in &f.shares {
        let g = match ids.iter().position(|i| *i == r.alternative) {
            Some(k) => of[k],
            None => match groups.iter().position(|g| g.group == NEW) {
                Some(g) => g,
                None => {
                    groups.push(GroupShare {
                        group: NEW.into(),
                        alternatives: 0,
                        base: 0.0,
                        scenario: 0.0,
                        change: 0.0,
                    });
                    groups.len() - 1
                }
            },
        };
        let row = &mut groups[g];
        row.alternatives += 1;
        row.base += r.base;
        row.scenario += r.scenario;
        row.change += r.change;
    }
    Ok(GroupedForecast {
        column: column.to_string(),
        groups,
    })
}
