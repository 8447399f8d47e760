//! One file per subcommand: glue only (load → compute → report).

pub mod backtest;
pub mod check;
pub mod digest;
pub mod eras;
pub mod fit;
pub mod luck;
pub mod outlook;
pub mod simulate;

use crate::app::args::{InputArgs, OutputArgs};
use runcal::data::{self, Dataset, Table, gamelog::Date};
use runcal::error::Error;
use runcal::model::ModelKind;
use runcal::output::Diagnostics;
use runcal::report::{self, Report};

/// Exit code of a check that ran and failed.
pub const EXIT_CHECK_FAILED: u8 = 1;

pub fn diagnostics(out: &OutputArgs) -> Diagnostics {
    Diagnostics {
        quiet: out.quiet,
        verbose: out.verbose,
    }
}

/// Load, validate and tabulate the inputs; report what was set aside.
pub fn load(
    input: &InputArgs,
    as_of: Option<Date>,
    diag: &Diagnostics,
) -> Result<(Dataset, Table), Error> {
    let (ds, table) = load_any(input, as_of, diag)?;
    ds.require_rows(&input.files.join(", "))?;
    Ok((ds, table))
}

/// [`load`], accepting inputs that leave no rows.
pub fn load_any(
    input: &InputArgs,
    as_of: Option<Date>,
    diag: &Diagnostics,
) -> Result<(Dataset, Table), Error> {
    let opts = data::LoadOptions {
        as_of,
        ..input.load_options()
    };
    let mut ds = data::load(&input.files, input.games, &opts)?;
    data::table::decided_rows(&mut ds, input.tie_policy(), input.skip_invalid)?;
    diag.dataset(&ds);
    let (weighting, note) = input.weighting(&ds.rows);
    if let Some(note) = note {
        diag.note(&note);
    }
    let table = Table::new(&ds.rows, input.tie_policy(), weighting);
    Ok((ds, table))
}

/// Warn about seasons whose wins and losses, or runs scored and allowed, do not balance (rows
/// missing, doubled or mistyped). Not with --league: one league alone need not balance.
pub fn warn_unbalanced(input: &InputArgs, ds: &Dataset, diag: &Diagnostics) {
    if input.league.is_none() {
        for w in runcal::balance::warnings(&ds.rows, runcal::balance::WARN_IMBALANCE) {
            diag.warn(&w);
        }
    }
}

/// CSV has no place for the caution, so an output of luck or projections as CSV prints it as the
/// first line on stderr (also with -q: it is not a warning).
pub fn caution_for_csv(out: &OutputArgs) {
    if out.format == crate::app::args::FormatArg::Csv {
        runcal::output::stderr_line(&format!("note: {}", runcal::CAUTION));
    }
}

/// Render and write a report.
pub fn emit(report: &dyn Report, out: &OutputArgs, inputs: &[String]) -> Result<(), Error> {
    let bytes = report::render(report, out.format.into())?;
    let inputs: Vec<&str> = inputs.iter().map(String::as_str).collect();
    runcal::output::emit(out.output.as_deref(), &inputs, &bytes)
}

/// Write a report's chart to `path` (`--plot`), atomically and never over an input.
pub fn write_chart(
    report: &dyn Report,
    path: Option<&str>,
    inputs: &[String],
    diag: &Diagnostics,
) -> Result<(), Error> {
    let (Some(path), Some(svg)) = (path, report.svg()) else {
        return Ok(());
    };
    write_beside(path, &svg?, inputs, diag)
}

/// Write an output file besides the main output (a chart, a second CSV), never over an input, and
/// say so.
pub fn write_beside(
    path: &str,
    bytes: &[u8],
    inputs: &[String],
    diag: &Diagnostics,
) -> Result<(), Error> {
    let inputs: Vec<&str> = inputs.iter().map(String::as_str).collect();
    runcal::output::emit(Some(path), &inputs, bytes)?;
    diag.note(&format!("wrote {path}"));
    Ok(())
}

/// Parse `--model a,b` or `all`, keeping the user's order and dropping repeats.
pub fn parse_models(list: &str) -> Result<Vec<ModelKind>, Error> {
    if list.trim().eq_ignore_ascii_case("all") {
        return Ok(ModelKind::ALL.to_vec());
    }
    let mut kinds = Vec::new();
    for name in list.split(',') {
        let k: ModelKind = name.parse().map_err(Error::Usage)?;
        if !kinds.contains(&k) {
            kinds.push(k);
        }
    }
    Ok(kinds)
}

/// The first and last season of a dataset.
pub fn season_span(ds: &Dataset) -> Option<(i32, i32)> {
    let s = ds.seasons();
    Some((*s.first()?, *s.last()?))
}

/// Every file a run reads: its data files and any other file it opens (a profile, …).
pub fn reads(files: &[String], others: &[Option<&String>]) -> Vec<String> {
    files
        .iter()
        .chain(others.iter().flatten().copied())
        .cloned()
        .collect()
}

/// Every report command's first steps: the CSV caution, the diagnostics, the files the run reads
/// (`files` then `others`), and the refusal of outputs over any of them (`--output` is added to
/// `outputs`). Returns the diagnostics and the files read.
pub fn begin(
    out: &OutputArgs,
    files: &[String],
    others: &[Option<&String>],
    outputs: &[(&str, Option<&String>)],
) -> Result<(Diagnostics, Vec<String>), Error> {
    caution_for_csv(out);
    let read = reads(files, others);
    let mut all = vec![("--output", out.output.as_ref())];
    all.extend_from_slice(outputs);
    guard_outputs(&all, &read)?;
    Ok((diagnostics(out), read))
}

/// Refuse before any work when an output would overwrite a file the run reads, or another output.
/// Each output comes with the option that names it.
pub fn guard_outputs(outputs: &[(&str, Option<&String>)], reads: &[String]) -> Result<(), Error> {
    let reads: Vec<&str> = reads.iter().map(String::as_str).collect();
    let outputs: Vec<(&str, &str)> = outputs
        .iter()
        .filter_map(|(opt, path)| path.map(|p| (*opt, p.as_str())))
        .collect();
    runcal::output::check_outputs(&outputs, &reads)
}

/// Print a core step's notes and warnings.
pub fn say(diag: &Diagnostics, notes: &[String], warnings: &[String]) {
    notes.iter().for_each(|n| diag.note(n));
    warnings.iter().for_each(|w| diag.warn(w));
}

/// Warn about a calibration applied far from its run environment, or fail with `--fail-on-mismatch`.
pub fn mismatch(found: &[String], fail: bool, diag: &Diagnostics) -> Result<(), Error> {
    if fail && !found.is_empty() {
        return Err(Error::Usage(format!(
            "{} (--fail-on-mismatch)",
            found.join("; ")
        )));
    }
    found.iter().for_each(|w| diag.warn(w));
    Ok(())
}

/// With a profile: how far these rows sit from its run environment, warned about or (with
/// `--fail-on-mismatch`) an error.
pub fn check_environment(
    profile: Option<&runcal::profile::Profile>,
    rows: &[runcal::data::TeamSeason],
    season_games: Option<u64>,
    fail: bool,
    diag: &Diagnostics,
) -> Result<(), Error> {
    match profile {
        Some(p) => mismatch(
            &runcal::applied::environment_mismatch(p, rows, season_games),
            fail,
            diag,
        ),
        None => Ok(()),
    }
}

/// The first model `--model` names.
pub fn first_model(models: &str) -> Result<ModelKind, Error> {
    parse_models(models)?
        .first()
        .copied()
        .ok_or_else(|| Error::Usage("--model names no model".to_string()))
}
