//! `runcal luck`: the weekly report of teams ahead of or behind their scoring, with projections.

use crate::app::args::{EnvironmentArgs, InputArgs, OutputArgs, positive};
use crate::app::values;
use runcal::applied;
use runcal::data::gamelog::Date;
use runcal::error::Error;
use runcal::luck;
use runcal::profile::Profile;
use runcal::report::LuckReport;

/// Rank teams by wins above or below what their runs scored and allowed predict
///
/// Applies a saved calibration (--profile) or, without one, fits on the given data. Leads with each
/// team's gap (wins over expected) and its z under the quasi-binomial noise model (dispersion from the
/// calibration), a two-sided p-value and a Holm-adjusted flag over every team-season ranked (also with --top); then the evidence
/// (run differential per game, expected win%, one-run record from game logs); then, with a season
/// length, the rest-of-season outlook with an 80% range and the mass it actually holds.
/// Luck estimates are uncertain; this is descriptive statistics, not wagering advice.
///
/// Example:
///   runcal luck demo-data/meridian-2026-games.csv --games --profile demo-data/meridian-profile.json
///   runcal luck standings.csv --season-games 162 --top 5 --format csv
#[derive(Debug, clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    #[command(flatten)]
    pub input: InputArgs,
    /// Apply this saved calibration (from `runcal fit --save-profile`).
    #[arg(long, value_name = "FILE")]
    pub profile: Option<String>,
    /// Use only games played on or before this date (game logs, ISO 8601).
    #[arg(long, value_name = "DATE", value_parser = runcal::data::gamelog::parse_as_of)]
    pub as_of: Option<Date>,
    /// Season length for the projection (default: the profile's; at most 1000000).
    #[arg(long, value_name = "N", value_parser = values::count_u64::<{ runcal::profile::MAX_SEASON_GAMES }>)]
    pub season_games: Option<u64>,
    /// Games of regression toward .500 of the run-based win% (default: the profile's, else
    /// (1 − dispersion) × the actual-record constant estimated on these data).
    #[arg(long, value_name = "K", allow_negative_numbers = true, value_parser = values::non_negative)]
    pub regress_games: Option<f64>,
    /// Dispersion φ of the noise model (default: the profile's, else measured on these data).
    #[arg(long, value_name = "PHI", value_parser = positive, allow_negative_numbers = true)]
    pub dispersion: Option<f64>,
    /// Show only the N teams most ahead of and the N most behind their scoring.
    #[arg(long, value_name = "N", value_parser = values::count::<{ values::MAX_TOP }>)]
    pub top: Option<usize>,
    /// Apply this Pythagorean exponent instead of a profile or a fit.
    #[arg(long, value_name = "X", conflicts_with = "profile", allow_negative_numbers = true, value_parser = positive)]
    pub exponent: Option<f64>,
    /// Without a profile: the model to fit on the given data.
    #[arg(long, default_value = "pythagorean", value_name = "M")]
    pub model: String,
    /// Draw actual against expected win% (SVG).
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<String>,
    #[command(flatten)]
    pub environment: EnvironmentArgs,
    #[command(flatten)]
    pub output: OutputArgs,
}

pub fn run(args: &Args) -> Result<u8, Error> {
    let (diag, files) = super::begin(
        &args.output,
        &args.input.files,
        &[args.profile.as_ref()],
        &[("--plot", args.plot.as_ref())],
    )?;
    let files = &files;
    let profile = args.profile.as_deref().map(Profile::load).transpose()?;
    // The calibration's own definition of win% applies to the new data.
    let input = match &profile {
        Some(p) => args.input.as_in_profile(p),
        None => args.input.clone(),
    };
    let (ds, table) = super::load(&input, args.as_of, &diag)?;
    let chosen = applied::choose_model(
        profile.as_ref().zip(args.profile.as_deref()),
        args.exponent,
        super::first_model(&args.model)?,
        &table,
    )?;
    super::say(&diag, &chosen.notes, &chosen.warnings);
    let over = applied::Overrides {
        dispersion: args.dispersion,
        regress_games: args.regress_games,
        season_games: args.season_games,
    };
    super::check_environment(
        profile.as_ref(),
        &ds.rows,
        args.season_games,
        args.environment.fail,
        &diag,
    )?;
    let settings = applied::luck_settings(&chosen, profile.as_ref(), &over, &ds.rows, &table)?;
    super::say(&diag, &settings.notes, &settings.warnings);
    let luck::Ranking { lines, family } = luck::ranking(
        &ds.rows,
        &table,
        &chosen.model,
        &settings.noise,
        settings.outlook.as_ref(),
        args.top,
    );
    let report = LuckReport {
        model: chosen.model,
        source: chosen.source,
        rows_used: ds.rows.len(),
        rows_rejected: ds.rejected.len(),
        as_of: args.as_of,
        last_played: ds.last_played,
        finished: settings.finished,
        ranked: luck::Ranked::over(&ds.rows),
        noise: settings.noise,
        outlook: settings.outlook,
        chart_labels: args
            .plot
            .is_some()
            .then(|| luck::labelled_extremes(lines.len())),
        teams: lines,
        family,
        unit: args.input.unit.into(),
    };
    super::write_chart(&report, args.plot.as_deref(), files, &diag)?;
    super::emit(&report, &args.output, files)?;
    Ok(0)
}
