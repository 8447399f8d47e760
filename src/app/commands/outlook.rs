//! `runcal outlook`: where each club finishes, given who it still has to play.

use crate::app::args::{EnvironmentArgs, InputArgs, OutputArgs};
use runcal::data::gamelog::Date;
use runcal::data::schedule;
use runcal::error::Error;
use runcal::outlook::{self, Settings};
use runcal::profile::Profile;
use runcal::report::outlook::OutlookReport;

/// Simulate the rest of the season from a game log and the games left
///
/// The games left are the log's rows with both scores empty, its rows dated after --as-of, and the
/// rows of any --schedule file (date, home, away) that the log does not list. Each club's strength is
/// its run-based win% shrunk toward .500; every game is a log5 matchup with the league's home edge.
/// Each simulated season first draws every strength from its posterior, then plays the games left.
/// Groups (divisions) come from --groups (team,group), else the log's group or league column.
/// Descriptive simulations, not wagering advice.
///
/// Limits: --simulations at most 1,000,000; simulations × games left at most 2·10^10;
/// at most 100,000 games left and 10,000 clubs. Inputs must be regular files (they are read twice).
///
/// Example:
///   runcal outlook demo-data/meridian-2026-to-date.csv --schedule demo-data/meridian-2026-schedule.csv
///       --groups demo-data/meridian-divisions.csv --profile demo-data/meridian-profile.json
///   runcal outlook demo-data/meridian-2026-games.csv --as-of 2026-07-15 --target-wins 80
#[derive(Debug, clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    #[command(flatten)]
    pub input: InputArgs,
    /// A schedule of games still to play (date, home, away; repeatable).
    #[arg(long, value_name = "FILE")]
    pub schedule: Vec<String>,
    /// Each club's group: a CSV with columns team and group.
    #[arg(long, value_name = "FILE")]
    pub groups: Option<String>,
    /// Apply this saved calibration (from `runcal fit --save-profile`).
    #[arg(long, value_name = "FILE")]
    pub profile: Option<String>,
    /// Count only games played on or before this date; later rows are games left (ISO 8601).
    #[arg(long, value_name = "DATE")]
    pub as_of: Option<Date>,
    /// Apply this Pythagorean exponent instead of a profile or a fit.
    #[arg(long, value_name = "X", conflicts_with = "profile")]
    pub exponent: Option<f64>,
    /// Without a profile or --exponent: the model to fit on the given data.
    #[arg(long, default_value = "pythagorean", value_name = "M")]
    pub model: String,
    /// Games of regression toward .500 for the run-based win% (default: (1 − φ)·k from the profile).
    #[arg(long, value_name = "K")]
    pub regress_games: Option<f64>,
    /// Simulated seasons.
    #[arg(long, default_value_t = 10_000, value_name = "N")]
    pub simulations: u64,
    /// Seed of the simulation (the same seed gives the same output on any number of threads).
    #[arg(long, default_value_t = 1, value_name = "S")]
    pub seed: u64,
    /// Also report each club's chance of reaching this many wins.
    #[arg(long, value_name = "W")]
    pub target_wins: Option<u64>,
    /// Hold strengths fixed at their estimates (finishing chances are then overconfident).
    #[arg(long)]
    pub no_strength_draw: bool,
    /// Draw each club's final-wins distribution (SVG).
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<String>,
    #[command(flatten)]
    pub environment: EnvironmentArgs,
    #[command(flatten)]
    pub output: OutputArgs,
}

pub fn run(args: &Args) -> Result<u8, Error> {
    let logs = &args.input.files;
    let mut others: Vec<Option<&String>> = args.schedule.iter().map(Some).collect();
    others.extend([args.groups.as_ref(), args.profile.as_ref()]);
    let (diag, read) = super::begin(
        &args.output,
        logs,
        &others,
        &[("--plot", args.plot.as_ref())],
    )?;
    read.iter().try_for_each(|p| schedule::require_regular(p))?;
    let settings = Settings {
        simulations: args.simulations,
        seed: args.seed,
        draw_strength: !args.no_strength_draw,
        target_wins: args.target_wins,
    };
    settings.validate()?;
    let profile = args.profile.as_deref().map(Profile::load).transpose()?;
    let mut input = match &profile {
        Some(p) => args.input.as_in_profile(p),
        None => args.input.clone(),
    };
    input.games = true;
    let (ds, table) = super::load(&input, args.as_of, &diag)?;
    let opts = input.load_options();
    let plan = schedule::read_plan(logs, &args.schedule, args.as_of, &opts)?;
    let groups = args
        .groups
        .as_deref()
        .map(|p| schedule::read_groups(p, &opts).map(|g| (p, g)))
        .transpose()?;
    let chosen = runcal::applied::choose_model(
        profile.as_ref().zip(args.profile.as_deref()),
        args.exponent,
        super::first_model(&args.model)?,
        &table,
    )?;
    super::say(&diag, &chosen.notes, &chosen.warnings);
    super::check_environment(
        profile.as_ref(),
        &ds.rows,
        None,
        args.environment.fail,
        &diag,
    )?;
    let (model, source) = (chosen.model, chosen.source);
    let (result, groups_from, clubs) = outlook::for_season(
        &ds.rows,
        &table,
        &model,
        &plan,
        groups.as_ref().map(|(p, g)| (*p, g)),
        args.regress_games,
        profile.as_ref(),
        &settings,
    )?;
    let report = OutlookReport {
        outlook: result,
        season: plan.season,
        as_of: args.as_of,
        last_played: plan.last_played,
        model,
        source,
        groups_from,
        counts: plan.counts,
        rows_used: clubs,
        unit: args.input.unit.into(),
        rows_rejected: ds.rejected.len(),
    };
    super::write_chart(&report, args.plot.as_deref(), &read, &diag)?;
    super::emit(&report, &args.output, &read)?;
    Ok(0)
}
