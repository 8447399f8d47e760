//! Team-season tables: one row per team-season.

use super::roles::{self, RoleSpec};
use super::{Dataset, LoadOptions, TeamSeason, input, parse_count, parse_runs};
use crate::error::{DataError, Location, Rejection};

const SEASON: usize = 0;
const LEAGUE: usize = 1;
const TEAM: usize = 2;
const WINS: usize = 3;
const LOSSES: usize = 4;
const TIES: usize = 5;
const RUNS_SCORED: usize = 6;
const RUNS_ALLOWED: usize = 7;
const GAMES: usize = 8;

/// Decisions beyond the games played that a genuine record can hold: a forfeit counts in the
/// standings without a game played. The Baseball Databank (tests/data) has 8 such team-seasons in
/// 2,955, none more than 2 over (1884 CNU: 105 decisions in 103 games; 1979 CHA: 160 in 159).
const FORFEIT_ALLOWANCE: u64 = 2;

/// The roles of a team-season table and the generic trade aliases that claim them.
pub const ROLES: &[RoleSpec] = &[
    RoleSpec {
        name: "season",
        aliases: &["season", "year", "yr", "season_id"],
        required: true,
    },
    RoleSpec {
        name: "league",
        aliases: &["league", "lg", "league_id", "conference"],
        required: false,
    },
    RoleSpec {
        name: "team",
        aliases: &["team", "club", "team_id", "team_name", "tm"],
        required: true,
    },
    RoleSpec {
        name: "wins",
        aliases: &["wins", "w", "won"],
        required: true,
    },
    RoleSpec {
        name: "losses",
        aliases: &["losses", "l", "lost"],
        required: true,
    },
    RoleSpec {
        name: "ties",
        aliases: &["ties", "t", "draws", "d", "tied"],
        required: false,
    },
    RoleSpec {
        name: "runs_scored",
        aliases: &[
            "runs_scored",
            "rs",
            "pf",
            "gf",
            "points_for",
            "goals_for",
            "runs_for",
            "points_scored",
            "goals_scored",
        ],
        required: true,
    },
    RoleSpec {
        name: "runs_allowed",
        aliases: &[
            "runs_allowed",
            "ra",
            "pa",
            "ga",
            "points_against",
            "goals_against",
            "runs_against",
            "points_allowed",
            "goals_allowed",
        ],
        required: true,
    },
    RoleSpec {
        name: "games",
        aliases: &["games", "g", "gp", "games_played"],
        required: false,
    },
];

pub fn load(paths: &[String], opts: &LoadOptions) -> Result<Dataset, DataError> {
    roles::check_mappings(ROLES, &opts.maps)?;
    let mut ds = Dataset::default();
    for path in paths {
        load_one(path, opts, &mut ds)?;
    }
    ds.finish(opts.skip_invalid)?;
    Ok(ds)
}

fn load_one(path: &str, opts: &LoadOptions, ds: &mut Dataset) -> Result<(), DataError> {
    let file = input::display_name(path);
    let reader = input::open(path, opts.max_line_bytes, opts.max_field_bytes)?;
    // Fields are trimmed in `parse_row`, not by csv, so that `record_line` sees every newline.
    let mut rdr = csv::ReaderBuilder::new()
        .flexible(false)
        .from_reader(reader);
    let headers = input::read_headers(&mut rdr, &file)?;
    let map = roles::resolve(&file, &headers, ROLES, &opts.maps)?;
    let mut record = csv::ByteRecord::new();
    let mut count: u64 = 0;
    loop {
        let start = rdr.position().line();
        let read = rdr.read_byte_record(&mut record);
        let row_error = match read {
            Ok(false) => break,
            Ok(true) => None,
            Err(e) if input::is_row_error(&e) => Some(e),
            Err(e) => return Err(input::csv_error(&file, e)),
        };
        count += 1;
        if count > opts.max_rows {
            return Err(DataError::TooManyRows {
                file,
                limit: opts.max_rows,
            });
        }
        let line = input::record_line(start, rdr.position().line(), &record);
        if let Some(e) = row_error {
            ds.reject(opts.skip_invalid, input::row_error(&file, e, line, &record))?;
            continue;
        }
        let line = Some(line);
        match parse_row(&file, line, &map, &record) {
            Ok(row) => match opts.left_out_by(row.season, row.league.as_deref()) {
                None => ds.rows.push(row),
                Some(filter) => {
                    ds.filtered_out += 1;
                    ds.filtered_by_league += u64::from(filter == super::Filter::League);
                }
            },
            Err(r) => ds.reject(opts.skip_invalid, r)?,
        }
    }
    Ok(())
}

fn parse_row(
    file: &str,
    line: Option<u64>,
    map: &roles::ColumnMap,
    record: &csv::ByteRecord,
) -> Result<TeamSeason, Rejection> {
    let fail = |role: usize, reason: String| Rejection {
        at: Location {
            file: file.to_string(),
            line,
            column: map.header_of(role).map(str::to_string),
        },
        reason,
    };
    let text = |role: usize| -> Result<Option<&str>, Rejection> {
        match map.index[role] {
            None => Ok(None),
            Some(i) => {
                let bytes = record.get(i).unwrap_or_default();
                std::str::from_utf8(bytes)
                    .map(|s| Some(s.trim()))
                    .map_err(|_| fail(role, "not valid UTF-8".to_string()))
            }
        }
    };
    let required = |role: usize| -> Result<&str, Rejection> { Ok(text(role)?.unwrap_or_default()) };
    let count = |role: usize| -> Result<u64, Rejection> {
        parse_count(required(role)?).map_err(|e| fail(role, input::shown(&e)))
    };
    let season_text = required(SEASON)?;
    let season: i32 = season_text.parse().map_err(|_| {
        fail(
            SEASON,
            format!(
                "expected a season (a whole number), found '{}'",
                input::shown(season_text)
            ),
        )
    })?;
    let league = text(LEAGUE)?.filter(|s| !s.is_empty()).map(str::to_string);
    let team = required(TEAM)?;
    if team.is_empty() {
        return Err(fail(TEAM, "the team name is empty".to_string()));
    }
    let team = printable_nfc(team).map_err(|e| fail(TEAM, e))?;
    let league = match league {
        Some(l) => Some(printable_nfc(&l).map_err(|e| fail(LEAGUE, e))?),
        None => None,
    };
    let wins = count(WINS)?;
    let losses = count(LOSSES)?;
    let ties = match map.index[TIES] {
        Some(_) => {
            let t = required(TIES)?;
            if t.is_empty() {
                0
            } else {
                parse_count(t).map_err(|e| fail(TIES, input::shown(&e)))?
            }
        }
        None => 0,
    };
    let runs = |role: usize| -> Result<f64, Rejection> {
        parse_runs(required(role)?).map_err(|e| fail(role, input::shown(&e)))
    };
    let (runs_scored, runs_allowed) = (runs(RUNS_SCORED)?, runs(RUNS_ALLOWED)?);
    let decisions = wins + losses + ties;
    if decisions == 0 {
        return Err(fail(
            WINS,
            "W+L+T is 0: the team has no games to judge".to_string(),
        ));
    }
    if runs_scored == 0.0 && runs_allowed == 0.0 {
        return Err(fail(
            RUNS_SCORED,
            "runs scored and runs allowed are both 0".to_string(),
        ));
    }
    let games = match map.index[GAMES] {
        Some(_) => {
            let g = count(GAMES)?;
            if g == 0 {
                return Err(fail(GAMES, format!("games is 0 but W+L+T is {decisions}")));
            }
            if decisions > g + FORFEIT_ALLOWANCE {
                return Err(fail(
                    GAMES,
                    format!(
                        "W+L+T is {decisions}, more decisions than the {g} games played (by more than the {FORFEIT_ALLOWANCE} that forfeits explain)"
                    ),
                ));
            }
            g
        }
        None => decisions,
    };
    Ok(TeamSeason {
        season,
        league,
        team,
        wins,
        losses,
        ties,
        runs_scored,
        runs_allowed,
        games,
        one_run: None,
        at: Location {
            file: file.to_string(),
            line,
            column: None,
        },
    })
}

/// A name as stored: refused when it holds a control character (shown escaped), else in NFC so
/// that two spellings of one name are one team.
fn printable_nfc(name: &str) -> Result<String, String> {
    use unicode_normalization::UnicodeNormalization;
    if let Some(reason) = input::control_character(name) {
        return Err(reason);
    }
    Ok(if name.is_ascii() {
        name.to_string()
    } else {
        name.nfc().collect()
    })
}
