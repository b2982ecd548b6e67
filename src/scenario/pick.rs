//! Layout "tables": a scenario's change picks its alternatives by a filter
//! over the table of alternatives (`where = "district == 'east'"` with no
//! `alternative`), evaluated once per alternative.

use crate::data::{load, Column};
use crate::error::{Error, Result};
use crate::spec::{Expr, Layout, Spec};

/// The alternatives of the spec's table of alternatives where `expr` is not
/// 0, in table order; `None` when the spec is not in layout "tables".
pub(super) fn alternatives_where(
    spec: &Spec,
    (path, key): (&std::path::Path, &str),
    expr: &Expr,
) -> Result<Option<Vec<usize>>> {
    let Layout::Tables { alternatives, .. } = &spec.data.layout else {
        return Ok(None);
    };
    let file = &alternatives.file;
    let names = load::column_names(file)?;
    let wanted = expr.columns();
    if let Some(c) = wanted.iter().find(|c| !names.contains(c)) {
        return Err(Error::spec(
            path,
            format!(
                "{key}: column `{c}` is not in the table of alternatives ({}; it has {})",
                alternatives.file_written,
                names.join(", ")
            ),
        ));
    }
    // Every column both ways: numbers stay numbers, text stays text.
    let table = load::read(file, &wanted, &wanted)?;
    let numbers = |c: &str| table.raw_numbers(c);
    let texts = |c: &str| match table.column(c) {
        Some(Column::Text(v)) => Some(v.as_slice()),
        _ => None,
    };
    let v = expr
        .eval_with_text(&numbers, &texts, table.nrows)
        .map_err(|m| Error::spec(path, format!("{key}: {m}")))?;
    if let Some(r) = v.iter().position(|x| !x.is_finite()) {
        return Err(Error::spec(
            path,
            format!(
                "{key}: not a number for the alternative on row {} of {}",
                r + 1,
                alternatives.file_written
            ),
        ));
    }
    let picked: Vec<usize> = (0..v.len().min(spec.alternatives.len()))
        .filter(|&k| v[k] != 0.0)
        .collect();
    if picked.is_empty() {
        return Err(Error::spec(
            path,
            format!(
                "{key}: no alternative of {} meets the filter",
                alternatives.file_written
            ),
        ));
    }
    Ok(Some(picked))
}
