//! The library workspace: opening a spec and its data, and fitting it or
//! restoring a saved fit whose fingerprint matches, with progress reported
//! through a callback. The command line, the workbench and the benchmark all
//! open models through here.

use std::path::Path;
use std::sync::Arc;

use crate::data::{self, Dataset, Extra, Observations};
use crate::error::{Error, Result};
use crate::estimate::document::{fingerprint, FitDocument};
use crate::estimate::{self, Fit, Progress};
use crate::progress::Sink;
use crate::spec::Spec;

/// Reads and validates a spec and loads its data (with extra columns, e.g.
/// for segments), refusing what the fit would refuse before its search
/// (`model::admit`).
pub fn open(spec_path: &Path, extra: &Extra) -> Result<(Spec, Dataset)> {
    let spec = crate::model::read_spec(spec_path)?;
    let ds = data::load(&spec, extra)?;
    crate::model::admit(&spec, &ds.obs)?;
    Ok((spec, ds))
}

/// `open` for a fit that no analysis follows: a spec estimated on sampled
/// sets whose full sets are large gets only its sampled sets
/// (`data::load_for_fit`).
pub fn open_for_fit(spec_path: &Path, extra: &Extra) -> Result<(Spec, Dataset)> {
    let spec = crate::model::read_spec(spec_path)?;
    let ds = data::load_for_fit(&spec, extra)?;
    crate::model::admit(&spec, &ds.obs)?;
    Ok((spec, ds))
}

/// Reads a results document written by `fit --save` or `fit --json`.
pub fn read_document(path: &Path) -> Result<FitDocument> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
    serde_json::from_str(&text).map_err(|e| Error::io(path, format!("not a results document: {e}")))
}

/// Fits, or restores the saved fit at `load` when its fingerprint matches the
/// spec and data. The note says which happened and why.
pub fn fit_or_restore(
    spec: &Spec,
    obs: Arc<Observations>,
    load: Option<&Path>,
    progress: Progress,
) -> Result<(Fit, Option<String>)> {
    let Some(path) = load else {
        return Ok((estimate::fit(spec, obs, progress)?, None));
    };
    let doc = read_document(path)?;
    if doc.fingerprint == fingerprint(spec) {
        let fit = estimate::restore(spec, obs, &doc)?;
        Ok((
            fit,
            Some(format!("estimates loaded from {}", path.display())),
        ))
    } else {
        let fit = estimate::fit(spec, obs, progress)?;
        Ok((
            fit,
            Some(format!(
                "{} was saved from another spec or data (fingerprint differs), so the model was refitted",
                path.display()
            )),
        ))
    }
}

/// Everything `sharecast report` lays out, computed here by the library:
/// the fit (or a restored one), its analysis with the default options, each
/// scenario's forecast with `simulate`'s defaults, and demand curves over the
/// price attribute a scenario or a ratio names.
pub struct ReportResults {
    pub spec: Spec,
    pub fit: Fit,
    pub analysis: crate::analysis::Analysis,
    pub forecasts: Vec<(String, crate::scenario::Forecast)>,
    pub curves: std::result::Result<crate::report::html::Curves, String>,
    pub notes: Vec<String>,
}

impl ReportResults {
    /// The page's material; `spec_label` is how the spec is named on it.
    pub fn material(&self, spec_label: &str) -> crate::report::html::Material<'_> {
        crate::report::html::Material {
            spec: &self.spec,
            fit: &self.fit,
            spec_label: spec_label.to_string(),
            analysis: Some(&self.analysis),
            forecasts: self.forecasts.clone(),
            curves: self.curves.clone(),
            notes: self.notes.clone(),
        }
    }
}

/// Draws of `simulate` and its seed, used for the report's scenario bands.
pub const FORECAST_DRAWS: usize = 1000;
pub const FORECAST_SEED: u64 = 7;

/// Opens the spec, reads the scenarios, fits or restores, analyses and
/// forecasts; the fit reports its steps to `progress`, the rest its phases to
/// `ticks` (the analysis's, `forecast bands` per scenario, `demand curve` per curve).
pub fn report_results(
    spec_path: &Path,
    (scenarios, options): (&[std::path::PathBuf], &crate::analysis::Options),
    load: Option<&Path>,
    progress: Progress,
    ticks: Sink,
) -> Result<ReportResults> {
    use crate::scenario::{self, Scenario};
    let spec = crate::model::read_spec(spec_path)?;
    let mut read = Vec::new();
    for p in scenarios {
        read.push((p.display().to_string(), Scenario::from_file(p, &spec)?));
    }
    let mut extra = Extra::default();
    for (_, sc) in &read {
        let more = sc.extra(&spec);
        for (list, cs) in [
            (&mut extra.numeric, more.numeric),
            (&mut extra.text, more.text),
        ] {
            for c in cs {
                if !list.contains(&c) {
                    list.push(c);
                }
            }
        }
    }
    let ds = data::load(&spec, &extra)?;
    crate::model::admit(&spec, &ds.obs)?;
    let (fit, note) = fit_or_restore(&spec, Arc::new(ds.obs.clone()), load, progress)?;
    let analysis = crate::analysis::analyse_with(&spec, &fit, &ds, options, ticks)?;
    let opts = scenario::Options {
        draws: FORECAST_DRAWS,
        seed: FORECAST_SEED,
        by: None,
        market: None,
        quick: false,
    };
    let mut forecasts = Vec::new();
    for (file, sc) in &read {
        forecasts.push((
            file.clone(),
            scenario::forecast_with(&spec, &fit, &ds, sc, &opts, ticks)?,
        ));
    }
    let scs: Vec<&Scenario> = read.iter().map(|(_, sc)| sc).collect();
    let curves = match price_attribute(&spec, &scs) {
        Ok((a, named_by)) => Ok(curves(&spec, &fit, &ds, (a, named_by), ticks)?),
        Err(why) => Err(why),
    };
    Ok(ReportResults {
        spec,
        fit,
        analysis,
        forecasts,
        curves,
        notes: note.into_iter().collect(),
    })
}

/// The price attribute: the first scenario's `price`, else the denominator of
/// the first ratio whose denominator is an attribute; or why there is none.
fn price_attribute(
    spec: &Spec,
    scenarios: &[&crate::scenario::Scenario],
) -> std::result::Result<(usize, String), String> {
    if let Some((sc, p)) = scenarios.iter().find_map(|sc| sc.price.map(|p| (sc, p))) {
        let named = format!(
            "scenario \"{}\" (price = \"{}\")",
            sc.name, spec.attributes[p].name
        );
        return Ok((p, named));
    }
    for r in &spec.ratios {
        if let crate::spec::Term::Attribute(a) = spec.parameters[r.denominator].term {
            return Ok((
                a,
                format!("the denominator of the spec's [[ratio]] \"{}\"", r.name),
            ));
        }
    }
    Err(if spec.attributes.is_empty() {
        "The model has no attribute of the alternatives, so there is no price to vary: no demand curve (a characteristic's curve is drawn by `sharecast sweep --attribute NAME`).".to_string()
    } else {
        "No price attribute is named: a scenario's `price` key or the denominator of a [[ratio]] names one, and neither is given here, so there is no demand curve.".to_string()
    })
}

/// One sweep from ×0.5 to ×1.5 of the price of each alternative where it enters.
fn curves(
    spec: &Spec,
    fit: &Fit,
    ds: &Dataset,
    (a, named_by): (usize, String),
    ticks: Sink,
) -> Result<crate::report::html::Curves> {
    use crate::scenario::sweep;
    let mut sweeps = Vec::new();
    for (k, present) in crate::analysis::attribute_present(spec, a)
        .iter()
        .enumerate()
    {
        if !present {
            continue;
        }
        let req = sweep::Request {
            attribute: spec.attributes[a].name.clone(),
            alternative: Some(spec.alternatives[k].name.clone()),
            from: 0.5,
            to: 1.5,
            steps: 11,
        };
        sweeps.push(sweep::sweep_with(spec, fit, ds, &req, ticks)?);
    }
    Ok(crate::report::html::Curves {
        attribute: spec.attributes[a].name.clone(),
        named_by,
        sweeps,
    })
}
