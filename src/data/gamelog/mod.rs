//! Game logs: one row per game, checked and summed into team-season rows while the input streams
//! by. Memory grows with the number of team-seasons and names, plus the games of recent dates the
//! duplicate check holds (a budget, `LoadOptions::max_held_games`), not with the length of the log.
//!
//! - `date`: ISO dates through jiff
//! - `row`: one record checked and turned into a game (or a rejection)
//! - `names`: team and league names, interned once, in NFC, bounded in number
//! - `duplicates`: the same game twice, within and across files, in bounded memory
//! - `pipeline`: csv records in batches, parsed on one thread and summed on another
//! - `standings`: team-season sums per file, the merge over files, the sorted rows
//! - `file`: one file's pass through all of the above

mod date;
mod duplicates;
mod file;
mod names;
mod pipeline;
mod row;
mod standings;

pub use date::{Date, days_earlier, parse_as_of, parse_iso_date};

use super::{
    Dataset, LoadOptions, input,
    roles::{self, RoleSpec},
};
use crate::error::{DataError, Rejection};
use duplicates::DuplicateCheck;
use file::{Pass, Stop};
use names::Names;
use standings::Standings;

const DATE: usize = 0;
const HOME: usize = 1;
const AWAY: usize = 2;
const HOME_SCORE: usize = 3;
const AWAY_SCORE: usize = 4;
const SEASON: usize = 5;
const LEAGUE: usize = 6;
const GAME: usize = 7;

/// The roles of a game log and the generic aliases that claim them.
pub const ROLES: &[RoleSpec] = &[
    RoleSpec {
        name: "date",
        aliases: &["date", "game_date", "day", "match_date"],
        fallbacks: &[],
        required: true,
    },
    RoleSpec {
        name: "home",
        aliases: &["home", "home_team", "host", "home_club"],
        fallbacks: &[],
        required: true,
    },
    RoleSpec {
        name: "away",
        aliases: &[
            "away",
            "away_team",
            "visitor",
            "visitors",
            "road",
            "visiting_team",
            "visitor_team",
            "away_club",
        ],
        fallbacks: &[],
        required: true,
    },
    RoleSpec {
        name: "home_score",
        aliases: &[
            "home_score",
            "home_runs",
            "home_points",
            "home_goals",
            "home_pts",
        ],
        fallbacks: &[],
        required: true,
    },
    RoleSpec {
        name: "away_score",
        aliases: &[
            "away_score",
            "away_runs",
            "away_points",
            "away_goals",
            "away_pts",
            "visitor_score",
            "visitor_runs",
            "visitor_points",
            "visitor_goals",
            "visitor_pts",
        ],
        fallbacks: &[],
        required: true,
    },
    RoleSpec {
        name: "season",
        aliases: &["season", "year", "season_id", "year_id"],
        fallbacks: &[],
        required: false,
    },
    RoleSpec {
        name: "league",
        aliases: &["league", "lg", "league_id", "lg_id"],
        fallbacks: &[],
        required: false,
    },
    RoleSpec {
        name: "game",
        aliases: &["game", "game_number", "game_no", "game_num"],
        fallbacks: &[],
        required: false,
    },
];

/// Read game logs into team-season rows.
///
/// The duplicate check holds `opts.max_held_games` games of earlier dates. A date that comes back
/// after its games were let go makes regular files be read again with every game held; any other
/// input (a pipe, standard input), which cannot be read twice, is refused with advice.
pub fn load(paths: &[String], opts: &LoadOptions) -> Result<Dataset, DataError> {
    roles::check_mappings(ROLES, &opts.maps)?;
    let files: Vec<String> = paths.iter().map(|p| input::display_name(p)).collect();
    match load_holding(paths, &files, opts, opts.max_held_games) {
        Ok(ds) => Ok(ds),
        Err(Stop::Data(e)) => Err(e),
        Err(Stop::DateLetGo(_)) if paths.iter().all(|p| input::is_regular_file(p)) => {
            match load_holding(paths, &files, opts, usize::MAX) {
                Ok(ds) => Ok(ds),
                Err(Stop::Data(e)) => Err(e),
                Err(Stop::DateLetGo(at)) => Err(DataError::Rejected(Rejection {
                    at,
                    reason: "the duplicate check lost a date while holding every game".to_string(),
                })),
            }
        }
        Err(Stop::DateLetGo(at)) => Err(DataError::Rejected(Rejection {
            at,
            reason: format!(
                "this date comes back after more than {} later games, which is further back than \
                 the duplicate check holds for input that cannot be read twice; sort the game log \
                 by date (and give overlapping files in date order), or pass regular files",
                opts.max_held_games
            ),
        })),
    }
}

fn load_holding(
    paths: &[String],
    files: &[String],
    opts: &LoadOptions,
    held_games: usize,
) -> Result<Dataset, Stop> {
    let mut names = Names::new(opts.max_names);
    let mut duplicates = DuplicateCheck::new(held_games);
    let mut standings = Standings::default();
    let mut ds = Dataset::default();
    for (file_no, path) in paths.iter().enumerate() {
        let pass = Pass {
            opts,
            files,
            names: &mut names,
            duplicates: &mut duplicates,
        };
        let totals = file::aggregate(path, file_no, pass)?;
        ds.filtered_out += totals.outside_seasons + totals.outside_league;
        ds.filtered_by_league += totals.outside_league;
        ds.unplayed_games += totals.unplayed;
        ds.after_as_of += totals.after_as_of;
        ds.last_played = ds.last_played.max(totals.last_played);
        ds.rejected.extend(totals.rejected);
        ds.warnings.extend(totals.warnings);
        standings.merge(totals.records, file_no, files)?;
    }
    drop(duplicates);
    ds.rows = standings.into_rows(&names, files, opts.skip_invalid, &mut ds)?;
    ds.finish(opts.skip_invalid)?;
    Ok(ds)
}
