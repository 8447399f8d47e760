//! Writing results: stdout, or a file replaced atomically (temporary file in the same directory,
//! then rename), never one of the command's own inputs.

use std::io::Write;
use std::path::{Path, PathBuf};

use crate::error::Error;

/// Whether two paths name one file: the same device and inode on Unix (so hard and symbolic links
/// count), the same canonical path elsewhere.
fn same_file(a: &Path, b: &Path) -> bool {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        if let (Ok(x), Ok(y)) = (std::fs::metadata(a), std::fs::metadata(b)) {
            return x.dev() == y.dev() && x.ino() == y.ino();
        }
    }
    match (a.canonicalize(), b.canonicalize()) {
        (Ok(x), Ok(y)) => x == y,
        _ => false,
    }
}

/// Refuse to write over any input of the run.
pub fn check_not_input(output: &str, inputs: &[&str]) -> Result<(), Error> {
    let out = Path::new(output);
    for input in inputs.iter().filter(|i| **i != "-") {
        if same_file(out, Path::new(input)) {
            return Err(Error::Usage(format!(
                "refusing to write {output}: it is one of this run's input files"
            )));
        }
    }
    Ok(())
}

/// A temporary file in the directory of `path`, to be filled and then [`commit`]ted.
pub fn temp_beside(path: &str) -> Result<tempfile::NamedTempFile, Error> {
    let target = PathBuf::from(path);
    let dir = match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    tempfile::Builder::new()
        .prefix(".runcal-")
        .suffix(".tmp")
        .tempfile_in(&dir)
        .map_err(|source| Error::Write {
            file: path.to_string(),
            source,
        })
}

/// Move a finished temporary file onto `path`. The file keeps the permissions of the file it
/// replaces, or gets the usual rw-r--r-- (a temporary file starts private).
pub fn commit(tmp: tempfile::NamedTempFile, path: &str) -> Result<(), Error> {
    let wrap = |source: std::io::Error| Error::Write {
        file: path.to_string(),
        source,
    };
    tmp.as_file().sync_all().map_err(wrap)?;
    let perms = match std::fs::metadata(path) {
        Ok(m) => m.permissions(),
        Err(_) => default_permissions(tmp.as_file())?,
    };
    tmp.as_file().set_permissions(perms).map_err(wrap)?;
    tmp.persist(path).map_err(|e| wrap(e.error))?;
    Ok(())
}

#[cfg(unix)]
fn default_permissions(_: &std::fs::File) -> Result<std::fs::Permissions, Error> {
    use std::os::unix::fs::PermissionsExt;
    Ok(std::fs::Permissions::from_mode(0o644))
}

#[cfg(not(unix))]
fn default_permissions(f: &std::fs::File) -> Result<std::fs::Permissions, Error> {
    f.metadata()
        .map(|m| m.permissions())
        .map_err(|source| Error::Write {
            file: "<temporary file>".to_string(),
            source,
        })
}

/// Write `bytes` to `path` atomically: readers see the old file or the new one, never a part.
pub fn write_atomic(path: &str, bytes: &[u8]) -> Result<(), Error> {
    let mut tmp = temp_beside(path)?;
    tmp.write_all(bytes).map_err(|source| Error::Write {
        file: path.to_string(),
        source,
    })?;
    commit(tmp, path)
}

/// Send a rendered result to its destination.
pub fn emit(output: Option<&str>, inputs: &[&str], bytes: &[u8]) -> Result<(), Error> {
    match output {
        Some(path) => {
            check_not_input(path, inputs)?;
            write_atomic(path, bytes)
        }
        None => {
            let mut out = std::io::stdout().lock();
            match out.write_all(bytes).and_then(|()| out.flush()) {
                Ok(()) => Ok(()),
                // A closed pipe (`runcal … | head`) is the reader's choice, not an error.
                Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
                Err(source) => Err(Error::Write {
                    file: "<stdout>".to_string(),
                    source,
                }),
            }
        }
    }
}

/// Messages for stderr, filtered by -q and -v.
#[derive(Debug, Clone, Copy)]
pub struct Diagnostics {
    pub quiet: bool,
    pub verbose: bool,
}

impl Diagnostics {
    pub fn warn(&self, msg: &str) {
        if !self.quiet {
            eprintln!("warning: {msg}");
        }
    }

    pub fn note(&self, msg: &str) {
        if !self.quiet {
            eprintln!("note: {msg}");
        }
    }

    pub fn debug(&self, msg: &str) {
        if self.verbose && !self.quiet {
            eprintln!("debug: {msg}");
        }
    }

    /// Report what loading set aside: every rejected row (they are never dropped silently) and warnings.
    pub fn dataset(&self, ds: &crate::data::Dataset) {
        for r in &ds.rejected {
            if !self.quiet {
                eprintln!("skipped: {r}");
            }
        }
        if !ds.rejected.is_empty() {
            self.warn(&format!(
                "{} rows rejected (--skip-invalid)",
                ds.rejected.len()
            ));
        }
        for w in &ds.warnings {
            self.warn(w);
        }
        if ds.filtered_out > 0 {
            self.debug(&format!(
                "{} rows outside --seasons/--league/--as-of",
                ds.filtered_out
            ));
        }
    }
}
