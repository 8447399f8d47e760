//! The binary's side: the clap command line and its argument mirrors, value parsers, progress bars,
//! one short file per command, and the mapping of results to exit codes. The library does not export
//! any of it; the core knows nothing of clap or the terminal.

pub mod args;
pub mod cli;
pub mod commands;
pub mod signals;
pub mod values;

use runcal::{Error, Result, output};

/// Run one parsed command line; returns the process exit code.
pub fn run(cli: cli::Cli) -> Result<u8> {
    use cli::Command;
    match cli.command {
        Command::Fit(a) => commands::fit::run(&a),
        Command::Luck(a) => commands::luck::run(&a),
        Command::Outlook(a) => commands::outlook::run(&a),
        Command::Backtest(a) => commands::backtest::run(&a),
        Command::Check(a) => commands::check::run(&a),
        Command::Digest(a) => commands::digest::run(&a),
        Command::Simulate(a) => commands::simulate::run(&a),
        Command::Eras(a) => commands::eras::run(&a),
        Command::Completions { shell } => {
            let mut cmd = <cli::Cli as clap::CommandFactory>::command();
            let mut out = Vec::new();
            clap_complete::generate(shell, &mut cmd, "runcal", &mut out);
            output::emit(None, &[], &out)?;
            Ok(0)
        }
        Command::Man => {
            let cmd = <cli::Cli as clap::CommandFactory>::command();
            let mut out = Vec::new();
            clap_mangen::Man::new(cmd)
                .render(&mut out)
                .map_err(|source| Error::Write {
                    file: "<stdout>".to_string(),
                    source,
                })?;
            output::emit(None, &[], &out)?;
            Ok(0)
        }
    }
}
