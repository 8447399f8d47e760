//! The `runcal` binary: parse the command line, run one command, map errors to exit codes
//! (0 success, 1 a check failed, 2 bad input or usage).

use std::process::ExitCode;

use clap::Parser;

mod app;

fn main() -> ExitCode {
    let cli = match app::cli::Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            // Help and version are successes; anything else is a usage error (exit 2).
            let code = if e.use_stderr() { 2 } else { 0 };
            // `print` writes through a handle that ignores a closed stream.
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    app::signals::install();
    match app::run(cli) {
        Ok(code) => ExitCode::from(code),
        Err(e) => {
            // Never eprintln!: it panics when stderr is closed (`runcal … 2>&1 | true`).
            runcal::output::stderr_line(&format!("runcal: error: {e}"));
            ExitCode::from(2)
        }
    }
}
