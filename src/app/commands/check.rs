//! `runcal check`: the CI gate. Exit 1 when new data drift from the saved calibration.

use crate::app::args::{InputArgs, OutputArgs, positive};
use crate::app::values;
use runcal::error::Error;
use runcal::fit::{self, loss};
use runcal::gate::{self, Bounds};
use runcal::profile::Profile;
use runcal::report::CheckReport;

/// Gate new season files against a saved calibration (exit 1 on failure).
///
/// Scores the new data with the saved calibration and refits it; fails when an error bound is
/// exceeded or a refitted parameter drifts more than S standard errors from the saved one.
///
/// Example:
///   runcal fit history.csv --save-profile league.json
///   runcal check new-season.csv --profile league.json --max-mae 0.03 --max-drift 3
#[derive(Debug, clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    #[command(flatten)]
    pub input: InputArgs,
    /// The saved calibration (from `runcal fit --save-profile`).
    #[arg(long, required = true, value_name = "FILE")]
    pub profile: String,
    /// Fail when the calibration's MAE on the new data exceeds X.
    #[arg(long, value_name = "X", allow_negative_numbers = true, value_parser = values::non_negative)]
    pub max_mae: Option<f64>,
    /// Fail when its RMSE exceeds X.
    #[arg(long, value_name = "X", allow_negative_numbers = true, value_parser = values::non_negative)]
    pub max_rmse: Option<f64>,
    /// Fail when its log-loss exceeds X.
    #[arg(long, value_name = "X", allow_negative_numbers = true, value_parser = values::non_negative)]
    pub max_logloss: Option<f64>,
    /// Fail when a refitted parameter lies more than S standard errors (of the difference) from the
    /// saved one.
    #[arg(long, value_name = "S", default_value_t = 3.0, allow_negative_numbers = true, value_parser = positive)]
    pub max_drift: f64,
    /// Skip the drift rule (only the error bounds apply).
    #[arg(long)]
    pub no_drift: bool,
    /// Fail when, in some season, wins and losses (with unpaired ties) or runs scored and allowed
    /// differ by more than this fraction of their total: rows missing, doubled or mistyped. Each
    /// season's rows must hold every club of the competition (inter-league games cancel only then).
    /// Without it, seasons off by more than 0.005 are only warned about.
    #[arg(long, value_name = "F", allow_negative_numbers = true, value_parser = values::non_negative)]
    pub max_imbalance: Option<f64>,
    #[command(flatten)]
    pub output: OutputArgs,
}

pub fn run(args: &Args) -> Result<u8, Error> {
    let diag = super::diagnostics(&args.output);
    let files = &super::reads(&args.input.files, &[Some(&args.profile)]);
    super::guard_outputs(&[("--output", args.output.output.as_ref())], files)?;
    let profile = Profile::load(&args.profile)?;
    let input = args.input.as_in_profile(&profile);
    let (ds, table) = super::load(&input, None, &diag)?;
    let saved = profile.model();
    let scored = loss::metrics(&table, saved.kind, &saved.params, None);
    let refit = fit::fit_model(&table, saved.kind, profile.loss)?;
    let bounds = Bounds {
        max_mae: args.max_mae,
        max_rmse: args.max_rmse,
        max_logloss: args.max_logloss,
        max_drift: (!args.no_drift).then_some(args.max_drift),
    };
    let mut rules = gate::evaluate(&profile, &scored, &refit, &bounds).map_err(Error::Usage)?;
    match args.max_imbalance {
        Some(max) => rules.extend(runcal::balance::rules(&ds.rows, max)),
        None => super::warn_unbalanced(&input, &ds, &diag),
    }
    if rules.is_empty() {
        return Err(Error::Usage(
            "no rule to check: give --max-mae, --max-rmse, --max-logloss or --max-imbalance, or drop --no-drift"
                .to_string(),
        ));
    }
    let passed = rules.iter().all(|r| r.passed);
    let report = CheckReport {
        profile: args.profile.clone(),
        rows_used: ds.rows.len(),
        rows_rejected: ds.rejected.len(),
        passed,
        verdict: gate::verdict(&rules),
        rules,
    };
    super::emit(&report, &args.output, files)?;
    if !passed && args.output.format != crate::app::args::FormatArg::Table {
        // Machine formats go to stdout; the reason still reaches a person reading the CI log.
        diag.warn(&report.verdict);
    }
    Ok(if passed { 0 } else { super::EXIT_CHECK_FAILED })
}
