//! runcal: a run-expectation calibrator.
//!
//! Turns team-season (or game-by-game) scoring records into calibrated expected win percentages:
//! fits the Pythagorean exponent and its run-environment relatives, says how sure the fit is and which
//! model predicts best out of sample, and ranks teams whose record runs ahead of or behind their
//! scoring. The binary `runcal` is a thin driver over this library.

pub mod cli;
pub mod commands;
pub mod data;
pub mod error;
pub mod fit;
pub mod gate;
pub mod luck;
pub mod model;
pub mod output;
pub mod profile;
pub mod report;
pub mod simulate;

pub use error::{Error, Result};

/// Run one parsed command line; returns the process exit code.
pub fn run(cli: cli::Cli) -> Result<u8> {
    use cli::Command;
    match cli.command {
        Command::Fit(a) => commands::fit::run(&a),
        Command::Luck(a) => commands::luck::run(&a),
        Command::Backtest(a) => commands::backtest::run(&a),
        Command::Check(a) => commands::check::run(&a),
        Command::Simulate(a) => commands::simulate::run(&a),
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
