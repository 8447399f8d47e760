//! The command line's top level: the parser and its subcommands. The options several commands
//! share, the clap mirrors of core enums and the value parsers live in `args.rs`.

use clap::{Parser, Subcommand};

use crate::app::commands;

const AFTER_HELP: &str = "\
Exit codes: 0 success, 1 a check failed (runcal check), 2 bad input or usage.

runcal reports descriptive statistics. It is not wagering or financial advice, and luck
estimates are uncertain.";

/// Calibrate run-expectation models: fit Pythagorean-family exponents to a league, compare models out
/// of sample, rank teams whose record runs ahead of or behind their scoring, and gate drift in CI.
#[derive(Debug, Parser)]
#[command(name = "runcal", version, after_help = AFTER_HELP, propagate_version = true)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    Fit(commands::fit::Args),
    Luck(commands::luck::Args),
    Outlook(commands::outlook::Args),
    Backtest(commands::backtest::Args),
    Check(commands::check::Args),
    Digest(commands::digest::Args),
    Simulate(commands::simulate::Args),
    Eras(commands::eras::Args),
    /// Print a shell completion script to stdout.
    Completions {
        /// The shell to complete for.
        shell: clap_complete::Shell,
    },
    /// Print the manual page (roff) to stdout.
    Man,
}
