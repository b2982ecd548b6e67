//! Reads the columns a model needs from a CSV or Parquet file with polars,
//! checking first that they exist, and hands them over as a `Table`.

use std::path::Path;
use std::sync::Arc;

use polars::prelude::*;

use super::table::{Column as TCol, Table};
use crate::error::{Error, Result};

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Format {
    Csv,
    Parquet,
}

fn format_of(path: &Path) -> Result<Format> {
    match path
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
    {
        Some(e) if e == "csv" => Ok(Format::Csv),
        Some(e) if e == "parquet" || e == "pq" => Ok(Format::Parquet),
        _ => Err(Error::data(path, "data files must end in .csv or .parquet")),
    }
}

fn polars_err(path: &Path, e: PolarsError) -> Error {
    let msg = e.to_string();
    if msg.contains("ragged") || msg.contains("more fields") {
        if let Some(err) = super::csvcheck::ragged_error(path) {
            return err;
        }
    }
    if msg.to_lowercase().contains("empty") {
        Error::data(path, "the file is empty (no header row)")
    } else {
        Error::data(path, format!("could not be read as data: {msg}"))
    }
}

fn check_file(path: &Path) -> Result<()> {
    match std::fs::metadata(path) {
        Err(_) => Err(Error::data(
            path,
            "data file not found (check [data].file; it is relative to the spec file)",
        )),
        Ok(m) if m.is_dir() => Err(Error::data(path, "is a directory, not a data file")),
        Ok(m) if m.len() == 0 => Err(Error::data(path, "the file is empty (no header row)")),
        Ok(_) => Ok(()),
    }
}

/// Column names of a data file, in file order.
pub fn column_names(path: &Path) -> Result<Vec<String>> {
    check_file(path)?;
    match format_of(path)? {
        Format::Csv => {
            super::csvcheck::line_ends(path)?;
            let df = CsvReadOptions::default()
                .with_has_header(true)
                .with_n_rows(Some(1))
                .with_infer_schema_length(Some(0))
                .try_into_reader_with_file_path(Some(path.to_path_buf()))
                .and_then(|r| r.finish())
                .map_err(|e| polars_err(path, e))?;
            let names: Vec<String> = df
                .get_column_names()
                .iter()
                .map(|s| s.to_string())
                .collect();
            super::csvcheck::duplicate_names(path, &names)?;
            Ok(names)
        }
        Format::Parquet => {
            let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
            let mut reader = ParquetReader::new(file);
            let schema = reader.schema().map_err(|e| polars_err(path, e))?;
            Ok(schema.iter_names().map(|s| s.to_string()).collect())
        }
    }
}

/// Refuses a CSV file with a row whose number of fields differs from the
/// header's, fewer as well as more, naming the row, its line and both counts
/// (a draft would read a short row's gaps as missing values and guess from
/// them). Parquet files have no rows of their own length and pass.
pub fn check_field_counts(path: &Path) -> Result<()> {
    check_file(path)?;
    if format_of(path)? == Format::Csv {
        if let Some(r) = super::csvcheck::ragged_row(path, true)? {
            return Err(r.error(path));
        }
    }
    Ok(())
}

/// A column that cannot be read, and why.
pub type Unreadable = (String, String);

/// Column names of a data file split into those that can be read (numbers,
/// booleans or text) and those that cannot, with the reason (a Parquet date,
/// list, ... column). Every CSV column can be read.
pub fn readable_columns(path: &Path) -> Result<(Vec<String>, Vec<Unreadable>)> {
    let names = column_names(path)?;
    if format_of(path)? == Format::Csv {
        return Ok((names, Vec::new()));
    }
    let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let schema = ParquetReader::new(file)
        .schema()
        .map_err(|e| polars_err(path, e))?;
    let mut ok = Vec::new();
    let mut not = Vec::new();
    for n in names {
        match schema
            .get(n.as_str())
            .map(|f| parquet_type_usable(path, &n, f.dtype(), true))
        {
            Some(Err(Error::Data { message, .. })) => not.push((n, message)),
            Some(Err(e)) => not.push((n, e.to_string())),
            _ => ok.push(n),
        }
    }
    Ok((ok, not))
}

/// Reads `numeric` columns as f64 (unparsable values become NaN) and `text`
/// columns as strings. A column may be in both lists; it is then kept as text.
pub fn read(path: &Path, numeric: &[String], text: &[String]) -> Result<Table> {
    let wanted = wanted_columns(path, numeric, text)?;
    let is_text = |c: &str| text.iter().any(|t| t == c);
    let df = match format_of(path)? {
        Format::Csv => read_csv(path, None, &wanted, &is_text)?,
        Format::Parquet => read_parquet(path, None, &wanted, &is_text)?,
    };
    to_table(path, df, &wanted, numeric, text)
}

/// The columns to read (text ones first, each once), refused naming the file
/// and the column when one is not in the file.
pub(super) fn wanted_columns(
    path: &Path,
    numeric: &[String],
    text: &[String],
) -> Result<Vec<String>> {
    let names = column_names(path)?;
    let mut wanted: Vec<String> = Vec::new();
    for c in text.iter().chain(numeric) {
        if !names.contains(c) {
            let mut t = Table::new(path, 0);
            for n in &names {
                t.insert(n, TCol::Num(Vec::new()));
            }
            return Err(t.unknown(c, "named in the spec, a scenario or --by"));
        }
        if !wanted.contains(c) {
            wanted.push(c.clone());
        }
    }
    Ok(wanted)
}

/// Whether a data file is Parquet (else CSV; other endings are refused).
pub(super) fn is_parquet(path: &Path) -> Result<bool> {
    Ok(format_of(path)? == Format::Parquet)
}

/// Reads the wanted columns of a Parquet file, or of the rows `slice`
/// (offset, length) only, reusing `meta` (the file's footer) when given.
pub(super) fn read_parquet(
    path: &Path,
    slice: Option<(
        usize,
        usize,
        &polars::io::parquet::metadata::FileMetadataRef,
    )>,
    wanted: &[String],
    is_text: &dyn Fn(&str) -> bool,
) -> Result<DataFrame> {
    let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let mut reader = ParquetReader::new(file);
    if let Some((_, _, meta)) = slice {
        reader.set_metadata(meta.clone());
        // By row groups: those outside the slice are skipped, not decoded.
        reader = reader.read_parallel(ParallelStrategy::RowGroups);
    }
    let schema = reader.schema().map_err(|e| polars_err(path, e))?;
    for c in wanted {
        if let Some(field) = schema.get(c.as_str()) {
            parquet_type_usable(path, c, field.dtype(), is_text(c))?;
        }
    }
    reader
        .with_columns(Some(wanted.to_vec()))
        .with_slice(slice.map(|(offset, len, _)| (offset, len)))
        .finish()
        .map_err(|e| polars_err(path, e))
}

/// The footer of a Parquet file and its number of rows.
pub(super) fn parquet_rows(
    path: &Path,
) -> Result<(polars::io::parquet::metadata::FileMetadataRef, usize)> {
    let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let mut reader = ParquetReader::new(file);
    let meta = reader
        .get_metadata()
        .map_err(|e| polars_err(path, e))?
        .clone();
    let rows = meta.num_rows;
    Ok((meta, rows))
}

/// The wanted columns of a frame as a `Table`: numeric ones as f64, text ones
/// as strings (a column wanted both ways stays numeric when it can).
pub(super) fn to_table(
    path: &Path,
    df: DataFrame,
    wanted: &[String],
    numeric: &[String],
    text: &[String],
) -> Result<Table> {
    let is_text = |c: &str| text.iter().any(|t| t == c);
    let nrows = df.height();
    if nrows == 0 {
        return Err(Error::data(path, "the file has a header but no data rows"));
    }
    for name in wanted {
        df.column(name).map_err(|e| polars_err(path, e))?;
    }
    // Columns are taken out of the frame one at a time and dropped once
    // converted, so that the file is not held twice over at its full size.
    let mut columns = df.into_columns();
    let mut table = Table::new(path, nrows);
    for name in wanted {
        let Some(at) = columns.iter().position(|c| c.name().as_str() == name) else {
            return Err(Error::data(
                path,
                format!("could not be read as data: no column `{name}`"),
            ));
        };
        let series = columns.swap_remove(at).take_materialized_series();
        let series = &series;
        let mut cells = Vec::new();
        let converted = if is_text(name) {
            let t = text_values(series).map_err(|e| polars_err(path, e))?;
            // A column wanted both ways (a segment that a filter also reads) stays numeric when it can.
            let parsed: Option<Vec<f64>> = numeric
                .contains(name)
                .then(|| {
                    t.iter()
                        .map(|v| match v {
                            None => Some(f64::NAN),
                            Some(x) => x.trim().parse::<f64>().ok(),
                        })
                        .collect()
                })
                .flatten();
            match parsed {
                Some(v) => TCol::Num(v),
                None => TCol::Text(t),
            }
        } else {
            TCol::Num(numeric_values(series, &mut cells).map_err(|e| polars_err(path, e))?)
        };
        table.insert(name, converted);
        table.note_text(name, cells);
    }
    Ok(table)
}

/// Reads the wanted columns of a CSV file: text ones as text, the rest as
/// numbers. Numeric columns with unreadable cells (` 1.5 ` padded with spaces,
/// which polars does not parse) are read again as text and parsed trimmed;
/// this second read happens only for such columns.
/// With `bytes`, the header and rows are those bytes instead (a chunk of the
/// file; errors still name `path`).
pub(super) fn read_csv(
    path: &Path,
    bytes: Option<&[u8]>,
    wanted: &[String],
    is_text: &dyn Fn(&str) -> bool,
) -> Result<DataFrame> {
    let read = |cols: &[String], as_text: &dyn Fn(&str) -> bool| {
        let schema: Schema = cols
            .iter()
            .map(|c| {
                let dt = if as_text(c) {
                    DataType::String
                } else {
                    DataType::Float64
                };
                Field::new(c.as_str().into(), dt)
            })
            .collect();
        let names: Arc<[PlSmallStr]> = cols.iter().map(|c| PlSmallStr::from(c.as_str())).collect();
        let options = CsvReadOptions::default()
            .with_has_header(true)
            .with_columns(Some(names))
            .with_schema_overwrite(Some(Arc::new(schema)))
            .with_ignore_errors(true);
        match bytes {
            Some(b) => options
                .into_reader_with_file_handle(std::io::Cursor::new(b))
                .finish(),
            None => options
                .try_into_reader_with_file_path(Some(path.to_path_buf()))
                .and_then(|r| r.finish()),
        }
        .map_err(|e| polars_err(path, e))
    };
    let mut df = read(wanted, is_text)?;
    let gaps: Vec<String> = wanted
        .iter()
        .filter(|c| !is_text(c))
        .filter(|c| df.column(c).map(|s| s.null_count() > 0).unwrap_or(false))
        .cloned()
        .collect();
    if !gaps.is_empty() {
        let again = read(&gaps, &|_| true)?;
        for c in again.into_columns() {
            df.with_column(c).map_err(|e| polars_err(path, e))?;
        }
    }
    Ok(df)
}

/// Whether a Parquet column's type can be read: every integer, float and
/// decimal type is cast to f64, booleans to 0/1, and text is read as text. Any
/// other type (dates, times, lists, structs, ...) is refused naming the column.
fn parquet_type_usable(path: &Path, name: &str, dt: &ArrowDataType, text: bool) -> Result<()> {
    use ArrowDataType as A;
    let ok = matches!(
        dt,
        A::Int8
            | A::Int16
            | A::Int32
            | A::Int64
            | A::UInt8
            | A::UInt16
            | A::UInt32
            | A::UInt64
            | A::Float32
            | A::Float64
            | A::Boolean
            | A::Null
            | A::Decimal(_, _)
            | A::Utf8
            | A::LargeUtf8
            | A::Utf8View
    );
    if ok {
        return Ok(());
    }
    let wanted = if text { "text or numbers" } else { "numbers" };
    let kind = match dt {
        A::Date32 | A::Date64 => "date".to_string(),
        A::Timestamp(_, _) => "timestamp".to_string(),
        A::Time32(_) | A::Time64(_) => "time of day".to_string(),
        A::Duration(_) | A::Interval(_) => "duration".to_string(),
        A::List(_) | A::LargeList(_) | A::FixedSizeList(_, _) => "list".to_string(),
        A::Struct(_) => "struct".to_string(),
        A::Binary | A::LargeBinary | A::BinaryView | A::FixedSizeBinary(_) => "binary".to_string(),
        A::Dictionary(_, _, _) => "dictionary (categorical)".to_string(),
        other => format!("{other:?}"),
    };
    Err(Error::data(
        path,
        format!(
            "column `{name}` has the Parquet type {kind}, which cannot be used here (wanted: {wanted}); convert it to a number or text column"
        ),
    ))
}

/// How many of a numeric column's text cells a read keeps (the first ones,
/// in row order: messages name the first).
const TEXT_CELLS_KEPT: usize = 1000;

/// A column as numbers (missing or unparsable values are NaN); the first
/// `TEXT_CELLS_KEPT` cells that held text other than a missing-value marker
/// are added to `text`.
fn numeric_values(s: &Series, text: &mut Vec<(usize, String)>) -> PolarsResult<Vec<f64>> {
    if let DataType::String = s.dtype() {
        let ca = s.str()?;
        return Ok(ca
            .iter()
            .enumerate()
            .map(|(i, v)| {
                let v = v?;
                let x = v.trim().parse::<f64>().ok();
                if x.is_none() && text.len() < TEXT_CELLS_KEPT && !missing_marker(v) {
                    text.push((i, crate::error::quote(v)));
                }
                x
            })
            .map(|x| x.unwrap_or(f64::NAN))
            .collect());
    }
    if let DataType::Boolean = s.dtype() {
        return Ok(s
            .bool()?
            .iter()
            .map(|v| v.map(|b| b as u8 as f64).unwrap_or(f64::NAN))
            .collect());
    }
    if let DataType::Float64 = s.dtype() {
        return Ok(f64_values(s.f64()?));
    }
    let f = s.cast(&DataType::Float64)?;
    Ok(f64_values(f.f64()?))
}

/// Whether a cell that is not a number says it is missing (`NA`, `n/a`,
/// `null`, `.`, ...) rather than holding text.
pub fn missing_marker(cell: &str) -> bool {
    let t = cell.trim();
    t.is_empty()
        || [
            "na", "n/a", "#n/a", "nan", "null", "none", "missing", ".", "-", "?",
        ]
        .iter()
        .any(|m| t.eq_ignore_ascii_case(m))
}

/// Float64 values with missing ones as NaN, copied chunk by chunk.
fn f64_values(ca: &Float64Chunked) -> Vec<f64> {
    if ca.null_count() > 0 {
        return ca.iter().map(|v| v.unwrap_or(f64::NAN)).collect();
    }
    let mut out = Vec::with_capacity(ca.len());
    for arr in ca.downcast_iter() {
        out.extend_from_slice(arr.values());
    }
    out
}

fn text_values(s: &Series) -> PolarsResult<Vec<Option<String>>> {
    match s.dtype() {
        DataType::String => Ok(s.str()?.iter().map(|v| v.map(|t| t.to_string())).collect()),
        DataType::Boolean => Ok(s
            .bool()?
            .iter()
            .map(|v| v.map(|b| (b as u8).to_string()))
            .collect()),
        _ => {
            // Each distinct number is written out once (the first 4,096 of
            // them; later ones each time): a column of codes repeats a few.
            let f = s.cast(&DataType::Float64)?;
            let mut written: std::collections::HashMap<u64, String> = Default::default();
            Ok(f.f64()?
                .iter()
                .map(|v| {
                    v.filter(|x| !x.is_nan())
                        .map(|x| match written.get(&x.to_bits()) {
                            Some(t) => t.clone(),
                            None => {
                                let t = super::table::number_key(x);
                                if written.len() < 4096 {
                                    written.insert(x.to_bits(), t.clone());
                                }
                                t
                            }
                        })
                })
                .collect())
        }
    }
}
