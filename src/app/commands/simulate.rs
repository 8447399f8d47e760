//! `runcal simulate`: a synthetic league with a known exponent, as team-seasons or a game log.

use std::io::Write;

use crate::app::args::FormatArg as Format;
use runcal::error::Error;
use runcal::model::Model;
use runcal::report::SimulateReport;
use runcal::report::csv::safe;
use runcal::simulate::{self, Design};

/// Simulate a league with a known exponent.
///
/// Scores are independent Weibull draws (Miller 2007), so the Pythagorean form holds with exponent =
/// the Weibull shape; with --truth, team-seasons whose wins follow a given model exactly. Use it to
/// test how many seasons pin an exponent down.
///
/// Example:
///   runcal simulate --teams 14 --seasons 25 --games 140 --exponent 1.83 --seed 7 --out league.csv
///   runcal simulate --teams 30 --seasons 1 --games 162 --exponent 1.8 --seed 1 --game-log
#[derive(Debug, clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Number of clubs (even).
    #[arg(long, default_value_t = 14, value_name = "N")]
    pub teams: usize,
    /// Number of seasons.
    #[arg(long, default_value_t = 20, value_name = "S")]
    pub seasons: usize,
    /// Games per team per season.
    #[arg(long, default_value_t = 140, value_name = "G")]
    pub games: usize,
    /// Weibull shape of the scores: the Pythagorean exponent of the league.
    #[arg(
        long,
        default_value_t = 1.83,
        value_name = "X",
        allow_negative_numbers = true
    )]
    pub exponent: f64,
    /// Random seed (the same seed gives the same file).
    #[arg(long, default_value_t = 1, value_name = "S")]
    pub seed: u64,
    /// Mean runs per team per game.
    #[arg(
        long,
        default_value_t = 4.5,
        value_name = "R",
        allow_negative_numbers = true
    )]
    pub runs_per_game: f64,
    /// Spread of team strength: standard deviation of ln(offence) and ln(defence).
    #[arg(
        long,
        default_value_t = 0.08,
        value_name = "SD",
        allow_negative_numbers = true
    )]
    pub talent_sd: f64,
    /// The first season's year.
    #[arg(
        long,
        default_value_t = 2001,
        value_name = "YEAR",
        allow_negative_numbers = true
    )]
    pub first_season: i32,
    /// League name written in the league column.
    #[arg(long, default_value = "Meridian League", value_name = "NAME")]
    pub league: String,
    /// Write one row per game instead of one per team-season.
    #[arg(long)]
    pub game_log: bool,
    /// Instead of Weibull games: binomial team-seasons whose expected win% is exactly this model.
    #[arg(long, value_name = "MODEL:PARAMS", conflicts_with = "game_log")]
    pub truth: Option<Model>,
    /// With --truth: each season's runs per game (both teams) is drawn uniformly from this range.
    #[arg(long, default_value = "6-12", value_name = "LO-HI", value_parser = parse_range)]
    pub rpg_range: (f64, f64),
    /// Write to FILE instead of stdout (atomically for a regular file; through a symbolic link the
    /// file it names is replaced and the link kept; a device or FIFO is written in place).
    #[arg(long, alias = "output", short = 'o', value_name = "FILE")]
    pub out: Option<String>,
    /// csv (the data), json, or table (a readable listing of team-seasons).
    #[arg(long, value_enum, default_value_t = Format::Csv)]
    pub format: Format,
    /// Print nothing on stderr.
    #[arg(long, short = 'q')]
    pub quiet: bool,
}

fn parse_range(s: &str) -> Result<(f64, f64), String> {
    let bad = || format!("expected a range like 6-12, got '{s}'");
    let (a, b) = s.split_once('-').ok_or_else(bad)?;
    let lo: f64 = a.trim().parse().map_err(|_| bad())?;
    let hi: f64 = b.trim().parse().map_err(|_| bad())?;
    if !(lo.is_finite() && hi.is_finite()) {
        return Err(format!("the range needs finite bounds, got '{s}'"));
    }
    Ok((lo, hi))
}

fn write_err(file: &str) -> impl Fn(std::io::Error) -> Error + '_ {
    move |source| Error::Write {
        file: file.to_string(),
        source,
    }
}

pub fn run(args: &Args) -> Result<u8, Error> {
    let design = Design {
        teams: args.teams,
        seasons: args.seasons,
        games: args.games,
        shape: args.exponent,
        runs_per_game: args.runs_per_game,
        talent_sd: args.talent_sd,
        first_season: args.first_season,
        league: args.league.clone(),
        seed: args.seed,
    };
    if args.game_log && args.format != Format::Csv {
        return Err(Error::Usage(
            "--game-log writes CSV only (use --format csv)".to_string(),
        ));
    }
    // Every size and parameter is checked before a file is opened.
    match &args.truth {
        Some(_) => design.validate_common(),
        None => design.validate(),
    }
    .map_err(Error::Usage)?;
    match &args.out {
        Some(path) => {
            runcal::output::check_outputs(&[("--out", path)], &[])?;
            // Streamed into a temporary file beside the target, renamed into place only when complete.
            let file = runcal::output::OutputFile::create(path)?;
            let mut w = std::io::BufWriter::with_capacity(1 << 20, file);
            match write_league(&mut w, &design, args, path) {
                Err(Error::Write { source, .. }) if is_closed(&source) => return Ok(0),
                r => r?,
            }
            let file = w
                .into_inner()
                .map_err(|e| write_err(path)(e.into_error()))?;
            file.commit()?;
            if !args.quiet {
                runcal::output::stderr_line(&format!("note: wrote {path}"));
            }
        }
        None => {
            let mut w = std::io::BufWriter::with_capacity(1 << 20, std::io::stdout().lock());
            // A reader that stops early (`| head -1`) is the reader's choice: exit 0.
            match write_league(&mut w, &design, args, "<stdout>") {
                Err(Error::Write { source, .. }) if is_closed(&source) => return Ok(0),
                r => r?,
            }
            match w.flush() {
                Err(e) if !is_closed(&e) => return Err(write_err("<stdout>")(e)),
                _ => {}
            }
        }
    }
    Ok(0)
}

fn is_closed(e: &std::io::Error) -> bool {
    e.kind() == std::io::ErrorKind::BrokenPipe
}

fn write_league(w: &mut impl Write, design: &Design, args: &Args, name: &str) -> Result<(), Error> {
    if args.game_log {
        design.validate().map_err(Error::Usage)?;
        let names: Vec<String> = (0..design.teams)
            .map(|i| safe(&simulate::club_name(i)).into_owned())
            .collect();
        let league = safe(&design.league).into_owned();
        writeln!(w, "season,league,date,home,away,home_score,away_score")
            .map_err(write_err(name))?;
        let mut failure: Option<std::io::Error> = None;
        simulate::games(design, |g| {
            if failure.is_none()
                && let Err(e) = writeln!(
                    w,
                    "{},{},{},{},{},{},{}",
                    g.season,
                    league,
                    g.date,
                    names[g.home],
                    names[g.away],
                    g.home_score,
                    g.away_score
                )
            {
                failure = Some(e);
            }
        })
        .map_err(Error::Usage)?;
        if let Some(e) = failure {
            return Err(write_err(name)(e));
        }
        return Ok(());
    }
    let rows = match &args.truth {
        Some(m) => simulate::truth_seasons(design, m, args.rpg_range),
        None => simulate::seasons(design),
    }
    .map_err(Error::Usage)?;
    let report = SimulateReport { design, rows };
    let bytes = runcal::report::render(&report, args.format.into())?;
    w.write_all(&bytes).map_err(write_err(name))
}
