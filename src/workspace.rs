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
use crate::spec::Spec;

/// Reads and validates a spec and loads its data (with extra columns, e.g. for segments).
pub fn open(spec_path: &Path, extra: &Extra) -> Result<(Spec, Dataset)> {
    let spec = crate::model::read_spec(spec_path)?;
    let ds = data::load(&spec, extra)?;
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
