//! Plain checks of a CSV file's shape that polars reports in its own terms (or
//! not at all): line ends of a carriage return alone, a header naming a column
//! twice, and a row with more fields than the header (or fewer, for a draft),
//! counted over the whole file or over the blocks a chunked read takes in
//! turn. Each error names the row (and its line) or the positions.

use std::io::Read;
use std::path::Path;

use crate::error::{Error, Result};

/// How much of the file's start is looked at for the line ends.
const SAMPLE: usize = 1 << 16;

/// Refuses a file whose lines end in a carriage return alone (old Mac style):
/// polars would read it as one long header row.
pub fn line_ends(path: &Path) -> Result<()> {
    let mut head = Vec::with_capacity(SAMPLE);
    std::fs::File::open(path)
        .and_then(|f| f.take(SAMPLE as u64).read_to_end(&mut head))
        .map_err(|e| Error::io(path, e))?;
    if head.contains(&b'\r') && !head.contains(&b'\n') {
        return Err(Error::data(
            path,
            "the lines end in a carriage return alone (an old Mac format), so the file reads as one line; save it with ordinary line ends (LF, or CR LF)",
        ));
    }
    Ok(())
}

/// Refuses a header that names a column twice (polars would rename the second
/// `name_duplicated_0`), naming both positions (from 1).
pub fn duplicate_names(path: &Path, names: &[String]) -> Result<()> {
    for (k, n) in names.iter().enumerate() {
        let Some((base, _)) = n.rsplit_once("_duplicated_") else {
            continue;
        };
        if let Some(first) = names[..k].iter().position(|x| x == base) {
            return Err(Error::data(
                path,
                format!(
                    "the header names column `{base}` twice, at positions {} and {} (counting from 1); rename one of them",
                    first + 1,
                    k + 1
                ),
            ));
        }
    }
    Ok(())
}

/// A row whose number of fields differs from the header's.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Ragged {
    /// The data row, from 1 (the header is not counted; empty lines are skipped).
    pub row: usize,
    /// The line of the file (from 1, the header being line 1) where the row starts.
    pub line: usize,
    pub fields: usize,
    pub header: usize,
}

impl Ragged {
    /// The error naming the file, the row, its line and both counts.
    pub fn error(&self, path: &Path) -> Error {
        let Ragged {
            row,
            line,
            fields,
            header,
        } = *self;
        let fix = if fields > header {
            "remove the extra fields or quote a field that holds a comma"
        } else {
            "every row needs a field per column (leave a missing value empty, but keep its comma)"
        };
        Error::data(
            path,
            format!(
                "row {row} (line {line} of the file) has {fields} field{} but the header names {header} columns; {fix}",
                if fields == 1 { "" } else { "s" }
            ),
        )
    }
}

/// Counts the fields of each row of CSV bytes fed in order (quoted fields may
/// hold commas and line ends), and tells the first row with more fields than
/// the header, or with fewer too when asked.
#[derive(Clone, Debug)]
pub struct FieldCount {
    fewer: bool,
    header: Option<usize>,
    fields: usize,
    quoted: bool,
    empty_line: bool,
    /// Data rows ended so far.
    rows: usize,
    /// Line ends seen so far.
    lines: usize,
    /// The line (from 1) where the current row starts.
    row_line: usize,
}

impl FieldCount {
    /// A count from the file's first byte; `fewer`: rows with fewer fields are refused too.
    pub fn new(fewer: bool) -> FieldCount {
        FieldCount {
            fewer,
            header: None,
            fields: 1,
            quoted: false,
            empty_line: true,
            rows: 0,
            lines: 0,
            row_line: 1,
        }
    }

    /// Reads on through `bytes`; the first row found wrong.
    pub fn feed(&mut self, bytes: &[u8]) -> Option<Ragged> {
        for &b in bytes {
            match b {
                b'"' => self.quoted = !self.quoted,
                b',' if !self.quoted => self.fields += 1,
                b'\n' => {
                    self.lines += 1;
                    if self.quoted {
                        continue;
                    }
                    let bad = self.end_row();
                    self.row_line = self.lines + 1;
                    if bad.is_some() {
                        return bad;
                    }
                    continue;
                }
                b'\r' => continue,
                _ => {}
            }
            self.empty_line = false;
        }
        None
    }

    /// The end of the bytes: the last row, if it has no line end.
    pub fn finish(&mut self) -> Option<Ragged> {
        self.end_row()
    }

    fn end_row(&mut self) -> Option<Ragged> {
        let (fields, empty) = (self.fields, self.empty_line);
        self.fields = 1;
        self.empty_line = true;
        if empty {
            return None;
        }
        let Some(header) = self.header else {
            self.header = Some(fields);
            return None;
        };
        self.rows += 1;
        let wrong = fields > header || (self.fewer && fields < header);
        wrong.then_some(Ragged {
            row: self.rows,
            line: self.row_line,
            fields,
            header,
        })
    }
}

/// The first row of a CSV file whose number of fields is wrong: more than
/// the header's, or (with `fewer`) less. The file is read in blocks.
pub fn ragged_row(path: &Path, fewer: bool) -> Result<Option<Ragged>> {
    let mut f = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let mut count = FieldCount::new(fewer);
    let mut buf = vec![0u8; 1 << 20];
    loop {
        let n = f.read(&mut buf).map_err(|e| Error::io(path, e))?;
        if n == 0 {
            return Ok(count.finish());
        }
        if let Some(r) = count.feed(&buf[..n]) {
            return Ok(Some(r));
        }
    }
}

/// The error for a row with too many fields, if there is one.
pub fn ragged_error(path: &Path) -> Option<Error> {
    match ragged_row(path, false) {
        Ok(r) => r.map(|r| r.error(path)),
        Err(e) => Some(e),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn first(bytes: &[u8], fewer: bool) -> Option<Ragged> {
        let mut c = FieldCount::new(fewer);
        c.feed(bytes).or_else(|| c.finish())
    }

    #[test]
    fn rows_are_counted_as_the_file_reads_them() {
        // Quoted commas and line ends, CR LF and empty lines do not count.
        let ok = b"a,b,c\r\n1,\"x, y\",3\r\n\r\n2,\"two\nlines\",4\n";
        assert_eq!(first(ok, true), None);
        let long = b"a,b,c\n1,2,3\n\n\"p\nq\",5,6,7\n";
        assert_eq!(
            first(long, false),
            Some(Ragged {
                row: 2,
                line: 4,
                fields: 4,
                header: 3
            })
        );
        // A short last row without a line end is found only when asked for.
        let short = b"a,b,c\n1,2,3\n4,5";
        assert_eq!(first(short, false), None);
        assert_eq!(
            first(short, true),
            Some(Ragged {
                row: 2,
                line: 3,
                fields: 2,
                header: 3
            })
        );
    }

    #[test]
    fn bytes_fed_in_pieces_count_as_bytes_fed_at_once() {
        let text = b"a,b\n1,\"2\n,\"\n3,4,5\n";
        let whole = first(text, false);
        let mut c = FieldCount::new(false);
        let pieces = text
            .chunks(3)
            .find_map(|p| c.feed(p))
            .or_else(|| c.finish());
        assert_eq!(pieces, whole);
        assert_eq!(whole.map(|r| (r.row, r.line)), Some((2, 4)));
    }
}
