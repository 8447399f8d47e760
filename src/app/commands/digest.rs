//! `runcal digest`: the weekly document (HTML, Markdown or JSON) from a season's game log.

use clap::ValueEnum;

use crate::app::args::{InputArgs, OtLossesArg, TiesArg, UnitArg};
use runcal::data::{Mapping, gamelog::Date};
use runcal::digest::{self, Calibration};
use runcal::error::Error;
use runcal::output::Diagnostics;
use runcal::profile::Profile;
use runcal::report::document::{self, DocFormat};

/// Write the weekly document: luck, week-over-week change and the rest-of-season outlook
///
/// Applies a saved calibration to a season's game log as of a date, and again as of a week before
/// (or --compare-to), and writes one document: the calibration used, the biggest movers in words,
/// the luck table, each club's change in wins over expected, projected wins and chance of finishing
/// first in its group (the schedule-aware simulation of `runcal outlook`, over the log's games
/// after each date), the projected final wins with their 80% ranges, two charts, a methods note
/// and the caution. Nothing is stored between weeks: the earlier numbers are recomputed from the
/// same file.
///
/// HTML is one self-contained page (styles and charts inline, no script, nothing fetched). Markdown
/// writes its charts as STEM-luck.svg and STEM-outlook.svg beside --output. JSON is runcal.digest/1.
/// This is descriptive statistics, not wagering or financial advice; luck estimates are uncertain.
///
/// Example:
///   runcal digest demo-data/meridian-2026-games.csv --profile demo-data/meridian-profile.json \
///     --as-of 2026-07-15 --output week.html
///   runcal digest games.csv --profile league.json --as-of 2026-07-15 --format markdown -o week.md
#[derive(Debug, clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Game logs of the season (CSV, one row per game). Each is read once per date, so they must
    /// be regular files (not `-`).
    #[arg(required = true, value_name = "FILES")]
    pub files: Vec<String>,
    /// The saved calibration to apply (from `runcal fit --save-profile`).
    #[arg(long, value_name = "FILE")]
    pub profile: String,
    /// Count the games played on or before this date (ISO 8601).
    #[arg(long, value_name = "DATE", value_parser = runcal::data::gamelog::parse_as_of)]
    pub as_of: Date,
    /// Compare with the games played on or before this date (default: a week before --as-of).
    #[arg(long, value_name = "DATE", value_parser = runcal::data::gamelog::parse_as_of)]
    pub compare_to: Option<Date>,
    /// Use column HEADER for ROLE (repeatable), e.g. --map home_score=HS.
    #[arg(long = "map", value_name = "ROLE=HEADER")]
    pub maps: Vec<Mapping>,
    /// Keep only this league (case-insensitive).
    #[arg(long, value_name = "X")]
    pub league: Option<String>,
    /// The season of every game, for a log without a season column whose season is not its
    /// dates' year (a winter league).
    #[arg(long, value_name = "YEAR", allow_negative_numbers = true)]
    pub season_is: Option<i32>,
    /// Field delimiter of the logs: , ; | or tab (default: read from each file's header line).
    #[arg(long, value_name = "D", value_parser = runcal::data::input::parse_delimiter)]
    pub delimiter: Option<u8>,
    /// Go on past bad rows: list each on stderr and count it as rejected.
    #[arg(long)]
    pub skip_invalid: bool,
    /// What the scores count, for the document's words (runs, points or goals).
    #[arg(long, value_enum, default_value_t = UnitArg::Runs)]
    pub unit: UnitArg,
    /// Fail (exit 2) instead of warning when the log's runs per game sit far (a factor of 1.5) from
    /// the profile's.
    #[arg(long)]
    pub fail_on_mismatch: bool,
    /// Each club's group for the first-place chances: a CSV with columns team and group (default:
    /// the log's league column, else one group).
    #[arg(long, value_name = "FILE")]
    pub groups: Option<String>,
    /// Simulated seasons behind the first-place chances (the same as `runcal outlook`, seed 1).
    #[arg(long, default_value_t = 10_000, value_name = "N")]
    pub simulations: u64,
    /// Print no warnings on stderr.
    #[arg(long, short = 'q')]
    pub quiet: bool,
    /// Print diagnostics on stderr.
    #[arg(long, short = 'v')]
    pub verbose: bool,
    /// The document's format.
    #[arg(long, value_enum, default_value_t = DocFormatArg::Html)]
    pub format: DocFormatArg,
    /// Write the document to FILE (atomically) instead of stdout; Markdown needs it for its charts.
    #[arg(long, short = 'o', value_name = "FILE")]
    pub output: Option<String>,
}

/// The document's format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum DocFormatArg {
    /// One self-contained HTML page.
    Html,
    /// GitHub-flavoured Markdown, charts as SVG files beside it.
    Markdown,
    /// The numbers as runcal.digest/1.
    Json,
}

impl From<DocFormatArg> for DocFormat {
    fn from(f: DocFormatArg) -> DocFormat {
        match f {
            DocFormatArg::Html => DocFormat::Html,
            DocFormatArg::Markdown => DocFormat::Markdown,
            DocFormatArg::Json => DocFormat::Json,
        }
    }
}

/// Where the document and its chart files go: (directory prefix, file stem).
fn placement(output: Option<&str>) -> (String, String) {
    let Some(out) = output else {
        return (String::new(), "digest".to_string());
    };
    let path = std::path::Path::new(out);
    let stem = path
        .file_stem()
        .map_or("digest".into(), |s| s.to_string_lossy().into_owned());
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => format!("{}/", d.display()),
        _ => String::new(),
    };
    (dir, stem)
}

fn require_regular_files(files: &[String]) -> Result<(), Error> {
    for f in files {
        // A missing file is left to the loader, which names it.
        let not_regular = std::fs::metadata(f).is_ok_and(|m| !m.is_file());
        if f == "-" || not_regular {
            return Err(Error::Usage(format!(
                "{f}: runcal digest reads each game log once per date; give a regular file"
            )));
        }
    }
    Ok(())
}

/// The comparison date, after the checks that need no input read.
fn compare_date(args: &Args) -> Result<Date, Error> {
    let compare_to = args
        .compare_to
        .unwrap_or_else(|| runcal::data::gamelog::days_earlier(args.as_of, digest::WEEK));
    if compare_to >= args.as_of {
        return Err(Error::Usage(format!(
            "--compare-to {compare_to} must be earlier than --as-of {}",
            args.as_of
        )));
    }
    if args.format == DocFormatArg::Markdown && args.output.is_none() {
        return Err(Error::Usage(
            "--format markdown writes its charts beside the document: give --output FILE.md".into(),
        ));
    }
    require_regular_files(&args.files)?;
    Ok(compare_to)
}

/// The game logs read the way the calibration defines win% and weights.
fn input_of(args: &Args, profile: &Profile) -> InputArgs {
    InputArgs {
        files: args.files.clone(),
        games: true,
        maps: args.maps.clone(),
        seasons: None,
        league: args.league.clone(),
        ties: TiesArg::Half,
        weight: None,
        skip_invalid: args.skip_invalid,
        max_rows: 50_000_000,
        unit: args.unit,
        season_is: args.season_is,
        delimiter: args.delimiter,
        ot_losses: OtLossesArg::Losses,
    }
    .as_in_profile(profile)
}

pub fn run(args: &Args) -> Result<u8, Error> {
    let diag = Diagnostics {
        quiet: args.quiet,
        verbose: args.verbose,
    };
    let compare_to = compare_date(args)?;
    let (dir, stem) = placement(args.output.as_deref());
    let charts = ["luck", "outlook"].map(|c| format!("{dir}{stem}-{c}.svg"));
    let mut inputs = args.files.clone();
    inputs.push(args.profile.clone());
    inputs.extend(args.groups.clone());
    let outputs = [
        ("--output", args.output.as_ref()),
        ("a chart", Some(&charts[0])),
        ("a chart", Some(&charts[1])),
    ];
    super::guard_outputs(&outputs, &inputs)?;

    let settings = runcal::outlook::Settings {
        simulations: args.simulations,
        seed: 1,
        draw_strength: true,
        target_wins: None,
    };
    settings.validate()?;
    let profile = Profile::load(&args.profile)?;
    let input = input_of(args, &profile);
    let opts = input.load_options();
    if let Some(g) = &args.groups {
        runcal::data::schedule::require_regular(g)?;
    }
    let groups = args
        .groups
        .as_deref()
        .map(|p| runcal::data::schedule::read_groups(p, &opts).map(|g| (p, g)))
        .transpose()?;
    let snapshot = |date: Date, diag: &Diagnostics| -> Result<Option<digest::Snapshot>, Error> {
        let (ds, table) = super::load_any(&input, Some(date), diag)?;
        if ds.rows.is_empty() {
            return Ok(None);
        }
        let mut snap = digest::snapshot(&ds, &table, &profile, date)?;
        // The first-place chances: `runcal outlook` on the same log as of the same date.
        let plan = runcal::data::schedule::read_plan(&args.files, &[], Some(date), &opts)?;
        let (outlook, _, _) = runcal::outlook::for_season(
            &ds.rows,
            &table,
            &profile.model(),
            &plan,
            groups.as_ref().map(|(p, g)| (*p, g)),
            None,
            Some(&profile),
            &settings,
        )?;
        snap.first_place = Some(digest::first_place_chances(&outlook));
        Ok(Some(snap))
    };
    let current = snapshot(args.as_of, &diag)?.ok_or_else(|| {
        let files = args.files.join(", ");
        Error::Usage(format!("no games on or before {} in {files}", args.as_of))
    })?;
    super::mismatch(&current.mismatch, args.fail_on_mismatch, &diag)?;
    super::say(&diag, &current.settings.notes, &current.settings.warnings);
    // The earlier date's rows are a subset of these: its rejections were reported just now.
    let quiet = Diagnostics {
        quiet: true,
        verbose: false,
    };
    let previous = snapshot(compare_to, &quiet)?;
    let sources = digest::sources(&args.files)?;
    let calibration = Calibration::of(&profile, &args.profile);
    let d = digest::assemble(calibration, sources, current, compare_to, previous);
    let doc = document::render(&d, args.format.into(), &stem, args.unit.into())?;
    let inputs: Vec<&str> = inputs.iter().map(String::as_str).collect();
    for (name, bytes) in &doc.files {
        runcal::output::write_atomic(&format!("{dir}{name}"), bytes)?;
        diag.note(&format!("wrote {dir}{name}"));
    }
    runcal::output::emit(args.output.as_deref(), &inputs, &doc.main)?;
    Ok(0)
}
