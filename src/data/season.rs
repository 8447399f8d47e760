//! Team-season tables: one row per team-season.

use super::roles::{self, RoleSpec};
use super::{Dataset, LoadOptions, OtLosses, TeamSeason, input, parse_count, parse_runs};
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
const OT_LOSSES: usize = 9;

/// Decisions beyond the games played that a genuine record can hold: a forfeit counts in the
/// standings without a game played. The Baseball Databank (tests/data) has 8 such team-seasons in
/// 2,955, none more than 2 over (1884 CNU: 105 decisions in 103 games; 1979 CHA: 160 in 159).
const FORFEIT_ALLOWANCE: u64 = 2;

/// The roles of a team-season table and the generic trade aliases that claim them (compared with
/// case and punctuation ignored: `PointsFor`, `Points For` and `points_for` are one header).
pub const ROLES: &[RoleSpec] = &[
    RoleSpec {
        name: "season",
        aliases: &["season", "year", "yr", "season_id", "year_id"],
        fallbacks: &[],
        // A file without one is one season (`LoadOptions::season_is`, or its place in the list).
        required: false,
    },
    RoleSpec {
        name: "league",
        aliases: &["league", "lg", "league_id", "lg_id", "conference"],
        fallbacks: &[],
        required: false,
    },
    RoleSpec {
        name: "team",
        aliases: &["team", "club", "team_id", "team_name", "tm", "squad"],
        fallbacks: &["name", "franchise", "franchise_name", "club_name"],
        required: true,
    },
    RoleSpec {
        name: "wins",
        aliases: &["wins", "w", "won"],
        fallbacks: &[],
        required: true,
    },
    RoleSpec {
        name: "losses",
        aliases: &["losses", "l", "lost"],
        fallbacks: &[],
        required: true,
    },
    RoleSpec {
        name: "ties",
        aliases: &["ties", "t", "draws", "d", "tied", "drawn"],
        fallbacks: &[],
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
            "pts_for",
            "pts_scored",
        ],
        // Not `points` or `pts`: in hockey and football standings those are standings points.
        fallbacks: &["runs", "goals", "scored", "for"],
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
            "pts_against",
            "pts_allowed",
            "runs_conceded",
            "points_conceded",
            "goals_conceded",
            "opponents_runs_scored",
            "opponents_points_scored",
            "opponents_goals_scored",
            "opp_runs_scored",
            "opp_points_scored",
            "opp_goals_scored",
            "opp_runs",
            "opp_points",
            "opp_pts",
            "opp_goals",
            "opp_score",
            "opp_rs",
            "opp_pf",
            "opp_gf",
            "opponent_runs",
            "opponent_points",
            "opponent_goals",
            "opponents_runs",
            "opponents_points",
            "opponents_goals",
        ],
        fallbacks: &["allowed", "against", "conceded"],
        required: true,
    },
    RoleSpec {
        name: "games",
        aliases: &["games", "g", "gp", "games_played", "played", "pld"],
        fallbacks: &[],
        required: false,
    },
    RoleSpec {
        name: "ot_losses",
        aliases: &[
            "ot_losses",
            "otl",
            "overtime_losses",
            "ol",
            "sol",
            "shootout_losses",
            "ot_shootout_losses",
        ],
        fallbacks: &[],
        required: false,
    },
];

pub fn load(paths: &[String], opts: &LoadOptions) -> Result<Dataset, DataError> {
    roles::check_mappings(ROLES, &opts.maps)?;
    let mut ds = Dataset::default();
    // Files without a season column (each is one season), and files with an overtime-loss one.
    let mut one_season: Vec<(String, i32)> = Vec::new();
    let mut with_ot_losses = false;
    for (k, path) in paths.iter().enumerate() {
        let place = i32::try_from(k + 1).unwrap_or(i32::MAX);
        let read = load_one(path, place, opts, &mut ds)?;
        if let Some(season) = read.season {
            one_season.push((input::display_name(path), season));
        }
        with_ot_losses |= read.ot_losses;
    }
    if !one_season.is_empty() && opts.season_is.is_none() {
        let files: Vec<String> = one_season.iter().map(|(f, _)| input::shown(f)).collect();
        let numbers: Vec<String> = one_season.iter().map(|(_, s)| s.to_string()).collect();
        ds.notes.push(if files.len() == 1 {
            format!(
                "{} has no season column: its rows are read as one season, season {}; give its year with --season-is YEAR",
                files[0], numbers[0]
            )
        } else {
            format!(
                "{} have no season column: each file is read as one season, numbered by its place on the command line ({}); give one year for all of them with --season-is YEAR",
                files.join(", "),
                numbers.join(", ")
            )
        });
    }
    if opts.ot_losses != OtLosses::Losses && !with_ot_losses {
        ds.warnings.push(format!(
            "--ot-losses has nothing to act on: no input has an overtime-loss column (looked for {})",
            ROLES[OT_LOSSES].aliases.join(", ")
        ));
    }
    ds.finish(opts.skip_invalid)?;
    Ok(ds)
}

/// What one file was found to hold besides its rows.
struct FileRead {
    /// The season given to every row, when the file has no season column.
    season: Option<i32>,
    ot_losses: bool,
}

/// Read one file, number `place` (from 1) of the list.
fn load_one(
    path: &str,
    place: i32,
    opts: &LoadOptions,
    ds: &mut Dataset,
) -> Result<FileRead, DataError> {
    let file = input::display_name(path);
    // Fields are trimmed in `parse_row`, not by csv, so that `record_line` sees every newline.
    let (mut rdr, headers) = input::open_with_headers(path, &file, opts)?;
    let map = roles::resolve(&file, &headers, ROLES, &opts.maps).map_err(|e| {
        roles::hint_missing(e, || {
            roles::resolve(&file, &headers, super::gamelog::ROLES, &[])
                .is_ok()
                .then(|| {
                    "; the headers look like a game log (one row per game): add --games".to_string()
                })
        })
    })?;
    super::check_season_is(&file, &map, SEASON, opts)?;
    let reading = Reading {
        file: &file,
        map: &map,
        season: match map.index[SEASON] {
            Some(_) => None,
            None => Some(opts.season_is.unwrap_or(place)),
        },
        ot_losses: opts.ot_losses,
    };
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
        input::count_row(&mut count, &file, opts)?;
        let line = input::record_line(start, rdr.position().line(), &record);
        if let Some(e) = row_error {
            ds.reject(opts.skip_invalid, input::row_error(&file, e, line, &record))?;
            continue;
        }
        match reading.row(Some(line), &record) {
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
    Ok(FileRead {
        season: reading.season,
        ot_losses: map.index[OT_LOSSES].is_some(),
    })
}

/// How the rows of one file are read.
struct Reading<'a> {
    file: &'a str,
    map: &'a roles::ColumnMap,
    /// Every row's season, when the file has no season column.
    season: Option<i32>,
    ot_losses: OtLosses,
}

impl Reading<'_> {
    fn row(&self, line: Option<u64>, record: &csv::ByteRecord) -> Result<TeamSeason, Rejection> {
        parse_row(self, line, record)
    }
}

fn parse_row(
    reading: &Reading<'_>,
    line: Option<u64>,
    record: &csv::ByteRecord,
) -> Result<TeamSeason, Rejection> {
    let (file, map) = (reading.file, reading.map);
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
    let season: i32 = match reading.season {
        Some(season) => season,
        None => {
            let season_text = required(SEASON)?;
            season_text.parse().map_err(|_| {
                fail(
                    SEASON,
                    format!(
                        "expected a season (a whole number), found '{}'",
                        input::shown(season_text)
                    ),
                )
            })?
        }
    };
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
    // Ties and overtime losses may be left empty (none), as standings often print them.
    let optional_count = |role: usize| -> Result<u64, Rejection> {
        match map.index[role] {
            Some(_) => {
                let t = required(role)?;
                if t.is_empty() {
                    Ok(0)
                } else {
                    parse_count(t).map_err(|e| fail(role, input::shown(&e)))
                }
            }
            None => Ok(0),
        }
    };
    let ties = optional_count(TIES)?;
    let ot_losses = optional_count(OT_LOSSES)?;
    // Everything the record holds, whatever the policy: the games column must cover it.
    let results = wins + losses + ties + ot_losses;
    let (losses, ties, ot_left_out) = match reading.ot_losses {
        OtLosses::Losses => (losses + ot_losses, ties, 0),
        OtLosses::Half => (losses, ties + ot_losses, 0),
        OtLosses::LeaveOut => (losses, ties, ot_losses),
    };
    let runs = |role: usize| -> Result<f64, Rejection> {
        parse_runs(required(role)?).map_err(|e| fail(role, input::shown(&e)))
    };
    let (runs_scored, runs_allowed) = (runs(RUNS_SCORED)?, runs(RUNS_ALLOWED)?);
    let decisions = wins + losses + ties;
    if decisions == 0 {
        let reason = if ot_left_out > 0 {
            "W+L+T is 0 once the overtime losses are left out (--ot-losses leave-out): the team has no games to judge"
        } else {
            "W+L+T is 0: the team has no games to judge"
        };
        return Err(fail(WINS, reason.to_string()));
    }
    if runs_scored == 0.0 && runs_allowed == 0.0 {
        return Err(fail(
            RUNS_SCORED,
            "runs scored and runs allowed are both 0".to_string(),
        ));
    }
    let record = if map.index[OT_LOSSES].is_some() {
        "W+L+T+OTL"
    } else {
        "W+L+T"
    };
    let games = match map.index[GAMES] {
        Some(_) => {
            let g = count(GAMES)?;
            if g == 0 {
                return Err(fail(GAMES, format!("games is 0 but {record} is {results}")));
            }
            if results > g + FORFEIT_ALLOWANCE {
                return Err(fail(
                    GAMES,
                    format!(
                        "{record} is {results}, more decisions than the {g} games played (by more than the {FORFEIT_ALLOWANCE} that forfeits explain)"
                    ),
                ));
            }
            if ot_left_out == 0 {
                g
            } else {
                // Games left out leave the games played too (their runs cannot be told apart).
                g.saturating_sub(ot_left_out).max(decisions)
            }
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
