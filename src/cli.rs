//! The command line: the top-level parser and the options every command shares. Each command's own
//! options live beside its code in `commands/NAME.rs`.

use clap::{Args, Parser, Subcommand, ValueEnum};

use crate::commands;
use crate::data::{self, Mapping, SeasonRange, TiePolicy, Weighting};

pub const CAUTION: &str = "runcal reports descriptive statistics. It is not wagering or financial advice, \
and luck estimates are uncertain: a team far ahead of its scoring may simply have been lucky, or not.";

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
    Backtest(commands::backtest::Args),
    Check(commands::check::Args),
    Simulate(commands::simulate::Args),
    /// Print a shell completion script to stdout.
    Completions {
        /// The shell to complete for.
        shell: clap_complete::Shell,
    },
    /// Print the manual page (roff) to stdout.
    Man,
}

/// Where the rows come from and which of them to use.
#[derive(Debug, Clone, Args)]
pub struct InputArgs {
    /// Input CSV files (`-` reads standard input). Several files are read as one table.
    #[arg(required = true, value_name = "FILES")]
    pub files: Vec<String>,
    /// The inputs are game logs (one row per game: date, home, away, home_score, away_score).
    #[arg(long)]
    pub games: bool,
    /// Use column HEADER for ROLE (repeatable), e.g. --map runs_scored=R.
    #[arg(long = "map", value_name = "ROLE=HEADER")]
    pub maps: Vec<Mapping>,
    /// Keep only these seasons: 2019 or 1980-2006.
    #[arg(long, value_name = "A-B")]
    pub seasons: Option<SeasonRange>,
    /// Keep only this league (case-insensitive).
    #[arg(long, value_name = "X")]
    pub league: Option<String>,
    /// How ties count toward win%: half a win and half a loss, or left out.
    #[arg(long, value_enum, default_value_t = TiesArg::Half)]
    pub ties: TiesArg,
    /// Weight team-seasons in MAE and RMSE equally or by games.
    #[arg(long, value_enum, default_value_t = WeightArg::None)]
    pub weight: WeightArg,
    /// Go on past bad rows: list each on stderr and count it as rejected.
    #[arg(long)]
    pub skip_invalid: bool,
    /// Refuse inputs with more rows than this (protects against runaway files).
    #[arg(long, value_name = "N", default_value_t = 50_000_000)]
    pub max_rows: u64,
}

impl InputArgs {
    pub fn load_options(&self) -> data::LoadOptions {
        data::LoadOptions {
            maps: self.maps.clone(),
            seasons: self.seasons,
            league: self.league.clone(),
            skip_invalid: self.skip_invalid,
            max_rows: self.max_rows,
            ..data::LoadOptions::default()
        }
    }

    /// The same inputs read the way a saved calibration defines win% and weights.
    pub fn as_in_profile(&self, p: &crate::profile::Profile) -> InputArgs {
        InputArgs {
            ties: match p.ties {
                TiePolicy::Half => TiesArg::Half,
                TiePolicy::Exclude => TiesArg::Exclude,
            },
            weight: match p.weight {
                Weighting::None => WeightArg::None,
                Weighting::Games => WeightArg::Games,
            },
            ..self.clone()
        }
    }

    pub fn tie_policy(&self) -> TiePolicy {
        match self.ties {
            TiesArg::Half => TiePolicy::Half,
            TiesArg::Exclude => TiePolicy::Exclude,
        }
    }

    pub fn weighting(&self) -> Weighting {
        match self.weight {
            WeightArg::None => Weighting::None,
            WeightArg::Games => Weighting::Games,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum TiesArg {
    Half,
    Exclude,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum WeightArg {
    None,
    Games,
}

/// Output format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    Table,
    Json,
    Csv,
}

/// Where and how results are written.
#[derive(Debug, Clone, Args)]
pub struct OutputArgs {
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Write the result to FILE (atomically) instead of stdout.
    #[arg(long, short = 'o', value_name = "FILE")]
    pub output: Option<String>,
    /// Print no warnings or progress on stderr.
    #[arg(long, short = 'q')]
    pub quiet: bool,
    /// Print diagnostics on stderr (every warning, solver details).
    #[arg(long, short = 'v')]
    pub verbose: bool,
}
