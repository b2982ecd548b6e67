//! A data file read in chunks of rows — Parquet row ranges, CSV blocks cut at
//! row ends — with only the columns the model (and the caller's extras) need,
//! each chunk turned into a `Dataset` as `load_file` turns a whole file: what a
//! pass over a population holds at once does not grow with the file. A chunk
//! never splits a situation (long layout) or a decision maker (`[data].group`):
//! the rows of the last one are held back for the next chunk.

use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};

use polars::io::parquet::metadata::FileMetadataRef;

use super::csvcheck::{FieldCount, Ragged};
use super::{load, Dataset, Extra, Table};
use crate::error::{Error, Result};
use crate::spec::{Layout, Spec};

/// The default number of file rows in a chunk.
pub const DEFAULT_CHUNK_ROWS: usize = 500_000;

/// Where the rows come from.
enum Source {
    Parquet {
        meta: FileMetadataRef,
        total: usize,
        next: usize,
    },
    Csv {
        reader: BufReader<std::fs::File>,
        header: Vec<u8>,
        /// Inside a quoted field at the reader's position.
        quoted: bool,
        eof: bool,
        /// The fields of every row read so far, counted as the whole-file
        /// reader counts them (a row with more fields than the header is refused).
        fields: FieldCount,
    },
}

/// One chunk: its situations as a `Dataset`, and how many came before it.
pub struct Chunk {
    pub ds: Dataset,
    /// Situations of the file before this chunk's first.
    pub situations_before: usize,
}

/// A data file read chunk by chunk.
pub struct Chunks<'a> {
    spec: &'a Spec,
    path: PathBuf,
    numeric: Vec<String>,
    text: Vec<String>,
    wanted: Vec<String>,
    rows: usize,
    source: Source,
    /// Data rows read from the file so far.
    read: usize,
    situations: usize,
    /// Rows held back: the last situation or decision maker of the previous read.
    carry: Option<Table>,
    /// The column whose last run of equal values is held back.
    key: Option<String>,
    /// A CSV block read ahead (to know whether the file is one chunk).
    ahead: Option<Vec<u8>>,
    /// Whether the file holds observed choices (a population may not).
    choices: bool,
    /// Layout "tables": the tables, loaded once.
    tables: Option<std::sync::Arc<super::Tables>>,
}

/// Situations x alternatives per chunk of a file in layout "tables".
const TABLES_CELLS: usize = 4_000_000;

impl<'a> Chunks<'a> {
    /// Opens `file` for chunks of `rows` rows (at least 1), checking that
    /// every needed column is there (the error names the file and the column);
    /// the observed choices may be missing, as `load_file` allows.
    pub fn open(spec: &'a Spec, file: &Path, extra: &Extra, rows: usize) -> Result<Chunks<'a>> {
        let (numeric, text, choices) = super::population_columns(spec, file, extra)?;
        let wanted = load::wanted_columns(file, &numeric, &text)?;
        // A decision maker's rows hold whole situations, so keeping the
        // decision maker together keeps their situations together too.
        let key = match (&spec.data.group, &spec.data.layout) {
            (Some(g), _) => Some(g.clone()),
            (None, Layout::Long { situation, .. }) => Some(situation.clone()),
            (None, Layout::Wide { .. } | Layout::Tables { .. }) => None,
        };
        // A chunk of a file in layout "tables" holds every alternative of
        // each of its situations: fewer rows keep its arrays bounded.
        let tables = super::tables_of(spec)?;
        let rows = match &tables {
            Some(t) => rows.min((TABLES_CELLS / t.alternatives().max(1)).max(1)),
            None => rows,
        };
        let source = if load::is_parquet(file)? {
            let (meta, total) = load::parquet_rows(file)?;
            Source::Parquet {
                meta,
                total,
                next: 0,
            }
        } else {
            let f = std::fs::File::open(file).map_err(|e| Error::io(file, e))?;
            Source::Csv {
                reader: BufReader::with_capacity(1 << 20, f),
                header: Vec::new(),
                quoted: false,
                eof: false,
                fields: FieldCount::new(false),
            }
        };
        let mut chunks = Chunks {
            spec,
            path: file.to_path_buf(),
            numeric,
            text,
            wanted,
            rows: rows.max(1),
            source,
            read: 0,
            situations: 0,
            carry: None,
            key,
            ahead: None,
            choices,
            tables,
        };
        if let Source::Csv { .. } = chunks.source {
            chunks.read_header()?;
            chunks.ahead = chunks.csv_block()?;
        }
        Ok(chunks)
    }

    /// Whether the whole file is one chunk (nothing is read twice to know it).
    pub fn single(&self) -> bool {
        match &self.source {
            Source::Parquet { total, .. } => *total <= self.rows,
            Source::Csv { eof, .. } => *eof,
        }
    }

    /// The file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// How far reading has gone, as (done, total): rows of a Parquet file,
    /// bytes of a CSV file (for progress reports).
    pub fn position(&self) -> (u64, u64) {
        match &self.source {
            Source::Parquet { total, next, .. } => (*next as u64, *total as u64),
            Source::Csv { reader, eof, .. } => {
                let total = reader.get_ref().metadata().map_or(0, |m| m.len());
                let held = reader.buffer().len() + self.ahead.as_ref().map_or(0, |a| a.len());
                let at = std::io::Seek::stream_position(&mut reader.get_ref()).unwrap_or(0);
                let done = if *eof && self.ahead.is_none() {
                    total
                } else {
                    at.saturating_sub(held as u64)
                };
                (done.min(total), total)
            }
        }
    }

    fn exhausted(&self) -> bool {
        match &self.source {
            Source::Parquet { total, next, .. } => next >= total,
            Source::Csv { eof, .. } => *eof && self.ahead.is_none(),
        }
    }

    /// The next chunk, or `None` after the last.
    pub fn next_chunk(&mut self) -> Result<Option<Chunk>> {
        loop {
            let fresh = self.read_rows()?;
            let mut table = match (self.carry.take(), fresh) {
                (None, None) => return Ok(None),
                (Some(c), None) => c,
                (None, Some(t)) => t,
                (Some(mut c), Some(t)) => {
                    c.append(t);
                    c
                }
            };
            if !self.exhausted() {
                if let Some(key) = &self.key {
                    let cut = table.last_run(key);
                    if cut == 0 {
                        // One situation or decision maker so far: read on.
                        self.carry = Some(table);
                        continue;
                    }
                    self.carry = Some(table.split_off(cut));
                }
            }
            let n_rows = table.nrows;
            let mut ds = super::from_table(self.spec, table, self.choices, self.tables.clone())?;
            if let Layout::Long { .. } = self.spec.data.layout {
                // The situation-level table of a long file counts situations.
                ds.table.offset = self.situations;
            }
            let before = self.situations;
            self.situations += ds.obs.situations;
            debug_assert!(n_rows > 0);
            return Ok(Some(Chunk {
                ds,
                situations_before: before,
            }));
        }
    }

    /// The next block of rows as a table (offset set), or `None` at the end.
    fn read_rows(&mut self) -> Result<Option<Table>> {
        let text = self.text.clone();
        let is_text = move |c: &str| text.iter().any(|t| t == c);
        let df = match &mut self.source {
            Source::Parquet { meta, total, next } => {
                if *next >= *total {
                    return Ok(None);
                }
                let len = self.rows.min(*total - *next);
                let df = load::read_parquet(
                    &self.path,
                    Some((*next, len, &*meta)),
                    &self.wanted,
                    &is_text,
                )?;
                *next += len;
                df
            }
            Source::Csv { .. } => {
                let block = match self.ahead.take() {
                    Some(b) => Some(b),
                    None => self.csv_block()?,
                };
                let Some(block) = block else {
                    return Ok(None);
                };
                load::read_csv(&self.path, Some(&block), &self.wanted, &is_text)?
            }
        };
        if df.height() == 0 {
            return Ok(None);
        }
        let mut table = load::to_table(&self.path, df, &self.wanted, &self.numeric, &self.text)?;
        table.offset = self.read;
        self.read += table.nrows;
        Ok(Some(table))
    }

    /// Reads the CSV header line (kept to head every block).
    fn read_header(&mut self) -> Result<()> {
        let path = self.path.clone();
        let Source::Csv {
            reader,
            header,
            quoted,
            eof,
            fields,
        } = &mut self.source
        else {
            return Ok(());
        };
        match scan_rows(reader, header, quoted, eof, fields, 1) {
            Ok(None) => Ok(()),
            Ok(Some(r)) => Err(r.error(&path)),
            Err(e) => Err(Error::io(&path, e)),
        }
    }

    /// The header and up to `rows` more rows of a CSV file, cut at a row end
    /// outside quotes; `None` when no row is left.
    fn csv_block(&mut self) -> Result<Option<Vec<u8>>> {
        let path = self.path.clone();
        let rows = self.rows;
        let Source::Csv {
            reader,
            header,
            quoted,
            eof,
            fields,
        } = &mut self.source
        else {
            return Ok(None);
        };
        if *eof {
            return Ok(None);
        }
        let mut block = header.clone();
        let start = block.len();
        match scan_rows(reader, &mut block, quoted, eof, fields, rows) {
            Ok(None) => {}
            Ok(Some(r)) => return Err(r.error(&path)),
            Err(e) => return Err(Error::io(&path, e)),
        }
        if block[start..].iter().all(|b| b.is_ascii_whitespace()) {
            return Ok(None);
        }
        Ok(Some(block))
    }
}

/// Appends to `out` up to `rows` rows (ends of line outside double quotes)
/// from `reader`; sets `eof` when nothing is left after them. The fields of
/// each row are counted on the way: the first row with more than the
/// header's is returned.
fn scan_rows(
    reader: &mut BufReader<std::fs::File>,
    out: &mut Vec<u8>,
    quoted: &mut bool,
    eof: &mut bool,
    fields: &mut FieldCount,
    rows: usize,
) -> std::io::Result<Option<Ragged>> {
    let mut count = 0;
    while count < rows {
        let avail = reader.fill_buf()?;
        if avail.is_empty() {
            *eof = true;
            return Ok(fields.finish());
        }
        let mut used = avail.len();
        for (k, &b) in avail.iter().enumerate() {
            if b == b'"' {
                *quoted = !*quoted;
            } else if b == b'\n' && !*quoted {
                count += 1;
                if count == rows {
                    used = k + 1;
                    break;
                }
            }
        }
        out.extend_from_slice(&avail[..used]);
        let ragged = fields.feed(&avail[..used]);
        reader.consume(used);
        if ragged.is_some() {
            return Ok(ragged);
        }
    }
    if reader.fill_buf()?.is_empty() {
        *eof = true;
        return Ok(fields.finish());
    }
    Ok(None)
}
