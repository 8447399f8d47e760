//! `runcal backtest`: which model predicts best on seasons it was not fitted to.

use crate::app::args::{InputArgs, LossArg, OutputArgs, SchemeArg};
use runcal::error::Error;
use runcal::fit::backtest::{self, Candidate};
use runcal::fit::{self, Loss};
use runcal::report::BacktestReport;

/// Compare models on seasons they were not fitted to.
///
/// Holds out each season (or rolls forward through them), fits on the rest (or on the seasons
/// before), scores the held-out season, and ranks the pooled out-of-sample results.
///
/// Example:
///   runcal backtest demo-data/meridian-league.csv --scheme rolling --min-train 5 --model all
///   runcal backtest seasons.csv --map runs_scored=R --scheme leave-one-season-out --format json
#[derive(Debug, clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    #[command(flatten)]
    pub input: InputArgs,
    /// How seasons are held out.
    #[arg(long, value_enum, default_value_t = SchemeArg::LeaveOneSeasonOut)]
    pub scheme: SchemeArg,
    /// With --scheme rolling: seasons of training data before the first scored season.
    #[arg(long, default_value_t = 3, value_name = "K")]
    pub min_train: usize,
    /// Models to fit on each training set (comma-separated, or all).
    #[arg(long, default_value = "all", value_name = "M[,M…]")]
    pub model: String,
    /// What each fit minimises and the ranking uses.
    #[arg(long, value_enum, default_value_t = LossArg::Logloss)]
    pub loss: LossArg,
    /// Leave out the published references.
    #[arg(long)]
    pub no_references: bool,
    #[command(flatten)]
    pub output: OutputArgs,
}

pub fn run(args: &Args) -> Result<u8, Error> {
    let diag = super::diagnostics(&args.output);
    let files = &args.input.files;
    super::guard_outputs(&[("--output", args.output.output.as_ref())], files)?;
    let loss: Loss = args.loss.into();
    let mut candidates: Vec<Candidate> = super::parse_models(&args.model)?
        .into_iter()
        .map(Candidate::Fit)
        .collect();
    if !args.no_references {
        candidates.extend(fit::standard_references().into_iter().map(Candidate::Fixed));
    }
    let (ds, table) = super::load(&args.input, None, &diag)?;
    let scores = backtest::run(
        &ds.rows,
        &table,
        &candidates,
        loss,
        args.scheme.into(),
        args.min_train,
    )?;
    let report = BacktestReport {
        scheme: args.scheme.into(),
        loss,
        rows_used: ds.rows.len(),
        rows_rejected: ds.rejected.len(),
        margin: backtest::margin(&scores, loss),
        comparison: runcal::fit::compare::backtest(&scores, loss),
        scores,
    };
    super::emit(&report, &args.output, files)?;
    Ok(0)
}
