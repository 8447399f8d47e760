//! Options several commands share (input, output), clap mirrors of the core's enums, and value
//! parsers. Commands import this file; the top-level parser (`cli.rs`) imports the commands.

use clap::{Args, ValueEnum};

use crate::app::values;

use runcal::data::{self, Mapping, OtLosses, SeasonRange, TiePolicy, Weighting};
use runcal::eras::{ChangeBy, WindowKind};
use runcal::fit::bootstrap::{self, Resample};
use runcal::fit::{Loss, backtest::Scheme};
use runcal::report::Format;
use runcal::report::Unit;

/// Where the rows come from and which of them to use.
#[derive(Debug, Clone, Args)]
pub struct InputArgs {
    /// Input CSV files (`-` reads standard input). Several files are read as one table.
    #[arg(required = true, value_name = "FILES")]
    pub files: Vec<String>,
    /// The inputs are game logs (one row per game: date, home, away, home_score, away_score).
    #[arg(long)]
    pub games: bool,
    /// Use column HEADER for ROLE (repeatable), e.g. --map runs_scored=R. Without it, headers are
    /// matched to roles with case, spaces and punctuation ignored (PointsFor = points_for).
    #[arg(long = "map", value_name = "ROLE=HEADER")]
    pub maps: Vec<Mapping>,
    /// The season of every row, for files without a season column (a one-season table; a game
    /// log whose season is not its dates' year). Without it such a table is read as one season,
    /// numbered by the file's place on the command line (1, 2, …), with a note on stderr.
    #[arg(long, value_name = "YEAR", allow_negative_numbers = true)]
    pub season_is: Option<i32>,
    /// Field delimiter of the inputs: , ; | or tab. Without it each file's is read from its
    /// header line (and the first lines when the header allows several).
    #[arg(long, value_name = "D", value_parser = data::input::parse_delimiter)]
    pub delimiter: Option<u8>,
    /// How an overtime/shootout-loss column (otl, ot_losses, sol, …) of a team-season table
    /// counts.
    #[arg(long, value_enum, default_value_t = OtLossesArg::Losses)]
    pub ot_losses: OtLossesArg,
    /// Keep only these seasons: 2019 or 1980-2006.
    #[arg(long, value_name = "A-B")]
    pub seasons: Option<SeasonRange>,
    /// Keep only this league (case-insensitive).
    #[arg(long, value_name = "X")]
    pub league: Option<String>,
    /// How ties count toward win%: half a win and half a loss, or left out.
    #[arg(long, value_enum, default_value_t = TiesArg::Half)]
    pub ties: TiesArg,
    /// Weight team-seasons in MAE and RMSE equally or by games [default: by games when season
    /// lengths differ by more than 10%, else equally; a note says which].
    #[arg(long, value_enum)]
    pub weight: Option<WeightArg>,
    /// Go on past bad rows: list each on stderr and count it as rejected.
    #[arg(long)]
    pub skip_invalid: bool,
    /// What the scores count, for the words of tables, charts and documents (runs, points or
    /// goals); JSON keys and CSV headers keep `runs`.
    #[arg(long, value_enum, default_value_t = UnitArg::Runs)]
    pub unit: UnitArg,
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
            delimiter: self.delimiter,
            season_is: self.season_is,
            ot_losses: self.ot_losses.into(),
            ..data::LoadOptions::default()
        }
    }

    /// The same inputs read the way a saved calibration defines win% and weights.
    pub fn as_in_profile(&self, p: &runcal::profile::Profile) -> InputArgs {
        InputArgs {
            ties: p.ties.into(),
            weight: Some(p.weight.into()),
            ..self.clone()
        }
    }

    pub fn tie_policy(&self) -> TiePolicy {
        self.ties.into()
    }

    /// `--weight`, or the default for these rows with the note that says what it chose.
    pub fn weighting(&self, rows: &[data::TeamSeason]) -> (Weighting, Option<String>) {
        match self.weight {
            Some(w) => (w.into(), None),
            None => data::table::default_weighting(rows),
        }
    }
}

/// A clap mirror of a core enum (the core carries no clap derive): the same variants, converted both
/// ways. Variant doc comments become the help of each possible value.
macro_rules! value_mirror {
    ($(#[$meta:meta])* $name:ident => $core:ident { $($(#[$vmeta:meta])* $variant:ident),+ $(,)? }) => {
        $(#[$meta])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
        pub enum $name {
            $($(#[$vmeta])* $variant),+
        }
        impl From<$name> for $core {
            fn from(v: $name) -> $core {
                match v { $($name::$variant => $core::$variant),+ }
            }
        }
        impl From<$core> for $name {
            fn from(v: $core) -> $name {
                match v { $($core::$variant => $name::$variant),+ }
            }
        }
    };
}

value_mirror!(TiesArg => TiePolicy { Half, Exclude });
value_mirror!(
    /// How overtime and shootout losses count.
    OtLossesArg => OtLosses {
        /// As losses (common practice for a hockey win%).
        Losses,
        /// As ties: half a win and half a loss under --ties half, left out under --ties exclude.
        Half,
        /// Left out of the record and of the games played.
        LeaveOut,
    }
);
value_mirror!(WeightArg => Weighting { None, Games });
value_mirror!(UnitArg => Unit { Runs, Points, Goals });
value_mirror!(
    /// Output format.
    FormatArg => Format { Table, Json, Csv }
);
value_mirror!(
    /// What a fit minimises.
    LossArg => Loss {
        /// Mean absolute error in win%.
        Mae,
        /// Root mean squared error in win%.
        Rmse,
        /// Binomial log-likelihood per game.
        Logloss,
    }
);
value_mirror!(
    /// What the bootstrap draws with replacement.
    ResampleArg => Resample {
        /// Team-seasons, independently.
        Team,
        /// Whole seasons, keeping every team of a drawn season together.
        Season,
    }
);
value_mirror!(
    /// How a backtest holds seasons out.
    SchemeArg => Scheme {
        /// Fit on every other season, score each season in turn.
        LeaveOneSeasonOut,
        /// Fit on all seasons before Y, score Y ("calibrate before the season").
        Rolling,
    }
);

value_mirror!(
    /// How era windows move over the seasons.
    WindowsArg => WindowKind {
        /// N consecutive seasons, moved on one season at a time.
        Rolling,
        /// From the first season, one season longer each step.
        Expanding,
    }
);
value_mirror!(
    /// What the change test fits one exponent to.
    ChangeByArg => ChangeBy {
        /// One exponent per season.
        Season,
        /// One per block of --window consecutive seasons.
        Block,
    }
);

/// Bootstrap percentile intervals (`fit`, and every window of `eras`).
#[derive(Debug, Clone, Args)]
pub struct BootstrapArgs {
    /// Bootstrap resamples for percentile intervals (0: none; at most 100000).
    #[arg(long, default_value_t = 0, value_name = "N", value_parser = values::count::<{ values::MAX_BOOTSTRAP }>)]
    pub bootstrap: usize,
    /// Seed of the bootstrap's random streams.
    #[arg(long, default_value_t = 1, value_name = "S")]
    pub seed: u64,
    /// Resample team-seasons, or whole seasons (keeps within-season dependence).
    #[arg(long, value_enum, default_value_t = ResampleArg::Team)]
    pub resample: ResampleArg,
    /// Coverage of the bootstrap intervals.
    #[arg(long, default_value_t = 0.95, value_name = "L", value_parser = level, allow_negative_numbers = true)]
    pub ci_level: f64,
}

impl BootstrapArgs {
    /// The bootstrap's options, or `None` with `--bootstrap 0`.
    pub fn options<'a>(
        &self,
        progress: Option<bootstrap::Progress<'a>>,
    ) -> Option<bootstrap::Options<'a>> {
        (self.bootstrap > 0).then(|| bootstrap::Options {
            resamples: self.bootstrap,
            seed: self.seed,
            resample: self.resample.into(),
            level: self.ci_level,
            progress,
        })
    }
}

/// What to do when a saved calibration is applied to data far from its run environment.
#[derive(Debug, Clone, Copy, Args)]
pub struct EnvironmentArgs {
    /// Fail (exit 2) instead of warning when the data's runs per game or season length sit far
    /// (a factor of 1.5) from the profile's, for CI jobs that must not apply the wrong calibration.
    #[arg(long = "fail-on-mismatch", requires = "profile")]
    pub fail: bool,
}

/// Where and how results are written.
#[derive(Debug, Clone, Args)]
pub struct OutputArgs {
    /// Output format.
    #[arg(long, value_enum, default_value_t = FormatArg::Table)]
    pub format: FormatArg,
    /// Write the result to FILE instead of stdout. A regular file is replaced atomically; through a
    /// symbolic link, the file the link names is replaced and the link kept; a device or FIFO
    /// (/dev/null, /proc/self/fd/1) is written in place. Never a file the run reads.
    #[arg(long, short = 'o', value_name = "FILE")]
    pub output: Option<String>,
    /// Print no warnings or progress on stderr.
    #[arg(long, short = 'q')]
    pub quiet: bool,
    /// Print diagnostics on stderr (every warning, solver details).
    #[arg(long, short = 'v')]
    pub verbose: bool,
}

/// A finite number greater than zero (`--exponent`, `--max-drift`, …).
pub fn positive(s: &str) -> Result<f64, String> {
    match s.trim().parse::<f64>() {
        Ok(x) if x.is_finite() && x > 0.0 => Ok(x),
        _ => Err(format!("expected a positive number, got '{s}'")),
    }
}

/// A level strictly between 0 and 1 (`--ci-level`).
pub fn level(s: &str) -> Result<f64, String> {
    match s.trim().parse::<f64>() {
        Ok(x) if x > 0.0 && x < 1.0 => Ok(x),
        _ => Err(format!(
            "expected a level between 0 and 1 (e.g. 0.95), got '{s}'"
        )),
    }
}
