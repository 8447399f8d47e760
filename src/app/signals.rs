//! Removing half-written temporary files when SIGINT, SIGTERM or SIGHUP ends the run. The core's
//! writer reports each temporary file it creates and finishes (`output::set_temp_watcher`); a
//! thread waits for the signals, removes what is still listed, and exits with 128 + the signal.
//! SIGKILL cannot be caught: the next write into the same directory removes `.runcal-*.tmp` files
//! older than an hour.

use std::path::{Path, PathBuf};
use std::sync::Mutex;

static TEMPS: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

fn track(path: &Path, alive: bool) {
    let mut list = TEMPS.lock().unwrap_or_else(|e| e.into_inner());
    if alive {
        list.push(path.to_path_buf());
    } else {
        list.retain(|p| p != path);
    }
}

/// Start watching; without signal support (or if the handler cannot be installed) the default
/// action applies and stale files are left to the next run's cleanup.
pub fn install() {
    runcal::output::set_temp_watcher(track);
    #[cfg(unix)]
    {
        use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
        let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM, SIGHUP]) else {
            return;
        };
        std::thread::spawn(move || {
            if let Some(sig) = signals.forever().next() {
                let list = TEMPS.lock().unwrap_or_else(|e| e.into_inner());
                for p in list.iter() {
                    let _ = std::fs::remove_file(p);
                }
                std::process::exit(128 + sig);
            }
        });
    }
}
