//! Games left to play: a game log's unplayed rows (both scores empty, or dated after `--as-of`) and
//! separate schedule files (date, home, away), with the home record of the games already played and
//! each club's group (division, conference) from the log or from a small teams file.
//!
//! One streaming pass per file; memory grows with the games of the season being looked at.

use std::collections::{BTreeMap, HashMap};

mod groups;
mod rows;

pub use groups::read_groups;

use super::gamelog::Date;
use super::roles;
use super::{LoadOptions, input};
use crate::error::{DataError, Location, Rejection};
use rows::{GROUP, LEAGUE, Row, duplicate, for_each_row, log_roles, schedule_roles};

/// Most games left to play that one run accepts (a full 30-club season has 2,430 games).
pub const MAX_GAMES_LEFT: usize = 100_000;

/// One game left to play.
#[derive(Debug, Clone, PartialEq)]
pub struct Fixture {
    pub date: Date,
    pub home: String,
    pub away: String,
    /// Where the game was listed (for messages about its teams).
    pub at: Location,
}

/// Home wins (ties as half) and decisions of played games.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct HomeRecord {
    pub wins: f64,
    pub games: f64,
}

/// How the games left were found.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct PlanCounts {
    /// Log rows with both scores empty.
    pub log_unplayed: u64,
    /// Log rows dated after `--as-of` (their scores, if any, are not used).
    pub log_after_as_of: u64,
    /// Schedule-file rows that are games still to play (not in the log).
    pub scheduled: u64,
    /// Schedule-file rows that the log lists too (played, or unplayed there): counted once.
    pub scheduled_in_log: u64,
    /// Of `scheduled`: dated on or before the last day played (postponed games, still to play).
    pub postponed: u64,
    /// Unplayed log rows of earlier seasons, left out.
    pub earlier_unplayed: u64,
}

/// Everything the rest-of-season simulation reads from the files besides the team-season totals.
#[derive(Debug, Clone, Default)]
pub struct SeasonPlan {
    /// The season looked at: the latest in the log (after `--seasons` and `--league`).
    pub season: i32,
    pub remaining: Vec<Fixture>,
    pub home_this_season: HomeRecord,
    /// Home record of every earlier season in the log.
    pub home_earlier: HomeRecord,
    /// Each club's group from the log (its group column, else its league column), when it has one.
    pub groups: BTreeMap<String, String>,
    /// The log header the groups came from.
    pub group_column: Option<String>,
    /// The last date with a played game of the season.
    pub last_played: Option<Date>,
    pub counts: PlanCounts,
}

/// A game's identity for the duplicate rule of the loader: date, home, away, game number.
type GameKey = (Date, String, String, u32);

/// Read the log (for unplayed rows, the home record and groups) and any schedule files.
pub fn read_plan(
    logs: &[String],
    schedules: &[String],
    as_of: Option<Date>,
    opts: &LoadOptions,
) -> Result<SeasonPlan, DataError> {
    let log_specs = log_roles();
    roles::check_mappings(&log_specs, &opts.maps)?;
    let mut plan = SeasonPlan::default();
    let mut season: Option<i32> = None;
    // Games of the latest season so far (key → (location, played)).
    let mut seen: HashMap<GameKey, (Location, bool)> = HashMap::new();
    let mut unplayed: Vec<(i32, Fixture)> = Vec::new();
    let mut home_by_season: BTreeMap<i32, HomeRecord> = BTreeMap::new();
    let mut group_at: HashMap<String, Location> = HashMap::new();
    for path in logs {
        for_each_row(path, &log_specs, opts, true, |map, at, row| {
            if left_out(opts, &row) {
                return Ok(());
            }
            if season.is_some_and(|s| row.season < s) {
                if row.scores.is_none() || as_of.is_some_and(|c| row.date > c) {
                    plan.counts.earlier_unplayed += 1;
                } else if let Some(s) = row.scores {
                    add_home(home_by_season.entry(row.season).or_default(), s);
                }
                return Ok(());
            }
            if season.is_none_or(|s| row.season > s) {
                season = Some(row.season);
                seen.clear();
                plan.groups.clear();
                group_at.clear();
                plan.counts.earlier_unplayed += unplayed.len() as u64;
                unplayed.clear();
                plan.last_played = None;
            }
            if plan.group_column.is_none() {
                plan.group_column = map
                    .header_of(GROUP)
                    .or_else(|| map.header_of(LEAGUE))
                    .map(str::to_string);
            }
            let key = (row.date, row.home.clone(), row.away.clone(), row.game);
            let after = as_of.is_some_and(|c| row.date > c);
            let played = row.scores.is_some() && !after;
            if let Some((first, _)) = seen.get(&key) {
                return Err(duplicate(&at, first, &row, map));
            }
            seen.insert(key, (at.clone(), played));
            let group = if map.index[GROUP].is_some() {
                &row.group
            } else {
                &row.league
            };
            if !group.is_empty() {
                for team in [&row.home, &row.away] {
                    note_group(&mut plan.groups, &mut group_at, team, group, &at)?;
                }
            }
            if played {
                if let Some(s) = row.scores {
                    add_home(home_by_season.entry(row.season).or_default(), s);
                }
                plan.last_played = plan.last_played.max(Some(row.date));
            } else {
                if after {
                    plan.counts.log_after_as_of += 1;
                } else {
                    plan.counts.log_unplayed += 1;
                }
                push_fixture(&mut unplayed, row.season, fixture(&row, at))?;
            }
            Ok(())
        })?;
    }
    let Some(season) = season else {
        return Err(DataError::Usage(format!(
            "{}: no games of any season to look ahead from",
            logs.join(", ")
        )));
    };
    plan.season = season;
    let schedule_specs = schedule_roles();
    let mut listed: HashMap<GameKey, Location> = HashMap::new();
    for path in schedules {
        for_each_row(path, &schedule_specs, opts, false, |map, at, row| {
            if left_out(opts, &row) {
                return Ok(());
            }
            if row.season != season {
                return Err(DataError::Rejected(Rejection {
                    at,
                    reason: format!(
                        "a game of season {}, but the log's latest season is {season}",
                        row.season
                    ),
                }));
            }
            let key = (row.date, row.home.clone(), row.away.clone(), row.game);
            if let Some(first) = listed.get(&key) {
                return Err(duplicate(&at, first, &row, map));
            }
            listed.insert(key.clone(), at.clone());
            if seen.contains_key(&key) {
                plan.counts.scheduled_in_log += 1;
                return Ok(());
            }
            plan.counts.scheduled += 1;
            if plan.last_played.is_some_and(|d| row.date <= d) {
                plan.counts.postponed += 1;
            }
            push_fixture(&mut unplayed, season, fixture(&row, at))
        })?;
    }
    plan.remaining = unplayed.into_iter().map(|(_, f)| f).collect();
    plan.home_this_season = home_by_season.remove(&season).unwrap_or_default();
    for r in home_by_season.values() {
        plan.home_earlier.wins += r.wins;
        plan.home_earlier.games += r.games;
    }
    Ok(plan)
}

fn add_home(r: &mut HomeRecord, (home, away): (u64, u64)) {
    r.games += 1.0;
    r.wins += match home.cmp(&away) {
        std::cmp::Ordering::Greater => 1.0,
        std::cmp::Ordering::Equal => 0.5,
        std::cmp::Ordering::Less => 0.0,
    };
}

/// Whether `--seasons` or `--league` leaves this row out (an empty league cell names no league).
fn left_out(opts: &LoadOptions, row: &Row) -> bool {
    let league = Some(row.league.as_str()).filter(|l| !l.is_empty());
    opts.left_out_by(row.season, league).is_some()
}

fn fixture(row: &Row, at: Location) -> Fixture {
    Fixture {
        date: row.date,
        home: row.home.clone(),
        away: row.away.clone(),
        at,
    }
}

fn push_fixture(list: &mut Vec<(i32, Fixture)>, season: i32, f: Fixture) -> Result<(), DataError> {
    if list.len() >= MAX_GAMES_LEFT {
        return Err(DataError::Rejected(Rejection {
            at: f.at,
            reason: format!(
                "more than {MAX_GAMES_LEFT} games left to play (the limit for one run)"
            ),
        }));
    }
    list.push((season, f));
    Ok(())
}

fn note_group(
    groups: &mut BTreeMap<String, String>,
    first: &mut HashMap<String, Location>,
    team: &str,
    group: &str,
    at: &Location,
) -> Result<(), DataError> {
    match groups.get(team) {
        Some(g) if g != group => Err(DataError::Rejected(Rejection {
            at: at.clone(),
            reason: format!(
                "'{team}' is in group '{group}' here but in '{g}' at {}",
                first
                    .get(team)
                    .map_or_else(String::new, ToString::to_string)
            ),
        })),
        Some(_) => Ok(()),
        None => {
            groups.insert(team.to_string(), group.to_string());
            first.insert(team.to_string(), at.clone());
            Ok(())
        }
    }
}

/// Refuse standard input and anything but a regular file: the outlook reads its inputs twice, and
/// opening a FIFO with no writer would wait forever.
pub fn require_regular(path: &str) -> Result<(), DataError> {
    if path == "-" {
        return Err(DataError::Usage(
            "<stdin>: not a regular file (the outlook reads its inputs twice); save it to a file first"
                .to_string(),
        ));
    }
    let meta = std::fs::metadata(path).map_err(|source| DataError::Io {
        file: input::display_name(path),
        source,
    })?;
    if !meta.is_file() {
        return Err(DataError::Usage(format!(
            "{}: not a regular file (a pipe, device or directory); save it to a file first",
            input::display_name(path)
        )));
    }
    Ok(())
}
