//! Writing results: stdout, or a file replaced atomically (temporary file in the same directory,
//! then rename), never one of the command's own inputs.
//!
//! Only regular files are replaced. A symbolic link to a regular file keeps the link: the file it
//! names is replaced. A character device (`/dev/null`), a FIFO or a `/proc/self/fd/N` path is
//! opened and written in place, never renamed over. Temporary files are named `.runcal-*.tmp`; the
//! binary removes them on SIGINT, SIGTERM and SIGHUP through [`set_temp_watcher`], and any write
//! removes such files older than an hour from its directory (left behind by SIGKILL or a power cut).

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;
use std::time::{Duration, SystemTime};

use crate::error::Error;

/// A temporary file's life: `true` when it is created, `false` when it is renamed or removed.
pub type TempWatcher = fn(&Path, bool);

static TEMP_WATCHER: OnceLock<TempWatcher> = OnceLock::new();

/// Let the caller track temporary files (to remove them when a signal ends the process).
/// The first watcher set stays.
pub fn set_temp_watcher(w: TempWatcher) {
    let _ = TEMP_WATCHER.set(w);
}

fn watch(path: &Path, alive: bool) {
    if let Some(w) = TEMP_WATCHER.get() {
        w(path, alive);
    }
}

const TEMP_PREFIX: &str = ".runcal-";
const TEMP_SUFFIX: &str = ".tmp";
/// Temporary files of our naming older than this are left over from a killed run.
pub const STALE_TEMP_AGE: Duration = Duration::from_secs(3600);

fn write_err(path: &str) -> impl Fn(std::io::Error) -> Error + '_ {
    move |source| Error::Write {
        file: path.to_string(),
        source,
    }
}

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

/// The path a file would have once written: the canonical path when it exists, else the canonical
/// directory joined with the name.
fn identity(path: &Path) -> PathBuf {
    if let Ok(p) = path.canonicalize() {
        return p;
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    match (dir.canonicalize(), path.file_name()) {
        (Ok(d), Some(n)) => d.join(n),
        _ => path.to_path_buf(),
    }
}

/// Refuse to write over any input of the run.
pub fn check_not_input(output: &str, inputs: &[&str]) -> Result<(), Error> {
    let out = Path::new(output);
    for input in inputs.iter().filter(|i| **i != "-") {
        if same_file(out, Path::new(input)) {
            return Err(Error::Usage(format!(
                "refusing to write {output}: it is one of this run's input files ({input})"
            )));
        }
    }
    Ok(())
}

/// Refuse, before any work, outputs that would overwrite an input or each other. Each output is
/// named by its option (`-o`, `--plot`, …). Two outputs may share only a character device.
pub fn check_outputs(outputs: &[(&str, &str)], inputs: &[&str]) -> Result<(), Error> {
    for (i, (opt, path)) in outputs.iter().enumerate() {
        check_not_input(path, inputs)?;
        for (other_opt, other) in &outputs[..i] {
            let shared = same_file(Path::new(path), Path::new(other))
                || identity(Path::new(path)) == identity(Path::new(other));
            if shared && !is_char_device(Path::new(path)) {
                return Err(Error::Usage(format!(
                    "{other_opt} {other} and {opt} {path} name the same file: give each output its own path"
                )));
            }
        }
    }
    Ok(())
}

#[cfg(unix)]
fn is_char_device(p: &Path) -> bool {
    use std::os::unix::fs::FileTypeExt;
    std::fs::metadata(p).is_ok_and(|m| m.file_type().is_char_device())
}

#[cfg(not(unix))]
fn is_char_device(_: &Path) -> bool {
    false
}

/// How a target path is written.
enum Target {
    /// Replace atomically: the regular file (a symbolic link resolved) or a new file at this path.
    Replace(PathBuf),
    /// Open and write in place: a device, FIFO, socket, or a file descriptor under /proc or /dev/fd.
    InPlace,
}

fn target(path: &str) -> Result<Target, Error> {
    let p = Path::new(path);
    let refuse = |why: &str| Err(Error::Usage(format!("cannot write {path}: {why}")));
    if path.is_empty() {
        return Err(Error::Usage("cannot write to an empty path".to_string()));
    }
    // A path through /proc/self/fd or /dev/fd names an open descriptor (often stdout): renaming
    // over it would replace whatever file the descriptor's owner had open.
    let descriptor = ["/proc/self/fd/", "/dev/fd/", "/dev/stdout", "/dev/stderr"]
        .iter()
        .any(|pre| path.starts_with(pre))
        || (path.starts_with("/proc/") && path.contains("/fd/"));
    match std::fs::metadata(p) {
        Ok(m) if m.is_dir() => refuse("it is a directory"),
        Ok(_) if descriptor => Ok(Target::InPlace),
        Ok(m) if m.is_file() => Ok(Target::Replace(p.canonicalize().map_err(write_err(path))?)),
        Ok(_) => Ok(Target::InPlace),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            if std::fs::symlink_metadata(p).is_ok() {
                return refuse("it is a symbolic link to a file that does not exist");
            }
            Ok(Target::Replace(p.to_path_buf()))
        }
        Err(e) => Err(write_err(path)(e)),
    }
}

/// Remove `.runcal-*.tmp` files older than [`STALE_TEMP_AGE`] from `dir`: leftovers of a run that
/// was killed (SIGKILL cannot be caught) or lost power. Best effort; errors are ignored.
pub fn remove_stale_temps(dir: &Path) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let now = SystemTime::now();
    for e in entries.flatten() {
        let name = e.file_name();
        let Some(name) = name.to_str() else { continue };
        if !(name.starts_with(TEMP_PREFIX) && name.ends_with(TEMP_SUFFIX)) {
            continue;
        }
        let Ok(m) = e.metadata() else { continue };
        let old = m
            .modified()
            .ok()
            .and_then(|t| now.duration_since(t).ok())
            .is_some_and(|age| age > STALE_TEMP_AGE);
        if m.is_file() && old {
            let _ = std::fs::remove_file(e.path());
        }
    }
}

/// An output being written: a temporary file beside a regular target, or the target itself when it
/// is a device or FIFO. Dropped without [`OutputFile::commit`], a temporary file is removed.
pub struct OutputFile {
    path: String,
    /// `None` only after commit.
    sink: Option<Sink>,
}

enum Sink {
    Temp {
        tmp: tempfile::NamedTempFile,
        target: PathBuf,
    },
    Direct(std::fs::File),
}

impl OutputFile {
    /// Open `path` for writing (see the module notes on which targets are replaced).
    pub fn create(path: &str) -> Result<OutputFile, Error> {
        let sink = match target(path)? {
            Target::InPlace => {
                let f = std::fs::OpenOptions::new()
                    .write(true)
                    .open(path)
                    .map_err(write_err(path))?;
                Sink::Direct(f)
            }
            Target::Replace(target) => {
                let dir = match target.parent() {
                    Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
                    _ => PathBuf::from("."),
                };
                remove_stale_temps(&dir);
                let tmp = tempfile::Builder::new()
                    .prefix(TEMP_PREFIX)
                    .suffix(TEMP_SUFFIX)
                    .tempfile_in(&dir)
                    .map_err(write_err(path))?;
                watch(tmp.path(), true);
                Sink::Temp { tmp, target }
            }
        };
        Ok(OutputFile {
            path: path.to_string(),
            sink: Some(sink),
        })
    }

    /// Move the finished file into place (a temporary file keeps the permissions of the file it
    /// replaces, or gets the usual rw-r--r--; a temporary file starts private).
    pub fn commit(mut self) -> Result<(), Error> {
        let wrap = write_err(&self.path);
        match self.sink.take() {
            None => Ok(()),
            Some(Sink::Direct(mut f)) => f.flush().map_err(wrap),
            Some(Sink::Temp { tmp, target }) => {
                let tmp_path = tmp.path().to_path_buf();
                let result = finish_temp(tmp, &target).map_err(wrap);
                watch(&tmp_path, false);
                result
            }
        }
    }
}

fn finish_temp(tmp: tempfile::NamedTempFile, target: &Path) -> std::io::Result<()> {
    tmp.as_file().sync_all()?;
    let perms = match std::fs::metadata(target) {
        Ok(m) => m.permissions(),
        Err(_) => default_permissions(tmp.as_file())?,
    };
    tmp.as_file().set_permissions(perms)?;
    tmp.persist(target).map_err(|e| e.error)?;
    Ok(())
}

impl Drop for OutputFile {
    fn drop(&mut self) {
        if let Some(Sink::Temp { tmp, .. }) = &self.sink {
            watch(tmp.path(), false);
        }
    }
}

impl Write for OutputFile {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        match &mut self.sink {
            Some(Sink::Temp { tmp, .. }) => tmp.write(buf),
            Some(Sink::Direct(f)) => f.write(buf),
            None => Ok(0),
        }
    }

    fn flush(&mut self) -> std::io::Result<()> {
        match &mut self.sink {
            Some(Sink::Temp { tmp, .. }) => tmp.flush(),
            Some(Sink::Direct(f)) => f.flush(),
            None => Ok(()),
        }
    }
}

#[cfg(unix)]
fn default_permissions(_: &std::fs::File) -> std::io::Result<std::fs::Permissions> {
    use std::os::unix::fs::PermissionsExt;
    Ok(std::fs::Permissions::from_mode(0o644))
}

#[cfg(not(unix))]
fn default_permissions(f: &std::fs::File) -> std::io::Result<std::fs::Permissions> {
    f.metadata().map(|m| m.permissions())
}

/// Write `bytes` to `path` atomically: readers see the old file or the new one, never a part.
pub fn write_atomic(path: &str, bytes: &[u8]) -> Result<(), Error> {
    let mut out = OutputFile::create(path)?;
    match out.write_all(bytes) {
        Ok(()) => out.commit(),
        // A reader that closed the FIFO early is the reader's choice.
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(write_err(path)(e)),
    }
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

/// Write one line to stderr, ignoring failure: a closed or full stderr must never end the run
/// (`eprintln!` panics on it). Control characters are escaped.
pub fn stderr_line(text: &str) {
    let mut err = std::io::stderr().lock();
    let _ = writeln!(err, "{}", crate::error::escape_controls(text));
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
            stderr_line(&format!("warning: {msg}"));
        }
    }

    pub fn note(&self, msg: &str) {
        if !self.quiet {
            stderr_line(&format!("note: {msg}"));
        }
    }

    pub fn debug(&self, msg: &str) {
        if self.verbose && !self.quiet {
            stderr_line(&format!("debug: {msg}"));
        }
    }

    /// Report what loading set aside: every rejected row (they are never dropped silently) and warnings.
    pub fn dataset(&self, ds: &crate::data::Dataset) {
        for r in &ds.rejected {
            if !self.quiet {
                stderr_line(&format!("skipped: {r}"));
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
        for n in &ds.notes {
            self.note(n);
        }
        if ds.unplayed_games > 0 {
            let no_scores = ds.unplayed_games - ds.after_as_of;
            let causes: Vec<String> = [
                (no_scores, "with no scores yet"),
                (ds.after_as_of, "dated after --as-of"),
            ]
            .iter()
            .filter(|(n, _)| *n > 0)
            .map(|(n, why)| format!("{n} {why}"))
            .collect();
            self.note(&format!(
                "{} unplayed games set aside ({})",
                ds.unplayed_games,
                causes.join(", ")
            ));
        }
        if ds.filtered_out > 0 {
            self.debug(&ds.left_out().join("; "));
        }
    }
}
