//! Game logs: one row per game, aggregated while streaming into team-season rows, so memory
//! grows with the number of teams, not games.

use std::collections::{HashMap, HashSet};

use super::roles::{self, RoleSpec};
use super::{Dataset, LoadOptions, TeamSeason, input, parse_count};
use crate::error::{DataError, Location, Rejection};

/// A calendar date (ISO 8601 `YYYY-MM-DD`), ordered by time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Date {
    pub year: i32,
    pub month: u8,
    pub day: u8,
}

impl Date {
    /// Parse `YYYY-MM-DD`, checking the month and day (leap years included).
    pub fn parse(text: &[u8]) -> Option<Date> {
        if text.len() != 10 || text[4] != b'-' || text[7] != b'-' {
            return None;
        }
        let digits = |r: std::ops::Range<usize>| -> Option<u32> {
            text[r].iter().try_fold(0u32, |acc, &b| {
                b.is_ascii_digit().then(|| acc * 10 + u32::from(b - b'0'))
            })
        };
        let year = digits(0..4)? as i32;
        let month = digits(5..7)? as u8;
        let day = digits(8..10)? as u8;
        if !(1..=12).contains(&month) || day == 0 || day > days_in_month(year, month) {
            return None;
        }
        Some(Date { year, month, day })
    }

    fn packed(self) -> u32 {
        (self.year as u32) << 9 | u32::from(self.month) << 5 | u32::from(self.day)
    }
}

impl std::str::FromStr for Date {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Date::parse(s.trim().as_bytes())
            .ok_or_else(|| format!("expected an ISO 8601 date (YYYY-MM-DD), got '{s}'"))
    }
}

impl std::fmt::Display for Date {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.year, self.month, self.day)
    }
}

fn days_in_month(year: i32, month: u8) -> u8 {
    match month {
        4 | 6 | 9 | 11 => 30,
        2 if (year % 4 == 0 && year % 100 != 0) || year % 400 == 0 => 29,
        2 => 28,
        _ => 31,
    }
}

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
        aliases: &["date", "game_date", "day"],
        required: true,
    },
    RoleSpec {
        name: "home",
        aliases: &["home", "home_team", "host"],
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
        ],
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
        ],
        required: true,
    },
    RoleSpec {
        name: "season",
        aliases: &["season", "year"],
        required: false,
    },
    RoleSpec {
        name: "league",
        aliases: &["league", "lg"],
        required: false,
    },
    RoleSpec {
        name: "game",
        aliases: &["game", "game_number", "game_no"],
        required: false,
    },
];

#[derive(Debug, Clone, Default)]
struct Record {
    games: u64,
    wins: u64,
    losses: u64,
    ties: u64,
    runs_scored: u64,
    runs_allowed: u64,
    one_run_wins: u64,
    one_run_losses: u64,
    first_line: u64,
}

/// Names seen in one file, each stored once.
#[derive(Default)]
struct Interner {
    ids: HashMap<Box<[u8]>, u32>,
    names: Vec<String>,
}

impl Interner {
    fn id(&mut self, name: &[u8]) -> Result<u32, ()> {
        if let Some(&id) = self.ids.get(name) {
            return Ok(id);
        }
        let text = std::str::from_utf8(name).map_err(|_| ())?;
        let id = self.names.len() as u32;
        self.names.push(text.to_string());
        self.ids.insert(name.into(), id);
        Ok(id)
    }
}

/// The aggregation of one file.
#[derive(Default)]
struct FileTotals {
    teams: Interner,
    leagues: Interner,
    records: HashMap<(i32, u32, u32), Record>,
    rejected: Vec<Rejection>,
    filtered_out: u64,
}

enum Pass {
    Done(Box<FileTotals>),
    /// Dates went backwards: a rolling duplicate check cannot see every earlier game.
    OutOfOrder,
}

fn trim(bytes: &[u8]) -> &[u8] {
    bytes.trim_ascii()
}

pub fn load(
    paths: &[String],
    as_of: Option<Date>,
    opts: &LoadOptions,
) -> Result<Dataset, DataError> {
    roles::check_mappings(ROLES, &opts.maps)?;
    let mut merged: HashMap<(i32, Option<String>, String), (Record, String)> = HashMap::new();
    let mut ds = Dataset::default();
    for path in paths {
        let file = input::display_name(path);
        // Standard input cannot be read twice, so it keeps every game key from the start.
        let totals = match aggregate(path, &file, as_of, opts, path == "-")? {
            Pass::Done(t) => t,
            Pass::OutOfOrder => match aggregate(path, &file, as_of, opts, true)? {
                Pass::Done(t) => t,
                Pass::OutOfOrder => unreachable!("a global duplicate check never restarts"),
            },
        };
        ds.filtered_out += totals.filtered_out;
        ds.rejected.extend(totals.rejected);
        for ((season, league, team), rec) in totals.records {
            let league_name = (totals.leagues.names[league as usize].as_str() != "")
                .then(|| totals.leagues.names[league as usize].clone());
            let key = (
                season,
                league_name,
                totals.teams.names[team as usize].clone(),
            );
            let entry = merged.entry(key).or_insert_with(|| {
                (
                    Record {
                        first_line: rec.first_line,
                        ..Record::default()
                    },
                    file.clone(),
                )
            });
            let acc = &mut entry.0;
            acc.games += rec.games;
            acc.wins += rec.wins;
            acc.losses += rec.losses;
            acc.ties += rec.ties;
            let (Some(scored), Some(allowed)) = (
                acc.runs_scored.checked_add(rec.runs_scored),
                acc.runs_allowed.checked_add(rec.runs_allowed),
            ) else {
                return Err(DataError::Rejected(Rejection {
                    at: Location {
                        file: file.clone(),
                        line: Some(rec.first_line),
                        column: None,
                    },
                    reason: "the season's run totals over all files are too large to count"
                        .to_string(),
                }));
            };
            acc.runs_scored = scored;
            acc.runs_allowed = allowed;
            acc.one_run_wins += rec.one_run_wins;
            acc.one_run_losses += rec.one_run_losses;
        }
    }
    // In key order, so that rejections come out in the same order on every run.
    let mut merged: Vec<_> = merged.into_iter().collect();
    merged.sort_unstable_by(|a, b| a.0.cmp(&b.0));
    let mut rows: Vec<TeamSeason> = Vec::with_capacity(merged.len());
    for ((season, league, team), (rec, file)) in merged {
        let at = Location {
            file,
            line: Some(rec.first_line),
            column: None,
        };
        if rec.runs_scored == 0 && rec.runs_allowed == 0 {
            ds.reject(
                opts.skip_invalid,
                Rejection {
                    at,
                    reason: format!(
                        "{team} {season}: runs scored and runs allowed are both 0 in every game"
                    ),
                },
            )?;
            continue;
        }
        rows.push(TeamSeason {
            season,
            league,
            team,
            wins: rec.wins,
            losses: rec.losses,
            ties: rec.ties,
            runs_scored: rec.runs_scored as f64,
            runs_allowed: rec.runs_allowed as f64,
            games: rec.games,
            one_run: Some((rec.one_run_wins, rec.one_run_losses)),
            at,
        });
    }
    rows.sort_by(|a, b| (a.season, &a.league, &a.team).cmp(&(b.season, &b.league, &b.team)));
    ds.rows = rows;
    ds.finish(opts.skip_invalid)?;
    Ok(ds)
}

fn aggregate(
    path: &str,
    file: &str,
    as_of: Option<Date>,
    opts: &LoadOptions,
    global_keys: bool,
) -> Result<Pass, DataError> {
    let reader = input::open(path, opts.max_line_bytes)?;
    let mut rdr = csv::ReaderBuilder::new()
        .flexible(false)
        .from_reader(reader);
    let headers: Vec<String> = match rdr.byte_headers() {
        Ok(h) => h
            .iter()
            .map(|f| String::from_utf8_lossy(f).into_owned())
            .collect(),
        Err(e) => return Err(input::csv_error(file, e)),
    };
    if headers.is_empty() || (headers.len() == 1 && headers[0].trim().is_empty()) {
        return Err(DataError::Empty {
            file: file.to_string(),
        });
    }
    let map = roles::resolve(file, &headers, ROLES, &opts.maps)?;
    let col = |role: usize| map.index[role];
    let (date_col, home_col, away_col) = (col(DATE), col(HOME), col(AWAY));
    let (hs_col, as_col) = (col(HOME_SCORE), col(AWAY_SCORE));
    let mut totals = FileTotals::default();
    let no_league = totals.leagues.id(b"").unwrap_or(0);
    let mut record = csv::ByteRecord::new();
    let mut keys_today: HashSet<(u32, u32, u32)> = HashSet::new();
    let mut finished_dates: HashSet<u32> = HashSet::new();
    let mut today: Option<u32> = None;
    let mut first_line_of_key: HashMap<(u32, u32, u32, u32), u64> = HashMap::new();
    let mut count: u64 = 0;
    let reject = |totals: &mut FileTotals, r: Rejection| -> Result<(), DataError> {
        if opts.skip_invalid {
            totals.rejected.push(r);
            Ok(())
        } else {
            Err(DataError::Rejected(r))
        }
    };
    loop {
        let start = rdr.position().line();
        let read = rdr.read_byte_record(&mut record);
        let row_error = match read {
            Ok(false) => break,
            Ok(true) => None,
            Err(e) if input::is_row_error(&e) => Some(e),
            Err(e) => return Err(input::csv_error(file, e)),
        };
        count += 1;
        if count > opts.max_rows {
            return Err(DataError::TooManyRows {
                file: file.to_string(),
                limit: opts.max_rows,
            });
        }
        let line = input::record_line(start, rdr.position().line(), &record);
        if let Some(e) = row_error {
            reject(&mut totals, input::row_error(file, e, line, &record))?;
            continue;
        }
        let field = |c: Option<usize>| c.and_then(|i| record.get(i)).map(trim).unwrap_or_default();
        let fail = |role: usize, reason: String| Rejection {
            at: Location {
                file: file.to_string(),
                line: Some(line),
                column: map.header_of(role).map(str::to_string),
            },
            reason,
        };
        let date_text = field(date_col);
        let Some(date) = Date::parse(date_text) else {
            let shown = String::from_utf8_lossy(date_text);
            reject(
                &mut totals,
                fail(
                    DATE,
                    format!("expected an ISO 8601 date (YYYY-MM-DD), found '{shown}'"),
                ),
            )?;
            continue;
        };
        let home = field(home_col);
        let away = field(away_col);
        if home.is_empty() || away.is_empty() {
            let role = if home.is_empty() { HOME } else { AWAY };
            reject(
                &mut totals,
                fail(role, "the team name is empty".to_string()),
            )?;
            continue;
        }
        if home == away {
            let shown = String::from_utf8_lossy(home);
            reject(
                &mut totals,
                fail(AWAY, format!("'{shown}' is listed as playing itself")),
            )?;
            continue;
        }
        let score = |role: usize, c: Option<usize>| -> Result<u64, Rejection> {
            let b = field(c);
            let t =
                std::str::from_utf8(b).map_err(|_| fail(role, "not valid UTF-8".to_string()))?;
            parse_count(t).map_err(|e| fail(role, e))
        };
        let (hs, aw) = match (score(HOME_SCORE, hs_col), score(AWAY_SCORE, as_col)) {
            (Ok(h), Ok(a)) => (h, a),
            (Err(r), _) | (_, Err(r)) => {
                reject(&mut totals, r)?;
                continue;
            }
        };
        let season = match col(SEASON) {
            Some(_) => {
                let b = field(col(SEASON));
                match std::str::from_utf8(b)
                    .ok()
                    .and_then(|s| s.parse::<i32>().ok())
                {
                    Some(s) => s,
                    None => {
                        let shown = String::from_utf8_lossy(b);
                        reject(
                            &mut totals,
                            fail(
                                SEASON,
                                format!("expected a season (a whole number), found '{shown}'"),
                            ),
                        )?;
                        continue;
                    }
                }
            }
            None => date.year,
        };
        let league_bytes = field(col(LEAGUE));
        let game_no = match col(GAME) {
            Some(_) => match score(GAME, col(GAME)).and_then(|g| {
                u32::try_from(g).map_err(|_| fail(GAME, format!("game number {g} is too large")))
            }) {
                Ok(g) => g,
                Err(r) => {
                    reject(&mut totals, r)?;
                    continue;
                }
            },
            None => 0,
        };
        let ids = (
            totals.teams.id(home),
            totals.teams.id(away),
            totals.leagues.id(league_bytes),
        );
        let (Ok(home_id), Ok(away_id), Ok(league_id)) = ids else {
            let role = match ids {
                (Err(()), _, _) => HOME,
                (_, Err(()), _) => AWAY,
                _ => LEAGUE,
            };
            reject(&mut totals, fail(role, "not valid UTF-8".to_string()))?;
            continue;
        };
        let packed = date.packed();
        let key = (packed, home_id, away_id, game_no);
        // With global keys the map holds every game so far, else only today's.
        let duplicate = if global_keys {
            first_line_of_key.contains_key(&key)
        } else {
            if today != Some(packed) {
                if let Some(d) = today {
                    finished_dates.insert(d);
                }
                if finished_dates.contains(&packed) {
                    return Ok(Pass::OutOfOrder);
                }
                today = Some(packed);
                keys_today.clear();
                first_line_of_key.clear();
            }
            !keys_today.insert((home_id, away_id, game_no))
        };
        if duplicate {
            let first = first_line_of_key
                .get(&key)
                .map(|l| format!(" (first at line {l})"))
                .unwrap_or_default();
            let shown = format!(
                "{} {} at {}",
                date,
                String::from_utf8_lossy(away),
                String::from_utf8_lossy(home)
            );
            let hint = if col(GAME).is_none() {
                "; a doubleheader needs a 'game' column"
            } else {
                ""
            };
            reject(
                &mut totals,
                fail(DATE, format!("duplicate game {shown}{first}{hint}")),
            )?;
            continue;
        }
        first_line_of_key.insert(key, line);
        if as_of.is_some_and(|cut| date > cut)
            || !opts.keeps(
                season,
                Some(std::str::from_utf8(league_bytes).unwrap_or("")).filter(|l| !l.is_empty()),
            )
        {
            totals.filtered_out += 1;
            continue;
        }
        let league_id = if league_bytes.is_empty() {
            no_league
        } else {
            league_id
        };
        let sides = [(home_id, hs, aw), (away_id, aw, hs)];
        // Checked first, so that absurd scores give a message instead of wrapping (or panicking).
        let countable = sides.iter().all(|&(team, scored, allowed)| {
            totals
                .records
                .get(&(season, league_id, team))
                .is_none_or(|r| {
                    r.runs_scored.checked_add(scored).is_some()
                        && r.runs_allowed.checked_add(allowed).is_some()
                })
        });
        if !countable {
            reject(
                &mut totals,
                fail(
                    HOME_SCORE,
                    "the season's run totals grow too large to count".to_string(),
                ),
            )?;
            continue;
        }
        for (team, scored, allowed) in sides {
            let rec = totals
                .records
                .entry((season, league_id, team))
                .or_insert_with(|| Record {
                    first_line: line,
                    ..Record::default()
                });
            rec.games += 1;
            rec.runs_scored += scored;
            rec.runs_allowed += allowed;
            match scored.cmp(&allowed) {
                std::cmp::Ordering::Greater => {
                    rec.wins += 1;
                    if scored - allowed == 1 {
                        rec.one_run_wins += 1;
                    }
                }
                std::cmp::Ordering::Less => {
                    rec.losses += 1;
                    if allowed - scored == 1 {
                        rec.one_run_losses += 1;
                    }
                }
                std::cmp::Ordering::Equal => rec.ties += 1,
            }
        }
    }
    Ok(Pass::Done(Box::new(totals)))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_check_calendar() {
        assert!(Date::parse(b"2024-02-29").is_some());
        assert!(Date::parse(b"2023-02-29").is_none());
        assert!(Date::parse(b"1900-02-29").is_none());
        assert!(Date::parse(b"2000-02-29").is_some());
        assert!(Date::parse(b"2024-13-01").is_none());
        assert!(Date::parse(b"2024-04-31").is_none());
        assert!(Date::parse(b"24-04-01").is_none());
        assert!(Date::parse(b"2024/04/01").is_none());
        assert!(Date::parse(b"2024-04-01").unwrap() < Date::parse(b"2024-04-02").unwrap());
    }
}
