//! Opening inputs: files or `-` for standard input, with bounds on line and field length so that
//! hostile input cannot exhaust memory, and a clear refusal of UTF-16 and UTF-32 text.

use std::fs::File;
use std::io::{self, BufReader, Read};

use crate::error::DataError;

mod delimiter;

pub use delimiter::{DELIMITERS, delimiter_name, parse_delimiter};
use delimiter::{SNIFF_BYTES, choose_delimiter, sniffed_enough};

/// Longest physical line accepted, in bytes, unless the caller says otherwise.
pub const DEFAULT_MAX_LINE_BYTES: usize = 1 << 20;

/// Longest field accepted, in bytes, unless the caller says otherwise. Only a quoted field can
/// span lines, so only quoted fields can pass the line limit and still grow past this.
pub const DEFAULT_MAX_FIELD_BYTES: usize = 1 << 20;

/// Where the reader is within a csv field (quotes as RFC 4180 has them).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum FieldState {
    /// At the start of a field.
    Start,
    Unquoted,
    Quoted,
    /// A quote inside a quoted field: the closing one, or the first of a doubled `""`.
    QuoteInQuoted,
    /// Blanks after a closing quote (csv keeps them; trimming drops them).
    AfterQuote,
}

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
    field_limit: usize,
    field: FieldState,
    /// Bytes of the current quoted field so far, and the line it opened on.
    field_bytes: usize,
    field_line: u64,
    /// Fields with text after their closing quote (`"Aces"junk`): how many, and the first's line.
    text_after_quote: u64,
    first_text_after_quote: u64,
    /// The byte that ends a field (the csv reader's delimiter).
    delimiter: u8,
}

impl<R: Read> LineLimit<R> {
    pub fn new(inner: R, limit: usize) -> Self {
        Self::with_field_limit(inner, limit, usize::MAX)
    }

    pub fn with_field_limit(inner: R, limit: usize, field_limit: usize) -> Self {
        LineLimit {
            inner,
            limit,
            current: 0,
            line: 1,
            after_cr: false,
            open_line: false,
            field_limit,
            field: FieldState::Start,
            field_bytes: 0,
            field_line: 1,
            text_after_quote: 0,
            first_text_after_quote: 0,
            delimiter: b',',
        }
    }

    /// The same reader, following fields that end at `delimiter` rather than a comma.
    pub fn delimited(mut self, delimiter: u8) -> Self {
        self.delimiter = delimiter;
        self
    }

    /// What the reader noticed but let pass, as warnings naming `file`.
    pub fn warnings(&self, file: &str) -> Vec<String> {
        if self.text_after_quote == 0 {
            return Vec::new();
        }
        vec![format!(
            "{file}:{}: text follows a closing quote (as in \"Aces\"junk), which csv joins to the field; quote the whole field or drop the quotes ({} fields like this)",
            self.first_text_after_quote, self.text_after_quote
        )]
    }

    fn too_long(&self, what: Stretch) -> io::Error {
        let (line, limit) = match what {
            Stretch::Line => (self.line, self.limit),
            Stretch::QuotedField => (self.field_line, self.field_limit),
        };
        io::Error::new(io::ErrorKind::InvalidData, TooLong { what, line, limit })
    }

    /// Follow the quotes of one byte (line ends already turned into `\n`).
    fn track_field(&mut self, b: u8) -> io::Result<()> {
        use FieldState::*;
        let ends_field = b == self.delimiter || b == b'\n';
        self.field = match (self.field, b) {
            (Start, b'"') => {
                self.field_bytes = 0;
                self.field_line = self.line;
                Quoted
            }
            (Start | Unquoted | AfterQuote | QuoteInQuoted, _) if ends_field => Start,
            (Start | Unquoted, _) => Unquoted,
            (Quoted, b'"') => QuoteInQuoted,
            (Quoted, _) | (QuoteInQuoted, b'"') => {
                self.field_bytes += 1;
                if self.field_bytes > self.field_limit {
                    return Err(self.too_long(Stretch::QuotedField));
                }
                Quoted
            }
            (QuoteInQuoted | AfterQuote, b' ' | b'\t') => AfterQuote,
            (QuoteInQuoted | AfterQuote, _) => {
                if self.text_after_quote == 0 {
                    self.first_text_after_quote = self.field_line;
                }
                self.text_after_quote += 1;
                Unquoted
            }
        };
        Ok(())
    }
}

/// What a [`LineLimit`] reader found too long.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stretch {
    Line,
    /// A quoted field, which may span lines.
    QuotedField,
}

/// The error a [`LineLimit`] reader fails with, so that callers can name the line.
#[derive(Debug)]
pub struct TooLong {
    pub what: Stretch,
    /// The line that is too long, or on which the quoted field opens.
    pub line: u64,
    pub limit: usize,
}

impl TooLong {
    /// The problem, for a message that names the line already.
    pub fn reason(&self) -> String {
        match self.what {
            Stretch::Line => format!(
                "the line is longer than {} bytes (the limit for one line)",
                self.limit
            ),
            Stretch::QuotedField => format!(
                "a quoted field opens here and runs past {} bytes (the limit for one field); is a closing quote missing?",
                self.limit
            ),
        }
    }
}

impl std::fmt::Display for TooLong {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "line {}: {}", self.line, self.reason())
    }
}

impl std::error::Error for TooLong {}

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
            // Quotes take the slow path too, unless the chunk starts outside a quoted field and
            // has none: its fields then end within its lines.
            if !self.after_cr
                && n <= self.limit
                && matches!(self.field, FieldState::Start | FieldState::Unquoted)
                && memchr::memchr2(b'\r', b'"', &buf[..n]).is_none()
            {
                let chunk = &buf[..n];
                let last = chunk[n - 1];
                self.field = if last == self.delimiter || last == b'\n' {
                    FieldState::Start
                } else {
                    FieldState::Unquoted
                };
                let first = chunk.iter().position(|&b| b == b'\n');
                if self.current + first.unwrap_or(n) > self.limit {
                    return Err(self.too_long(Stretch::Line));
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
                    self.track_field(b'\n')?;
                    self.open_line = false;
                    self.current = 0;
                    self.line += 1;
                } else {
                    self.track_field(b)?;
                    buf[kept] = b;
                    self.open_line = true;
                    self.current += 1;
                    if self.current > self.limit {
                        return Err(self.too_long(Stretch::Line));
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

/// Text for a message with control characters escaped (`crate::error::escape_controls`, which
/// every printed message passes through too): a message held in a value stays safe to show.
pub fn shown(text: &str) -> String {
    crate::error::escape_controls(text).into_owned()
}

/// Why a name cannot be used, if it holds a control character (NUL, ESC, ...; a tab or a line
/// break inside a quoted name is text, and kept): the character escaped and its 1-based position.
pub fn control_character(name: &str) -> Option<String> {
    let (i, c) = name
        .chars()
        .enumerate()
        .find(|&(_, c)| c.is_control() && c != '\n' && c != '\t')?;
    Some(format!(
        "the name holds the control character {} (character {}); names must be printable text",
        shown(&c.to_string()),
        i + 1
    ))
}

/// Whether a path names a regular file (which can be read twice), not `-`, a pipe or a device.
pub fn is_regular_file(path: &str) -> bool {
    path != "-" && std::fs::metadata(path).is_ok_and(|m| m.is_file())
}

/// A file's header, refused when the file is empty.
pub fn read_headers<R: Read>(
    rdr: &mut csv::Reader<R>,
    file: &str,
) -> Result<Vec<String>, DataError> {
    let headers: Vec<String> = match rdr.byte_headers() {
        Ok(h) => h
            .iter()
            .map(|f| String::from_utf8_lossy(f).trim().to_string())
            .collect(),
        Err(e) => return Err(csv_error(file, e)),
    };
    if headers.is_empty() || (headers.len() == 1 && headers[0].is_empty()) {
        return Err(DataError::Empty {
            file: file.to_string(),
        });
    }
    Ok(headers)
}

/// The encoding of text that starts with these bytes, when it is UTF-16 or UTF-32 (by its
/// byte-order mark, or by the NUL bytes that ASCII characters carry in those encodings).
fn wide_encoding(head: &[u8]) -> Option<&'static str> {
    match head {
        [0, 0, 0xfe, 0xff, ..] => Some("UTF-32BE"),
        [0xff, 0xfe, 0, 0, ..] => Some("UTF-32LE"),
        [0xfe, 0xff, ..] => Some("UTF-16BE"),
        [0xff, 0xfe, ..] => Some("UTF-16LE"),
        [a, 0, 0, 0, ..] if *a != 0 => Some("UTF-32LE"),
        [0, 0, 0, a, ..] if *a != 0 => Some("UTF-32BE"),
        [a, 0, b, 0, ..] if *a != 0 && *b != 0 => Some("UTF-16LE"),
        [0, a, 0, b, ..] if *a != 0 && *b != 0 => Some("UTF-16BE"),
        _ => None,
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

/// A csv reader over one input, within the line and field limits.
pub type CsvReader = csv::Reader<LineLimit<Box<dyn Read + Send>>>;

/// Open a path (or `-`) as csv, within the line and field limits: UTF-16 and UTF-32 text is
/// refused with the command that converts it, and the delimiter is `delimiter`, or else chosen
/// from the first lines (read once and handed on, so a pipe is never reopened).
pub fn csv_reader(
    path: &str,
    max_line_bytes: usize,
    max_field_bytes: usize,
    delimiter: Option<u8>,
) -> Result<CsvReader, DataError> {
    let io_error = |source| DataError::Io {
        file: display_name(path),
        source,
    };
    let mut reader: Box<dyn Read + Send> = if path == "-" {
        Box::new(io::stdin())
    } else {
        Box::new(BufReader::with_capacity(
            1 << 16,
            File::open(path).map_err(io_error)?,
        ))
    };
    // The first bytes are read here and handed on: the encoding is judged on four, the delimiter
    // on the header line (and, when it allows several, a few lines more).
    let mut head = vec![0u8; 4];
    let mut got = 0;
    let mut checked_encoding = false;
    loop {
        match reader.read(&mut head[got..]) {
            Ok(0) => break,
            Ok(n) => got += n,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(io_error(e)),
        }
        if got < 4 {
            continue;
        }
        if !checked_encoding {
            checked_encoding = true;
            if let Some(encoding) = wide_encoding(&head[..4]) {
                return Err(DataError::Encoding {
                    file: display_name(path),
                    encoding,
                });
            }
        }
        if sniffed_enough(&head[..got], delimiter.is_some()) || got >= SNIFF_BYTES {
            break;
        }
        if got == head.len() {
            head.resize((head.len() * 16).min(SNIFF_BYTES), 0);
        }
    }
    head.truncate(got);
    if !checked_encoding && let Some(encoding) = wide_encoding(&head) {
        return Err(DataError::Encoding {
            file: display_name(path),
            encoding,
        });
    }
    let file = display_name(path);
    let delimiter = choose_delimiter(&file, &head, delimiter)?;
    let reader: Box<dyn Read + Send> = Box::new(io::Cursor::new(head).chain(reader));
    let limited =
        LineLimit::with_field_limit(reader, max_line_bytes, max_field_bytes).delimited(delimiter);
    Ok(csv::ReaderBuilder::new()
        .flexible(false)
        .delimiter(delimiter)
        .buffer_capacity(1 << 16)
        .from_reader(limited))
}

/// [`csv_reader`] with the limits and delimiter of `opts`, and the file's header (`file` names the
/// input in messages).
pub fn open_with_headers(
    path: &str,
    file: &str,
    opts: &super::LoadOptions,
) -> Result<(CsvReader, Vec<String>), DataError> {
    let mut rdr = csv_reader(
        path,
        opts.max_line_bytes,
        opts.max_field_bytes,
        opts.delimiter,
    )?;
    let headers = read_headers(&mut rdr, file)?;
    Ok((rdr, headers))
}

/// Count one more row of `file`, refused past `--max-rows`.
pub fn count_row(count: &mut u64, file: &str, opts: &super::LoadOptions) -> Result<(), DataError> {
    *count += 1;
    if *count > opts.max_rows {
        return Err(DataError::TooManyRows {
            file: file.to_string(),
            limit: opts.max_rows,
        });
    }
    Ok(())
}

/// Turn a csv error into a data error at the right place.
pub fn csv_error(file: &str, err: csv::Error) -> DataError {
    let line = err.position().map(|p| p.line());
    let reason = match err.kind() {
        csv::ErrorKind::Io(e) => {
            if let Some(long) = e.get_ref().and_then(|x| x.downcast_ref::<TooLong>()) {
                return DataError::Rejected(crate::error::Rejection {
                    at: crate::error::Location {
                        file: file.to_string(),
                        line: Some(long.line),
                        column: None,
                    },
                    reason: long.reason(),
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
    fn the_line_limit_follows_quotes_at_the_delimiter_given() {
        // `;"` opens a quoted field in a semicolon file; the quoted newline is no line end.
        let data = b"a;\"x\ny\";b\n".to_vec();
        let mut r = LineLimit::with_field_limit(&data[..], 100, 2).delimited(b';');
        let mut out = String::new();
        let e = r.read_to_string(&mut out).unwrap_err();
        assert!(e.to_string().contains("quoted field"), "{e}");
        let mut ok = String::new();
        LineLimit::with_field_limit(&data[..], 100, 10)
            .delimited(b';')
            .read_to_string(&mut ok)
            .unwrap();
        assert_eq!(ok, "a;\"x\ny\";b\n");
    }

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
