//! Opening inputs: files or `-` for standard input, with a bound on line length so that hostile
//! input cannot exhaust memory.

use std::fs::File;
use std::io::{self, BufReader, Read};

use crate::error::DataError;

/// Longest physical line accepted, in bytes, unless the caller says otherwise.
pub const DEFAULT_MAX_LINE_BYTES: usize = 1 << 20;

/// A reader that fails once a physical line grows beyond a limit.
///
/// It also turns every line end into `\n` (`\r\n` and a lone `\r` each count as one line end, as
/// editors count them) and ends a last line that lacks one, so that the csv parser's line count
/// agrees with the lines a user sees; a `\r` inside a quoted field becomes `\n` too.
pub struct LineLimit<R> {
    inner: R,
    limit: usize,
    current: usize,
    line: u64,
    /// The last byte read was a `\r` (already passed on as `\n`): a `\n` right after it is dropped.
    after_cr: bool,
    /// Bytes have been passed on since the last line end.
    open_line: bool,
}

impl<R: Read> LineLimit<R> {
    pub fn new(inner: R, limit: usize) -> Self {
        LineLimit {
            inner,
            limit,
            current: 0,
            line: 1,
            after_cr: false,
            open_line: false,
        }
    }
}

/// The error a [`LineLimit`] reader fails with, so that callers can name the line.
#[derive(Debug)]
pub struct LineTooLong {
    pub line: u64,
    pub limit: usize,
}

impl std::fmt::Display for LineTooLong {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "line {} is longer than {} bytes (the limit for one line)",
            self.line, self.limit
        )
    }
}

impl std::error::Error for LineTooLong {}

impl<R: Read> Read for LineLimit<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        loop {
            let n = self.inner.read(buf)?;
            if n == 0 {
                if self.open_line && !buf.is_empty() {
                    self.open_line = false;
                    buf[0] = b'\n';
                    return Ok(1);
                }
                return Ok(0);
            }
            // Fast path: a chunk with no `\r`, not right after one, and no longer than the limit
            // passes through unchanged; only the line count and the open line's length need
            // updating, and only the chunk's first line can exceed the limit.
            if !self.after_cr && n <= self.limit && !buf[..n].contains(&b'\r') {
                let chunk = &buf[..n];
                let first = chunk.iter().position(|&b| b == b'\n');
                if self.current + first.unwrap_or(n) > self.limit {
                    return Err(io::Error::new(
                        io::ErrorKind::InvalidData,
                        LineTooLong {
                            line: self.line,
                            limit: self.limit,
                        },
                    ));
                }
                match first {
                    None => {
                        self.current += n;
                        self.open_line = true;
                    }
                    Some(first) => {
                        let last = chunk.iter().rposition(|&b| b == b'\n').unwrap_or(first);
                        // Counted with a byte-wide sum per block, which vectorises.
                        let lines: u64 = chunk
                            .chunks(255)
                            .map(|c| {
                                u64::from(c.iter().fold(0u8, |s, &b| s + u8::from(b == b'\n')))
                            })
                            .sum();
                        self.line += lines;
                        self.current = n - last - 1;
                        self.open_line = self.current > 0;
                    }
                }
                return Ok(n);
            }
            let mut kept = 0;
            for i in 0..n {
                let b = buf[i];
                let after_cr = std::mem::replace(&mut self.after_cr, b == b'\r');
                if b == b'\n' && after_cr {
                    continue;
                }
                if b == b'\n' || b == b'\r' {
                    buf[kept] = b'\n';
                    self.open_line = false;
                    self.current = 0;
                    self.line += 1;
                } else {
                    buf[kept] = b;
                    self.open_line = true;
                    self.current += 1;
                    if self.current > self.limit {
                        return Err(io::Error::new(
                            io::ErrorKind::InvalidData,
                            LineTooLong {
                                line: self.line,
                                limit: self.limit,
                            },
                        ));
                    }
                }
                kept += 1;
            }
            // A chunk holding only the `\n` of a `\r\n` leaves nothing; 0 would mean end of input.
            if kept > 0 {
                return Ok(kept);
            }
        }
    }
}

/// The physical line on which a record starts, from the reader's line count before the record
/// (`start`, which csv takes before skipping blank lines) and after it (`end`), given the record's
/// fields as read (untrimmed). Needs the line ends of a [`LineLimit`] reader (`\n` only, the last
/// line ended too): every record then ends with one `\n`, after the newlines inside its quoted
/// fields, except one whose open quote runs to the end of the input (then `start` is the answer).
pub fn record_line(start: u64, end: u64, record: &csv::ByteRecord) -> u64 {
    let inside = record.as_slice().iter().filter(|&&b| b == b'\n').count() as u64;
    end.saturating_sub(inside + 1).max(start)
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
            if let Some(long) = e.get_ref().and_then(|x| x.downcast_ref::<LineTooLong>()) {
                return DataError::Rejected(crate::error::Rejection {
                    at: crate::error::Location {
                        file: file.to_string(),
                        line: Some(long.line),
                        column: None,
                    },
                    reason: format!(
                        "the line is longer than {} bytes (the limit for one line)",
                        long.limit
                    ),
                });
            }
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

/// A row-level csv error (see [`is_row_error`]) as a rejection at the record's line (`record_line`).
pub fn row_error(
    file: &str,
    err: csv::Error,
    line: u64,
    record: &csv::ByteRecord,
) -> crate::error::Rejection {
    let mut reason = match csv_error(file, err) {
        DataError::Rejected(r) => r.reason,
        other => other.to_string(),
    };
    if record.as_slice().contains(&b'\n') {
        reason.push_str(" (a quoted field runs over several lines: is a closing quote missing?)");
    }
    crate::error::Rejection {
        at: crate::error::Location {
            file: file.to_string(),
            line: Some(line),
            column: None,
        },
        reason,
    }
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
