//! `runcal eras`: how the league's exponent drifts over its seasons, and how much of it the run
//! environment explains.

use crate::app::args::{self, BootstrapArgs, ChangeByArg, InputArgs, OutputArgs, WindowsArg};
use crate::app::values;
use runcal::eras;
use runcal::error::Error;
use runcal::report::eras::EraReport;

/// Follow the exponent through the seasons: windows, a test for change, a calibration span
///
/// Fits the Pythagorean exponent (log-loss) on rolling or expanding windows of seasons, with its
/// quasi-binomial standard error, the run environment's PythagenPat exponent (whole-history z and the
/// published 0.287) and the gap between them; tests whether one exponent fits every season (a
/// quasi-likelihood F test); and names the shortest recent span to calibrate on.
///
/// With --bootstrap N (at most 100000 per window) each window draws from its own seed, derived from
/// --seed and shown as `bootstrap_seed` in the JSON: `runcal fit --seasons A-B --bootstrap N --seed
/// <that seed>` reproduces the window's interval.
///
/// Example:
///   runcal eras demo-data/meridian-league.csv --window 5
///   runcal eras teams.csv --map runs_scored=R --window 10 --bootstrap 1000 --plot eras.svg
#[derive(Debug, clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    #[command(flatten)]
    pub input: InputArgs,
    /// Seasons per window (and per block with --change-by block).
    #[arg(long, default_value_t = 10, value_name = "N", allow_negative_numbers = true,
          value_parser = values::count::<{ values::MAX_WINDOW }>)]
    pub window: usize,
    /// Rolling windows of N seasons, or expanding windows from the first season.
    #[arg(long, value_enum, default_value_t = WindowsArg::Rolling)]
    pub windows: WindowsArg,
    /// Windows (and change-test groups) with fewer team-seasons than this are listed but not fitted.
    #[arg(long, default_value_t = 8, value_name = "N")]
    pub min_group: usize,
    /// The standard error a recommended calibration span must reach.
    #[arg(long, default_value_t = 0.05, value_name = "SE", value_parser = args::positive)]
    pub target_se: f64,
    /// The change test's alternative: one exponent per season, or per block of N seasons.
    #[arg(long, value_enum, default_value_t = ChangeByArg::Season)]
    pub change_by: ChangeByArg,
    #[command(flatten)]
    pub boot: BootstrapArgs,
    /// Draw the exponent over time with its band, the implied exponents and runs per game (SVG).
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<String>,
    #[command(flatten)]
    pub output: OutputArgs,
}

pub fn run(args: &Args) -> Result<u8, Error> {
    let diag = super::diagnostics(&args.output);
    let files = &args.input.files;
    super::guard_outputs(
        &[
            ("--output", args.output.output.as_ref()),
            ("--plot", args.plot.as_ref()),
        ],
        files,
    )?;
    let opts = eras::Options {
        window: args.window,
        kind: args.windows.into(),
        min_group: args.min_group,
        target_se: args.target_se,
        change_by: args.change_by.into(),
        bootstrap: args.boot.options(None),
    };
    // Refuse impossible options before reading a large file.
    opts.validate(usize::MAX)
        .map_err(|e| Error::Usage(e.to_string()))?;
    let (ds, table) = super::load(&args.input, None, &diag)?;
    super::warn_unbalanced(&args.input, &ds, &diag);
    let analysis = eras::analyse(&table, &ds.rows, &opts)?;
    let report = EraReport {
        rows_used: ds.rows.len(),
        rows_rejected: ds.rejected.len(),
        from_games: args.input.games,
        analysis,
        unit: args.input.unit.into(),
    };
    super::write_chart(&report, args.plot.as_deref(), files, &diag)?;
    super::emit(&report, &args.output, files)?;
    Ok(0)
}
