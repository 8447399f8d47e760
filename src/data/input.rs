//! Opening inputs: files or `-` for standard input, with a bound on line length so that hostile
//! input cannot exhaust memory.

use std::fs::File;
use std::io::{self, BufReader, Read};

use crate::error::DataError;

/// Longest physical line accepted, in bytes, unless the caller says otherwise.
pub const DEFAULT_MAX_LINE_BYTES: usize = 1 << 20;

/// A reader that fails once a physical line grows beyond a limit.
pub struct LineLimit<R> {
    inner: R,
    limit: usize,
    current: usize,
    line: u64,
}

impl<R: Read> LineLimit<R> {
    pub fn new(inner: R, limit: usize) -> Self {
        LineLimit {
            inner,
            limit,
            current: 0,
            line: 1,
        }
    }
}

impl<R: Read> Read for LineLimit<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        let n = self.inner.read(buf)?;
        for &b in &buf[..n] {
            if b == b'\n' {
                self.current = 0;
                self.line += 1;
            } else {
                self.current += 1;
                if self.current > self.limit {
                    return Err(io::Error::new(
                        io::ErrorKind::InvalidData,
                        format!(
                            "line {} is longer than {} bytes (the limit for one line)",
                            self.line, self.limit
                        ),
                    ));
                }
            }
        }
        Ok(n)
    }
}

/// The display name of an input path.
pub fn display_name(path: &str) -> String {
    if path == "-" {
        "<stdin>".to_string()
    } else {
        path.to_string()
    }
}

/// Open a path (or `-`) for reading.
pub fn open(path: &str, max_line_bytes: usize) -> Result<Box<dyn Read>, DataError> {
    let reader: Box<dyn Read> = if path == "-" {
        Box::new(io::stdin().lock())
    } else {
        let file = File::open(path).map_err(|source| DataError::Io {
            file: path.to_string(),
            source,
        })?;
        Box::new(BufReader::with_capacity(1 << 16, file))
    };
    Ok(Box::new(LineLimit::new(reader, max_line_bytes)))
}

/// Turn a csv error into a data error at the right place.
pub fn csv_error(file: &str, err: csv::Error) -> DataError {
    let line = err.position().map(|p| p.line());
    let reason = match err.kind() {
        csv::ErrorKind::Io(e) => {
            if e.kind() == io::ErrorKind::InvalidData {
                e.to_string()
            } else {
                return DataError::Io {
                    file: file.to_string(),
                    source: io::Error::new(e.kind(), e.to_string()),
                };
            }
        }
        csv::ErrorKind::UnequalLengths {
            expected_len, len, ..
        } => format!("expected {expected_len} fields like the header, found {len}"),
        csv::ErrorKind::Utf8 { err, .. } => format!("field {} is not valid UTF-8", err.field() + 1),
        _ => err.to_string(),
    };
    DataError::Rejected(crate::error::Rejection {
        at: crate::error::Location {
            file: file.to_string(),
            line,
            column: None,
        },
        reason,
    })
}

/// Whether a csv error concerns one row only (the reader can go on past it).
pub fn is_row_error(err: &csv::Error) -> bool {
    matches!(
        err.kind(),
        csv::ErrorKind::UnequalLengths { .. } | csv::ErrorKind::Utf8 { .. }
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_lines_are_refused_short_ones_pass() {
        let data = b"ab\ncdef\n".to_vec();
        let mut ok = String::new();
        LineLimit::new(&data[..], 4)
            .read_to_string(&mut ok)
            .unwrap();
        assert_eq!(ok, "ab\ncdef\n");
        let mut out = String::new();
        let err = LineLimit::new(&data[..], 3)
            .read_to_string(&mut out)
            .unwrap_err();
        assert!(err.to_string().contains("line 2"), "{err}");
    }
}
