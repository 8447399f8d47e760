//! `runcal luck`: the weekly report of teams ahead of or behind their scoring, with projections.

use crate::app::args::{InputArgs, OutputArgs};
use runcal::data::gamelog::Date;
use runcal::error::Error;
use runcal::fit::{self, Loss};
use runcal::luck;
use runcal::profile::Profile;
use runcal::report::{LuckReport, ModelSource};

/// Rank teams by wins above or below what their runs scored and allowed predict
///
/// Applies a saved calibration (--profile) or, without one, fits on the given data. Reports each team's
/// expected wins, luck in wins and as a binomial z with its two-sided p-value, the one-run record
/// (game logs), and with a season length a rest-of-season projection with an 80% interval.
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
    #[arg(long, value_name = "DATE")]
    pub as_of: Option<Date>,
    /// Season length for the projection (default: the profile's).
    #[arg(long, value_name = "N")]
    pub season_games: Option<u64>,
    /// Games of regression toward .500 for the projection (default: the profile's, else estimated).
    #[arg(long, value_name = "K")]
    pub regress_games: Option<f64>,
    /// Show only the N teams most ahead of and the N most behind their scoring.
    #[arg(long, value_name = "N")]
    pub top: Option<usize>,
    /// Apply this Pythagorean exponent instead of a profile or a fit.
    #[arg(long, value_name = "X", conflicts_with = "profile")]
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
    let diag = super::diagnostics(&args.output);
    let files = &args.input.files;
    super::guard_outputs(&[args.output.output.as_ref(), args.plot.as_ref()], files)?;
    let profile = args.profile.as_deref().map(Profile::load).transpose()?;
    // The calibration's own definition of win% applies to the new data.
    let input = match &profile {
        Some(p) => args.input.as_in_profile(p),
        None => args.input.clone(),
    };
    let (ds, table) = super::load(&input, args.as_of, &diag)?;
    let (model, source) = match (&profile, &args.profile, args.exponent) {
        (Some(p), Some(path), _) => (p.model(), ModelSource::Profile(path.clone())),
        (_, _, Some(x)) => {
            if !(x.is_finite() && x > 0.0) {
                return Err(Error::Usage(format!(
                    "--exponent must be a positive number, got {x}"
                )));
            }
            (
                runcal::model::Model::new(runcal::model::ModelKind::Pythagorean, vec![x]),
                ModelSource::Given,
            )
        }
        _ => {
            let kinds = super::parse_models(&args.model)?;
            let kind = *kinds
                .first()
                .ok_or_else(|| Error::Usage("--model names no model".to_string()))?;
            let f = fit::fit_model(&table, kind, Loss::Logloss)?;
            diag.note(&format!(
                "no --profile: fitted {} on these {} team-seasons ({})",
                kind,
                table.len(),
                runcal::report::table::params(&f)
            ));
            (f.model, ModelSource::Fitted)
        }
    };
    let season_games = args
        .season_games
        .or(profile.as_ref().map(|p| p.season_games));
    let k = match args.regress_games {
        Some(k) if k.is_finite() && k >= 0.0 => Some(k),
        Some(k) => {
            return Err(Error::Usage(format!(
                "--regress-games must be a non-negative number, got {k}"
            )));
        }
        None => profile
            .as_ref()
            .and_then(|p| p.regression_games)
            .or_else(|| luck::regression_games(&table)),
    };
    let regression = match (season_games, k) {
        (Some(g), Some(k)) => Some((k, g)),
        (Some(_), None) => {
            return Err(Error::Usage(
                "cannot estimate the regression toward .500 from these data (win% spread no larger than chance); pass --regress-games K".to_string(),
            ));
        }
        (None, _) => None,
    };
    let mut lines = luck::luck_lines(&ds.rows, &table, &model, regression);
    if let Some(n) = args.top {
        luck::keep_extremes(&mut lines, n);
    }
    let report = LuckReport {
        model,
        source,
        rows_used: ds.rows.len(),
        rows_rejected: ds.rejected.len(),
        as_of: args.as_of,
        season_games,
        regression_games: regression.map(|(k, _)| k),
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
