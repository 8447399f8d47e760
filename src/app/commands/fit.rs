//! `runcal fit`: fit a league's exponent (or every model) and compare with published references.

use crate::app::args::{BootstrapArgs, FormatArg, InputArgs, LossArg, OutputArgs, positive};
use crate::app::values;
use runcal::error::Error;
use runcal::fit::GroupBy;
use runcal::fit::calibrate::{Plan, calibrate};
use runcal::model::Model;
use runcal::profile::Profile;
use runcal::report::FitReport;

/// Fit win-expectation models to team-season (or game-log) data
///
/// Fits the Pythagorean exponent (or PythagenPat's z, Pythagenport's a and b, the linear runs per win)
/// by log-loss, MAE or RMSE, scores published references beside it, and lists the teams furthest
/// from their expectation.
///
/// Example:
///   runcal fit demo-data/meridian-league.csv --model all
///   runcal fit seasons.csv --map runs_scored=R --seasons 1980-2006 --loss mae --format json
#[derive(Debug, clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    #[command(flatten)]
    pub input: InputArgs,
    /// Models to fit: pythagorean, pythagenpat, pythagenport, linear (comma-separated), or all.
    #[arg(long, default_value = "pythagorean", value_name = "M[,M…]")]
    pub model: String,
    /// What the fit minimises.
    #[arg(long, value_enum, default_value_t = LossArg::Logloss)]
    pub loss: LossArg,
    /// Score this Pythagorean exponent instead of fitting one.
    #[arg(long, value_name = "X", value_parser = positive, allow_negative_numbers = true, conflicts_with_all = ["by", "bootstrap", "model"])]
    pub exponent: Option<f64>,
    /// Fit each season, league, or season and league separately.
    #[arg(long, value_name = "season|league|season,league")]
    pub by: Option<GroupBy>,
    /// Groups with fewer team-seasons than this are listed but not fitted.
    #[arg(long, default_value_t = 8, value_name = "N")]
    pub min_group: usize,
    /// Also score this unfitted model (repeatable), e.g. pythagorean:2.37 or pythagenport:1.5,0.45.
    #[arg(long = "reference", value_name = "MODEL:PARAMS")]
    pub references: Vec<Model>,
    /// Leave out the published references (exponents 2 and 1.83, PythagenPat 0.287, Pythagenport 1.5/0.45).
    #[arg(long)]
    pub no_references: bool,
    #[command(flatten)]
    pub boot: BootstrapArgs,
    /// Save the first model's calibration as a profile for `luck` and `check`.
    #[arg(long, value_name = "FILE")]
    pub save_profile: Option<String>,
    /// Also write the model comparison (the ranked table: parameters, standard errors, bootstrap
    /// intervals, metrics) as CSV to FILE; `--format csv` writes the per-team residuals.
    #[arg(long, value_name = "FILE.csv")]
    pub comparison_csv: Option<String>,
    /// Draw the loss against the exponent and a histogram of residuals (SVG).
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<String>,
    /// How many over- and under-performers to list.
    #[arg(long, default_value_t = 5, value_name = "N", value_parser = values::count::<{ values::MAX_TOP }>)]
    pub top: usize,
    #[command(flatten)]
    pub output: OutputArgs,
}

pub fn run(args: &Args) -> Result<u8, Error> {
    let (diag, files) = super::begin(
        &args.output,
        &args.input.files,
        &[],
        &[
            ("--save-profile", args.save_profile.as_ref()),
            ("--plot", args.plot.as_ref()),
            ("--comparison-csv", args.comparison_csv.as_ref()),
        ],
    )?;
    let files = &files;
    let (ds, table) = super::load(&args.input, None, &diag)?;
    super::warn_unbalanced(&args.input, &ds, &diag);
    let models = super::parse_models(&args.model)?;
    let bar = bootstrap_bar(args, &ds.rows, models.len(), diag.quiet);
    let tick = |n: u64| bar.inc(n);
    let plan = Plan {
        models,
        loss: args.loss.into(),
        exponent: args.exponent,
        by: args.by,
        min_group: args.min_group,
        references: args.references.clone(),
        standard_references: !args.no_references,
        bootstrap: args.boot.options(Some(&tick)),
        top: args.top,
        // JSON shows no team lines (one per team-season of a game log); the chart does.
        team_lines: args.output.format != FormatArg::Json || args.plot.is_some(),
        chart: args.plot.is_some(),
    };
    let calibration = calibrate(&ds.rows, &table, &plan);
    bar.finish_and_clear();
    let calibration = calibration?;
    for w in &calibration.warnings {
        diag.warn(w);
    }
    for u in &calibration.unfitted {
        diag.warn(&format!(
            "group {}: {}; marked as not fitted",
            u.group, u.reason
        ));
    }
    for f in calibration.fits.iter().filter(|f| f.fitted) {
        let (kind, n, ok) = (f.model.kind, f.iterations, f.converged);
        diag.debug(&format!("{kind}: {n} iterations, converged {ok}"));
    }
    if let Some(path) = &args.save_profile {
        let f = calibration
            .saved
            .map(|i| &calibration.fits[i])
            .ok_or_else(|| {
                Error::Usage(
                    "--save-profile needs a fit over all rows (not --by or --exponent)".into(),
                )
            })?;
        let (ties, weight) = (args.input.tie_policy(), table.weighting);
        Profile::from_fit(f, &ds, &table, ties, weight, files)?.save(path)?;
        diag.note(&format!("saved {} to {path}", f.model.label()));
    }
    let report = FitReport {
        rows_used: ds.rows.len(),
        rows_rejected: ds.rejected.len(),
        loss: plan.loss,
        seasons: super::season_span(&ds),
        grouped: args.by.is_some(),
        calibration,
        unit: args.input.unit.into(),
    };
    super::write_chart(&report, args.plot.as_deref(), files, &diag)?;
    if let Some(path) = &args.comparison_csv {
        let bytes = runcal::report::csv::fit_comparison(&report)?;
        super::write_beside(path, &bytes, files, &diag)?;
    }
    super::emit(&report, &args.output, files)?;
    Ok(0)
}

/// The bootstrap's progress as one bar on a terminal's stderr (hidden with -q or off a terminal),
/// over every resample of every model and group.
fn bootstrap_bar(
    args: &Args,
    rows: &[runcal::data::TeamSeason],
    models: usize,
    quiet: bool,
) -> indicatif::ProgressBar {
    use std::io::IsTerminal;
    if args.boot.bootstrap == 0 || quiet || !std::io::stderr().is_terminal() {
        return indicatif::ProgressBar::hidden();
    }
    let groups = args.by.map_or(1, |by| {
        runcal::fit::group_rows(rows, by)
            .iter()
            .filter(|(_, idx)| idx.len() >= args.min_group)
            .count()
    });
    let bar = indicatif::ProgressBar::new((args.boot.bootstrap * models * groups) as u64);
    bar.set_style(
        indicatif::ProgressStyle::with_template(
            "bootstrap {bar:40} {pos}/{len} resamples, {eta} left",
        )
        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    bar
}
