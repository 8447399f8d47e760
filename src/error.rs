//! Typed errors of the library. The binary maps them to exit codes and adds context.

use std::borrow::Cow;
use std::fmt;

/// Escape the characters a terminal would act on: C0 and C1 controls (NUL, ESC, BEL, CR, LF, DEL
/// and U+0080–U+009F, so no escape or OSC sequence reaches it raw) and the bidirectional overrides
/// and isolates that can reorder a line. `\x1b` for C0 and DEL, `\u{…}` for the rest; everything
/// else is unchanged. Every message runcal prints passes through this.
pub fn escape_controls(s: &str) -> Cow<'_, str> {
    let hostile = |c: char| {
        c.is_control()
            || matches!(c, '\u{200e}' | '\u{200f}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}')
    };
    if !s.chars().any(hostile) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if !hostile(c) {
            out.push(c);
        } else if (c as u32) < 0x80 {
            out.push_str(&format!("\\x{:02x}", c as u32));
        } else {
            out.push_str(&format!("\\u{{{:x}}}", c as u32));
        }
    }
    Cow::Owned(out)
}

/// `escape_controls` as a Display adapter for error messages.
struct Escaped<T>(T);

impl<T: fmt::Display> fmt::Display for Escaped<T> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&escape_controls(&self.0.to_string()))
    }
}

/// Where in an input a problem was found.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Location {
    pub file: String,
    /// 1-based physical line of the record's start; `None` for file-level problems.
    pub line: Option<u64>,
    /// The header of the offending column, as written in the file.
    pub column: Option<String>,
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", escape_controls(&self.file))?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
        }
        if let Some(column) = &self.column {
            write!(f, ": column '{}'", escape_controls(column))?;
        }
        Ok(())
    }
}

/// One input row that could not be used, and why.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Rejection {
    #[serde(flatten)]
    pub at: Location,
    pub reason: String,
}

impl fmt::Display for Rejection {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.at, escape_controls(&self.reason))
    }
}

/// Errors from reading and validating input.
#[derive(Debug, thiserror::Error)]
pub enum DataError {
    #[error("{file}: cannot read: {source}")]
    Io {
        file: String,
        #[source]
        source: std::io::Error,
    },
    #[error("{0}")]
    Rejected(Rejection),
    /// `advice` starts with "; ": the closest header and the `--map` that takes it, or how to
    /// name the column, and any hint the reader adds (a game log read as a table).
    #[error(
        "{file}:1: no column for {role} (looked for headers {looked_for}; the file has {headers}){advice}"
    )]
    MissingRole {
        file: String,
        role: &'static str,
        looked_for: String,
        headers: String,
        advice: String,
    },
    #[error(
        "{file}:1: columns '{first}' and '{second}' both look like {role}; choose one with --map {role}=HEADER"
    )]
    AmbiguousRole {
        file: String,
        role: &'static str,
        first: String,
        second: String,
    },
    #[error(
        "{file}:1: --map {role}={header}: the file has no header '{header}' (headers: {headers})"
    )]
    MappedHeaderMissing {
        file: String,
        role: &'static str,
        header: String,
        headers: String,
    },
    #[error("{file}:1: the header appears twice: '{header}' (columns {first} and {second})")]
    DuplicateHeader {
        file: String,
        header: String,
        first: usize,
        second: usize,
    },
    #[error(
        "{file}: the file is {encoding} text, and runcal reads UTF-8; convert it first, for example: iconv -f {encoding} -t UTF-8 '{file}' > converted.csv"
    )]
    Encoding {
        file: String,
        encoding: &'static str,
    },
    #[error("{file}: the file is empty (expected a header line)")]
    Empty { file: String },
    #[error("{what}: no rows left to use{hint}")]
    NoRows { what: String, hint: String },
    #[error(
        "{file}: more than {limit} rows; raise the limit with --max-rows if the file is genuine"
    )]
    TooManyRows { file: String, limit: u64 },
    #[error("{0}")]
    Usage(String),
}

/// Errors from fitting and scoring.
#[derive(Debug, Clone, thiserror::Error)]
pub enum FitError {
    #[error("cannot fit {model}: {reason}")]
    NoMinimum { model: String, reason: String },
    #[error("solver failed for {model}: {message}")]
    Solver { model: String, message: String },
    #[error("{0}")]
    Invalid(String),
}

/// Errors from saved calibrations.
#[derive(Debug, thiserror::Error)]
pub enum ProfileError {
    #[error("{file}: cannot read profile: {source}")]
    Io {
        file: String,
        #[source]
        source: std::io::Error,
    },
    #[error("{file}: not a runcal profile: {reason}")]
    Invalid { file: String, reason: String },
    #[error("{file}: profile schema '{found}' is not supported (this runcal reads '{expected}')")]
    Version {
        file: String,
        found: String,
        expected: String,
    },
}

/// Any library error, for the binary to map to an exit code. Its message has every control
/// character escaped (`escape_controls`), whatever input text it echoes.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    #[error("{}", Escaped(.0))]
    Data(#[from] DataError),
    #[error("{}", Escaped(.0))]
    Fit(#[from] FitError),
    #[error("{}", Escaped(.0))]
    Profile(#[from] ProfileError),
    #[error("{}: cannot write: {}", Escaped(.file), Escaped(.source))]
    Write {
        file: String,
        #[source]
        source: std::io::Error,
    },
    /// A result could not be serialised (JSON, CSV or a chart): a bug or a value no format holds.
    #[error("cannot render the output: {}", Escaped(.0))]
    Serialize(String),
    #[error("{}", Escaped(.0))]
    Usage(String),
}

pub type Result<T, E = Error> = std::result::Result<T, E>;
