//! `runcal fit`: fit a league's exponent (or every model) and compare with published references.

use crate::app::cli::{InputArgs, LossArg, OutputArgs, ResampleArg};
use runcal::error::Error;
use runcal::fit::{self, GroupBy, Loss, ModelFit, bootstrap};
use runcal::model::{Model, ModelKind};
use runcal::report::FitReport;
use runcal::{luck, profile};

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
    #[arg(long, value_name = "X", conflicts_with_all = ["by", "bootstrap", "model"])]
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
    /// Bootstrap resamples for percentile intervals (0: none).
    #[arg(long, default_value_t = 0, value_name = "N")]
    pub bootstrap: usize,
    /// Seed of the bootstrap's random streams.
    #[arg(long, default_value_t = 1, value_name = "S")]
    pub seed: u64,
    /// Resample team-seasons, or whole seasons (keeps within-season dependence).
    #[arg(long, value_enum, default_value_t = ResampleArg::Team)]
    pub resample: ResampleArg,
    /// Coverage of the bootstrap intervals.
    #[arg(long, default_value_t = 0.95, value_name = "L")]
    pub ci_level: f64,
    /// Save the first model's calibration as a profile for `luck` and `check`.
    #[arg(long, value_name = "FILE")]
    pub save_profile: Option<String>,
    /// Draw the loss against the exponent and a histogram of residuals (SVG).
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<String>,
    /// How many over- and under-performers to list.
    #[arg(long, default_value_t = 5, value_name = "N")]
    pub top: usize,
    #[command(flatten)]
    pub output: OutputArgs,
}

pub fn run(args: &Args) -> Result<u8, Error> {
    let diag = super::diagnostics(&args.output);
    let files = &args.input.files;
    super::guard_outputs(
        &[
            args.output.output.as_ref(),
            args.save_profile.as_ref(),
            args.plot.as_ref(),
        ],
        files,
    )?;
    if !(args.ci_level > 0.0 && args.ci_level < 1.0) {
        return Err(Error::Usage(format!(
            "--ci-level must lie between 0 and 1, got {}",
            args.ci_level
        )));
    }
    let loss: Loss = args.loss.into();
    let kinds = super::parse_models(&args.model)?;
    let (ds, table) = super::load(&args.input, None, &diag)?;
    let mut fits: Vec<ModelFit> = Vec::new();
    let mut too_small = Vec::new();
    let mut teams = Vec::new();
    let primary: Model;

    if let Some(x) = args.exponent {
        if !(x.is_finite() && x > 0.0) {
            return Err(Error::Usage(format!(
                "--exponent must be a positive number, got {x}"
            )));
        }
        primary = Model::new(ModelKind::Pythagorean, vec![x]);
        fits.push(fit::score_model(&table, primary.clone(), loss));
        teams = luck::team_lines(&ds.rows, &table, &primary);
    } else if let Some(by) = args.by {
        let groups = fit::group_rows(&ds.rows, by);
        let mut first: Option<Model> = None;
        for (group, idx) in groups {
            if idx.len() < args.min_group {
                too_small.push((group, idx.len()));
                continue;
            }
            let sub = table.subset(&idx);
            let rows: Vec<_> = idx.iter().map(|&i| ds.rows[i].clone()).collect();
            for (j, &kind) in kinds.iter().enumerate() {
                let mut f = fit::fit_model(&sub, kind, loss)?;
                if args.bootstrap > 0 {
                    f.intervals =
                        Some(bootstrap::run(&sub, &rows, &f, &boot_options(args, &diag))?);
                }
                f.group = Some(group.clone());
                if j == 0 {
                    teams.extend(luck::team_lines(&rows, &sub, &f.model));
                    first.get_or_insert_with(|| f.model.clone());
                }
                fits.push(f);
            }
        }
        primary = first.ok_or_else(|| {
            Error::Usage(format!(
                "every group has fewer than --min-group {} team-seasons",
                args.min_group
            ))
        })?;
    } else {
        for &kind in &kinds {
            let mut f = fit::fit_model(&table, kind, loss)?;
            diag.debug(&format!(
                "{kind}: {} iterations, converged {}",
                f.iterations, f.converged
            ));
            if args.bootstrap > 0 {
                f.intervals = Some(bootstrap::run(
                    &table,
                    &ds.rows,
                    &f,
                    &boot_options(args, &diag),
                )?);
            }
            fits.push(f);
        }
        // The first model named is the primary one; with several, the best by the loss.
        fit::rank(&mut fits);
        primary = fits[0].model.clone();
        // JSON shows no team lines (the table, the CSV and the chart do): with a game log there is
        // one per team-season.
        if args.output.format != crate::app::cli::FormatArg::Json || args.plot.is_some() {
            teams = luck::team_lines(&ds.rows, &table, &primary);
        }
    }

    if !args.grouped() {
        let mut refs: Vec<ModelFit> = Vec::new();
        let standard = if args.no_references {
            Vec::new()
        } else {
            fit::standard_references()
        };
        for m in standard.into_iter().chain(args.references.iter().cloned()) {
            if !refs.iter().any(|r| r.model == m) {
                refs.push(fit::score_model(&table, m, loss));
            }
        }
        fit::rank(&mut refs);
        fits.extend(refs);
    }

    if let Some(path) = &args.save_profile {
        let f = fits
            .iter()
            .find(|f| f.fitted && f.group.is_none())
            .ok_or_else(|| {
                Error::Usage(
                    "--save-profile needs a fit over all rows (not --by or --exponent)".to_string(),
                )
            })?;
        let p = profile::Profile::from_fit(
            f,
            &ds,
            &table,
            args.input.tie_policy(),
            args.input.weighting(),
            files,
        )?;
        p.save(path)?;
        diag.note(&format!("saved calibration to {path}"));
    }
    if let Some(path) = &args.plot {
        let curve = fit::loss_curve(&table, &primary, loss);
        runcal::report::svg::write_fit_plot(path, &curve, &teams)?;
        diag.note(&format!("wrote {path}"));
    }

    let report = FitReport {
        rows_used: ds.rows.len(),
        rows_rejected: ds.rejected.len(),
        loss,
        seasons: super::season_span(&ds),
        fits,
        too_small,
        grouped: args.grouped(),
        teams,
        primary: Some(primary),
        top: args.top,
    };
    super::emit(&report, &args.output, files)?;
    Ok(0)
}

impl Args {
    fn grouped(&self) -> bool {
        self.by.is_some()
    }
}

fn boot_options(args: &Args, diag: &runcal::output::Diagnostics) -> bootstrap::Options {
    bootstrap::Options {
        resamples: args.bootstrap,
        seed: args.seed,
        resample: args.resample.into(),
        level: args.ci_level,
        progress: !diag.quiet,
    }
}
