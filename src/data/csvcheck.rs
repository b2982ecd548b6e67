//! Plain checks of a CSV file's shape that polars reports in its own terms (or
//! not at all): line ends of a carriage return alone, a header naming a column
//! twice, and a row with more fields than the header. Each error names the row
//! or the positions.

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

/// The first data row (from 1) with more fields than the header, and its
/// field count; quoted fields may hold commas and line ends.
pub fn ragged_row(path: &Path) -> Option<(usize, usize, usize)> {
    let bytes = std::fs::read(path).ok()?;
    let (mut fields, mut row, mut quoted, mut header) = (1usize, 0usize, false, 0usize);
    let mut empty_line = true;
    for &b in &bytes {
        match b {
            b'"' => quoted = !quoted,
            b',' if !quoted => fields += 1,
            b'\n' if !quoted => {
                if !empty_line {
                    if row == 0 {
                        header = fields;
                    } else if fields > header {
                        return Some((row, fields, header));
                    }
                    row += 1;
                }
                fields = 1;
                empty_line = true;
                continue;
            }
            b'\r' => continue,
            _ => {}
        }
        empty_line = false;
    }
    (row > 0 && !empty_line && fields > header).then_some((row, fields, header))
}

/// The error for a row with too many fields, if there is one.
pub fn ragged_error(path: &Path) -> Option<Error> {
    ragged_row(path).map(|(row, fields, header)| {
        Error::data(
            path,
            format!(
                "row {row} has {fields} fields but the header names {header} columns; remove the extra fields or quote a field that holds a comma"
            ),
        )
    })
}
