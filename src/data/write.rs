//! Writes tables (CSV, Parquet) and text files atomically: into a temporary
//! file beside the target, then renamed over it. An existing file is only
//! replaced when the caller passes `force`.

use std::io::Write;
use std::path::{Path, PathBuf};

use polars::prelude::*;

use crate::error::{Error, Result};

/// One output column.
#[derive(Clone, Debug, PartialEq)]
pub enum Values {
    Num(Vec<f64>),
    Int(Vec<i64>),
    Text(Vec<String>),
}

impl Values {
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    pub fn len(&self) -> usize {
        match self {
            Values::Num(v) => v.len(),
            Values::Int(v) => v.len(),
            Values::Text(v) => v.len(),
        }
    }
}

fn temp_path(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    path.with_file_name(format!(".{name}.{}.tmp", std::process::id()))
}

/// Whether something is at `path`: a file, a directory, or a symbolic link,
/// even one whose target does not exist (writing would replace the link).
pub fn occupied(path: &Path) -> bool {
    std::fs::symlink_metadata(path).is_ok()
}

/// Refuses to replace an existing file (or a dangling symbolic link) unless `force`.
pub fn check_overwrite(path: &Path, force: bool) -> Result<()> {
    if path.is_dir() {
        return Err(Error::io(path, "is a directory"));
    }
    if !force && occupied(path) {
        let what = if path.exists() {
            "exists already"
        } else {
            "is a symbolic link (to a file that does not exist) and would be replaced"
        };
        return Err(Error::io(
            path,
            format!("{what}; pass --force to replace it"),
        ));
    }
    Ok(())
}

/// Writes bytes produced by `fill` atomically.
pub fn atomic(
    path: &Path,
    force: bool,
    fill: impl FnOnce(&mut std::fs::File) -> Result<()>,
) -> Result<()> {
    check_overwrite(path, force)?;
    if let Some(dir) = path.parent() {
        if !dir.as_os_str().is_empty() && !dir.exists() {
            std::fs::create_dir_all(dir).map_err(|e| {
                Error::io(
                    path,
                    format!("could not create its folder {}: {e}", dir.display()),
                )
            })?;
        }
    }
    let tmp = temp_path(path);
    // Errors name the file asked for; the temporary file is only mentioned.
    let failed = |e: std::io::Error| {
        Error::io(
            path,
            format!(
                "could not be written: {e} (while writing the temporary file {} beside it)",
                tmp.display()
            ),
        )
    };
    let result = (|| {
        let mut f = std::fs::File::create(&tmp).map_err(failed)?;
        fill(&mut f)?;
        f.flush().map_err(failed)?;
        f.sync_all().map_err(failed)?;
        std::fs::rename(&tmp, path)
            .map_err(|e| Error::io(path, format!("could not be written: {e}")))
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// Writes text atomically.
pub fn text(path: &Path, force: bool, body: &str) -> Result<()> {
    atomic(path, force, |f| {
        f.write_all(body.as_bytes()).map_err(|e| Error::io(path, e))
    })
}

fn frame(columns: &[(String, Values)]) -> Result<DataFrame> {
    let height = columns.first().map(|c| c.1.len()).unwrap_or(0);
    let cols: Vec<polars::prelude::Column> = columns
        .iter()
        .map(|(name, v)| match v {
            Values::Num(x) => polars::prelude::Column::new(name.as_str().into(), x.as_slice()),
            Values::Int(x) => polars::prelude::Column::new(name.as_str().into(), x.as_slice()),
            Values::Text(x) => polars::prelude::Column::new(name.as_str().into(), x.as_slice()),
        })
        .collect();
    DataFrame::new(height, cols)
        .map_err(|e| Error::Usage(format!("could not build the table: {e}")))
}

/// Writes a table as CSV or Parquet, chosen by the file's extension.
pub fn table(path: &Path, force: bool, columns: &[(String, Values)]) -> Result<()> {
    let mut df = frame(columns)?;
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    match ext.as_str() {
        "csv" => atomic(path, force, |f| {
            CsvWriter::new(f)
                .finish(&mut df)
                .map_err(|e| Error::io(path, e))
        }),
        "parquet" => atomic(path, force, |f| {
            ParquetWriter::new(f)
                .finish(&mut df)
                .map(|_| ())
                .map_err(|e| Error::io(path, e))
        }),
        _ => Err(Error::io(path, "tables are written as .csv or .parquet")),
    }
}

/// Writes rows of a table as CSV to an open file: with the header for the
/// first part, without it for the next (the parts then read as one table).
pub fn csv_rows(
    path: &Path,
    f: &mut std::fs::File,
    columns: &[(String, Values)],
    header: bool,
) -> Result<()> {
    let mut df = frame(columns)?;
    CsvWriter::new(f)
        .include_header(header)
        .finish(&mut df)
        .map_err(|e| Error::io(path, e))
}

/// A Parquet file written part by part (a row group or more per part).
pub struct ParquetAppender {
    writer: polars::io::parquet::write::BatchedWriter<std::fs::File>,
}

impl ParquetAppender {
    /// Starts a Parquet file on `f` with the schema of `columns`.
    pub fn new(
        path: &Path,
        f: &std::fs::File,
        columns: &[(String, Values)],
    ) -> Result<ParquetAppender> {
        let df = frame(columns)?;
        let handle = f.try_clone().map_err(|e| Error::io(path, e))?;
        let writer = ParquetWriter::new(handle)
            .batched(df.schema())
            .map_err(|e| Error::io(path, e))?;
        Ok(ParquetAppender { writer })
    }

    /// Appends rows with the same columns.
    pub fn append(&mut self, path: &Path, columns: &[(String, Values)]) -> Result<()> {
        let df = frame(columns)?;
        self.writer.write_batch(&df).map_err(|e| Error::io(path, e))
    }

    /// Writes the footer.
    pub fn finish(self, path: &Path) -> Result<()> {
        self.writer
            .finish()
            .map(|_| ())
            .map_err(|e| Error::io(path, e))
    }
}
