//! `runcal luck`: the weekly report of teams ahead of or behind their scoring, with projections.

use crate::app::args::{InputArgs, OutputArgs, positive};
use crate::app::values;
use runcal::data::gamelog::Date;
use runcal::error::Error;
use runcal::luck;
use runcal::profile::Profile;
use runcal::report::LuckReport;

/// Rank teams by wins above or below what their runs scored and allowed predict
///
/// Applies a saved calibration (--profile) or, without one, fits on the given data. Leads with each
/// team's gap (wins over expected) and its z under the quasi-binomial noise model (dispersion from the
/// calibration), a two-sided p-value and a Holm-adjusted flag over the teams shown; then the evidence
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
    pub output: OutputArgs,
}

pub fn run(args: &Args) -> Result<u8, Error> {
    super::caution_for_csv(&args.output);
    let diag = super::diagnostics(&args.output);
    let files = &super::reads(&args.input.files, &[args.profile.as_ref()]);
    super::guard_outputs(
        &[
            ("--output", args.output.output.as_ref()),
            ("--plot", args.plot.as_ref()),
        ],
        files,
    )?;
    let profile = args.profile.as_deref().map(Profile::load).transpose()?;
    // The calibration's own definition of win% applies to the new data.
    let input = match &profile {
        Some(p) => args.input.as_in_profile(p),
        None => args.input.clone(),
    };
    let (ds, table) = super::load(&input, args.as_of, &diag)?;
    let (model, source, fitted) = super::choose_model(
        profile.as_ref().zip(args.profile.as_deref()),
        args.exponent,
        &args.model,
        &table,
        &diag,
    )?;
    let noise = noise_model(args, profile.as_ref(), fitted, &ds, &table, &model, &diag)?;
    let season_games = args
        .season_games
        .or(profile.as_ref().map(|p| p.season_games));
    let k = args.regress_games.or_else(|| {
        profile
            .as_ref()
            .and_then(Profile::run_based_regression_games)
            .or_else(|| {
                let k = luck::regression_games(&table)?;
                luck::run_based_regression_games(k, noise.dispersion).or(Some(k))
            })
    });
    let outlook = match (season_games, k) {
        (Some(season_games), Some(k)) => Some(luck::Outlook {
            season_games,
            regression_games: k,
            dispersion: noise.dispersion,
            level: luck::RANGE_LEVEL,
        }),
        (Some(_), None) => {
            return Err(Error::Usage(
                "cannot estimate the regression toward .500 from these data (win% spread no larger than chance); pass --regress-games K".to_string(),
            ));
        }
        (None, _) => None,
    };
    let lines = luck::luck_lines(&ds.rows, &table, &model, &noise, outlook.as_ref(), args.top);
    let report = LuckReport {
        model,
        source,
        rows_used: ds.rows.len(),
        rows_rejected: ds.rejected.len(),
        as_of: args.as_of,
        noise,
        outlook,
        chart_labels: args
            .plot
            .is_some()
            .then(|| luck::labelled_extremes(lines.len())),
        teams: lines,
    };
    super::write_chart(&report, args.plot.as_deref(), files, &diag)?;
    super::emit(&report, &args.output, files)?;
    Ok(0)
}

/// The dispersion behind the luck z: --dispersion, the profile's, the fit's, or measured on these
/// data under the model applied (a profile without one is said so on stderr).
fn noise_model(
    args: &Args,
    profile: Option<&Profile>,
    fitted: Option<Option<f64>>,
    ds: &runcal::data::Dataset,
    table: &runcal::data::Table,
    model: &runcal::model::Model,
    diag: &runcal::output::Diagnostics,
) -> Result<luck::Noise, Error> {
    use luck::{Noise, NoiseSource};
    if let Some(d) = args.dispersion {
        return Ok(Noise::new(Some(d), NoiseSource::Given));
    }
    if let Some(d) = profile.and_then(|p| p.dispersion) {
        return Ok(Noise::new(Some(d), NoiseSource::Profile));
    }
    if let Some(Some(d)) = fitted {
        return Ok(Noise::new(Some(d), NoiseSource::Data));
    }
    // Fitted here without standard errors: its parameters cost degrees of freedom.
    let (fitted_params, source) = match fitted {
        Some(_) => (model.params.len(), NoiseSource::Data),
        None => (0, NoiseSource::DataUnfitted),
    };
    let lines = luck::team_lines(&ds.rows, table, model);
    let noise = Noise::new(luck::pearson_dispersion(&lines, fitted_params), source);
    if profile.is_some() {
        diag.warn(&format!(
            "the profile saves no dispersion (a log-loss fit saves one); luck z uses {} noise {}",
            noise.model,
            noise.source.describe()
        ));
    }
    Ok(noise)
}
