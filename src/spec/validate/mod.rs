//! Checks a raw spec and builds the validated `Spec`, one validator per section,
//! with messages that name the key at fault (`[model].base`,
//! `[[attribute]] cost: columns.tram`, ...). The checks run in the spec's
//! order, so the first mistake is the one reported.

mod alternatives;
mod data;
mod model;
mod parameters;
mod sections;
mod tables;
mod terms;

use std::path::Path;

pub use sections::parse_targets;

use super::raw::RawSpec;
use super::*;

pub(super) fn validate(raw: RawSpec, path: &Path, families: &dyn Catalog) -> Result<Spec> {
    let fail = |msg: String| Error::spec(path, msg);
    let data = data::data(&raw.data, path).map_err(fail)?;
    let alternatives =
        tables::alternatives(raw.alternatives.as_ref(), &data.layout, families, path)?;
    let (family, rules) = model::family(&raw.model, families).map_err(fail)?;
    let family_keys = model::family_keys(&raw, families, rules, &family).map_err(fail)?;
    let constants = model::constants(&raw.model, rules, &family).map_err(fail)?;
    let needed = constants || !raw.characteristic.is_empty();
    let base = model::base(&raw.model, rules, &family, &alternatives, needed).map_err(fail)?;
    let cx = terms::Context {
        alternatives: &alternatives,
        base,
        long: !matches!(data.layout, Layout::Wide { .. }),
        tables: matches!(data.layout, Layout::Tables { .. }),
        rules,
        families,
        family: &family,
    };
    let mut names = Vec::new();
    let attributes = terms::attributes(&raw.attribute, &cx, &mut names).map_err(fail)?;
    let characteristics =
        terms::characteristics(&raw.characteristic, &cx, &mut names).map_err(fail)?;
    let derived = sections::derived(&raw.derived).map_err(fail)?;
    let terms = (&attributes[..], &characteristics[..]);
    let linear = parameters::linear(&alternatives, base, constants, terms, rules.single_index());
    let copies = rules.copies(&family_keys).map_err(fail)?;
    let mut parameters = parameters::copied(linear, &copies).map_err(fail)?;
    let family_columns = rules.columns(&family_keys);
    let view = SpecView {
        layout: &data.layout,
        alternatives: &alternatives,
        base,
        constants,
        attributes: &attributes,
        characteristics: &characteristics,
        parameters: &parameters,
        keys: &family_keys,
    };
    let extra = rules.check(&view).map_err(fail)?;
    let sampling =
        tables::sampling(raw.sampling.as_ref(), &view, (rules, &family)).map_err(fail)?;
    parameters::add_family(&mut parameters, extra).map_err(fail)?;
    parameters::starts(&raw.parameters, &mut parameters).map_err(fail)?;
    rules.check_parameters(&parameters).map_err(fail)?;
    let ratios = super::ratio::ratios(&raw.ratio, &parameters).map_err(fail)?;
    let holdout = sections::holdout(&raw.validation).map_err(fail)?;
    let calibration =
        sections::calibration(&raw.calibration, &alternatives, base, constants).map_err(fail)?;
    let restrictions = parameters::restrictions(&raw.restrictions, &parameters).map_err(fail)?;
    let field = sections::field(raw.field.as_deref()).map_err(fail)?;
    Ok(Spec {
        path: path.to_path_buf(),
        title: raw.title,
        field,
        data,
        family,
        family_keys,
        base,
        base_named: raw.model.base.is_some(),
        constants,
        alternatives,
        attributes,
        characteristics,
        derived,
        parameters,
        ratios,
        family_columns,
        holdout,
        calibration,
        restrictions,
        sampling,
    })
}
