//! Exports of a forecast: a tidy table (one row per segment and alternative)
//! as CSV, Parquet or JSON, or each situation's probabilities. Files are
//! written atomically and never replace an existing file without `force`.

use std::path::Path;

use super::prepare::Prepared;
use super::Forecast;
use crate::data::write::{self, Values};
use crate::design::Design;
use crate::error::{Error, Result};
use crate::model::enumerate::Enumeration;
use crate::model::Family;

fn ext(path: &Path) -> String {
    path.extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase()
}

/// The tidy columns: segment, alternative, base, scenario, change, low, high.
pub fn tidy(f: &Forecast) -> Vec<(String, Values)> {
    let mut seg = Vec::new();
    let mut alt = Vec::new();
    let mut cols: [Vec<f64>; 5] = Default::default();
    for r in &f.shares {
        seg.push("all".to_string());
        alt.push(r.alternative.clone());
        for (c, v) in cols
            .iter_mut()
            .zip([r.base, r.scenario, r.change, r.low, r.high])
        {
            c.push(v);
        }
    }
    for r in &f.segments {
        seg.push(r.segment.clone());
        alt.push(r.alternative.clone());
        for (c, v) in cols
            .iter_mut()
            .zip([r.base, r.scenario, r.change, r.low, r.high])
        {
            c.push(v);
        }
    }
    let [b, s, c, l, h] = cols;
    vec![
        ("segment".into(), Values::Text(seg)),
        ("alternative".into(), Values::Text(alt)),
        ("base".into(), Values::Num(b)),
        ("scenario".into(), Values::Num(s)),
        ("change".into(), Values::Num(c)),
        ("low".into(), Values::Num(l)),
        ("high".into(), Values::Num(h)),
    ]
}

/// Writes the forecast to `path` (.csv, .parquet or .json).
pub fn forecast(path: &Path, force: bool, f: &Forecast) -> Result<()> {
    match ext(path).as_str() {
        "json" => write::text(
            path,
            force,
            &(serde_json::to_string_pretty(f).unwrap_or_default() + "\n"),
        ),
        "csv" | "parquet" => write::table(path, force, &tidy(f)),
        _ => Err(Error::io(
            path,
            "exports are written as .csv, .parquet or .json",
        )),
    }
}

/// Each situation's base and scenario probabilities (one row per situation).
pub fn per_situation(
    path: &Path,
    force: bool,
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    prep: &Prepared,
) -> Result<()> {
    let cols = situation_columns(family, d, beta, prep);
    match ext(path).as_str() {
        "csv" | "parquet" => write::table(path, force, &cols),
        "json" => write::text(
            path,
            force,
            &(serde_json::to_string(&json_rows(&cols)).unwrap_or_default() + "\n"),
        ),
        _ => Err(Error::io(
            path,
            "exports are written as .csv, .parquet or .json",
        )),
    }
}

/// The per-situation columns: `row`, then `base_<alt>` and `scenario_<alt>`.
pub fn situation_columns(
    family: &dyn Family,
    d: &Design,
    beta: &[f64],
    prep: &Prepared,
) -> Vec<(String, Values)> {
    let m = prep.alternatives();
    let n = d.situations();
    // Each piece's rows, alternative by alternative (base, then scenario).
    let parts = Enumeration::new(family, d, beta).what_if(prep).pieces(
        |r| vec![Vec::with_capacity(r.len()); 2 * m],
        |cols, s| {
            for a in 0..m {
                cols[a].push(s.p0[a]);
                cols[m + a].push(s.p1[a]);
            }
        },
    );
    let mut base: Vec<Vec<f64>> = vec![Vec::with_capacity(n); m];
    let mut scen: Vec<Vec<f64>> = vec![Vec::with_capacity(n); m];
    for part in parts {
        for a in 0..m {
            base[a].extend_from_slice(&part[a]);
            scen[a].extend_from_slice(&part[m + a]);
        }
    }
    let mut cols = vec![(
        "row".to_string(),
        Values::Int(d.obs.first_row.iter().map(|r| *r as i64).collect()),
    )];
    for (a, name) in prep.names.iter().enumerate() {
        cols.push((
            format!("base_{name}"),
            Values::Num(std::mem::take(&mut base[a])),
        ));
    }
    for (a, name) in prep.names.iter().enumerate() {
        cols.push((
            format!("scenario_{name}"),
            Values::Num(std::mem::take(&mut scen[a])),
        ));
    }
    cols
}

/// One JSON object per row of `cols`.
fn json_rows(cols: &[(String, Values)]) -> Vec<serde_json::Value> {
    let n = cols.first().map(|c| c.1.len()).unwrap_or(0);
    let mut rows = Vec::with_capacity(n);
    for i in 0..n {
        let mut o = serde_json::Map::new();
        for (name, v) in cols {
            let val = match v {
                Values::Num(x) => serde_json::json!(x[i]),
                Values::Int(x) => serde_json::json!(x[i]),
                Values::Text(x) => serde_json::json!(x[i]),
            };
            o.insert(name.clone(), val);
        }
        rows.push(serde_json::Value::Object(o));
    }
    rows
}

/// Writes the per-situation rows of a population chunk by chunk into one
/// file (inside `write::atomic`'s temporary file): the same bytes as
/// `per_situation` for CSV and JSON, the same rows (in row groups) for Parquet.
pub struct SituationWriter {
    kind: String,
    chunks: usize,
    parquet: Option<write::ParquetAppender>,
}

impl SituationWriter {
    /// A writer for `path`'s format (.csv, .parquet or .json).
    pub fn new(path: &Path) -> Result<SituationWriter> {
        let kind = ext(path);
        if !matches!(kind.as_str(), "csv" | "parquet" | "json") {
            return Err(Error::io(
                path,
                "exports are written as .csv, .parquet or .json",
            ));
        }
        Ok(SituationWriter {
            kind,
            chunks: 0,
            parquet: None,
        })
    }

    /// Appends one chunk's rows.
    pub fn append(
        &mut self,
        path: &Path,
        f: &mut std::fs::File,
        cols: &[(String, Values)],
    ) -> Result<()> {
        use std::io::Write;
        let first = self.chunks == 0;
        self.chunks += 1;
        match self.kind.as_str() {
            "csv" => write::csv_rows(path, f, cols, first),
            "parquet" => {
                if first {
                    self.parquet = Some(write::ParquetAppender::new(path, f, cols)?);
                }
                match &mut self.parquet {
                    Some(p) => p.append(path, cols),
                    None => Ok(()),
                }
            }
            _ => {
                let rows = json_rows(cols);
                let mut text = String::new();
                for r in rows {
                    text.push(if first && text.is_empty() { '[' } else { ',' });
                    text.push_str(&serde_json::to_string(&r).unwrap_or_default());
                }
                f.write_all(text.as_bytes()).map_err(|e| Error::io(path, e))
            }
        }
    }

    /// Ends the file (after the last chunk).
    pub fn finish(self, path: &Path, f: &mut std::fs::File) -> Result<()> {
        use std::io::Write;
        match self.kind.as_str() {
            "csv" => Ok(()),
            "parquet" => match self.parquet {
                Some(p) => p.finish(path),
                None => Ok(()),
            },
            _ => {
                let end = if self.chunks == 0 { "[]\n" } else { "]\n" };
                f.write_all(end.as_bytes()).map_err(|e| Error::io(path, e))
            }
        }
    }
}
