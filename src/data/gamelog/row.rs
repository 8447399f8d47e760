//! One game-log record: its fields checked and turned into a [`Game`], or a rejection that names
//! the line, the column and what was expected.

use super::super::{input, parse_count, roles::ColumnMap};
use super::date::{self, Date};
use super::names::{NameError, Names, word};
use super::pipeline::Fields;
use super::{AWAY, AWAY_SCORE, DATE, GAME, HOME, HOME_SCORE, LEAGUE, SEASON};
use crate::error::{Location, Rejection};

/// A record that passed the checks.
pub(super) struct Game {
    pub date: Date,
    pub packed_date: u32,
    pub home: u32,
    pub away: u32,
    /// The league's id (the empty name when the file has no league column or the cell is empty).
    pub league: u32,
    pub season: i32,
    pub game_number: u32,
    /// (home, away); `None` when both cells are empty: a game not played yet (a schedule row).
    pub scores: Option<(u64, u64)>,
}

/// Reads the records of one file.
pub(super) struct RowReader<'a> {
    file: &'a str,
    map: &'a ColumnMap,
    /// The last date's text (as two words) and value: a day's games share one date, so most rows
    /// skip the parse.
    last_date: Option<((u64, u64), Date, u32)>,
    /// `--season-is`: every game's season, for a log without a season column.
    season_is: Option<i32>,
}

fn rejection(file: &str, map: &ColumnMap, line: u64, role: usize, reason: String) -> Rejection {
    Rejection {
        at: Location {
            file: file.to_string(),
            line: Some(line),
            column: map.header_of(role).map(str::to_string),
        },
        reason,
    }
}

/// A count made only of ASCII digits (the usual score), read directly; `None` for anything else,
/// which then takes `parse_count`'s full rules. Fifteen digits stay below its 10^15 limit.
fn digits(b: &[u8]) -> Option<u64> {
    if b.is_empty() || b.len() > 15 {
        return None;
    }
    b.iter().try_fold(0u64, |acc, &d| {
        d.is_ascii_digit().then(|| acc * 10 + u64::from(d - b'0'))
    })
}

/// Seasons may straddle a new year (a winter league), but not more.
const SEASON_DATE_GAP_YEARS: i32 = 1;

impl<'a> RowReader<'a> {
    pub(super) fn new(file: &'a str, map: &'a ColumnMap, season_is: Option<i32>) -> Self {
        RowReader {
            file,
            map,
            last_date: None,
            season_is,
        }
    }

    /// A rejection of this file's `line` at a role's column.
    pub(super) fn fail(&self, line: u64, role: usize, reason: String) -> Rejection {
        rejection(self.file, self.map, line, role, reason)
    }

    pub(super) fn read(
        &mut self,
        names: &mut Names,
        record: Fields<'_>,
        line: u64,
    ) -> Result<Game, Rejection> {
        let (file, map) = (self.file, self.map);
        let col = |role: usize| map.index[role];
        let field = |role: usize| {
            col(role)
                .and_then(|i| record.get(i))
                .map(<[u8]>::trim_ascii)
                .unwrap_or_default()
        };
        let fail = |role: usize, reason: String| rejection(file, map, line, role, reason);
        let (date, packed_date) = self.date(field(DATE)).map_err(|e| fail(DATE, e))?;
        let (home, away) = (field(HOME), field(AWAY));
        let mut team = |role: usize, name: &[u8]| {
            if name.is_empty() {
                return Err(fail(role, "the team name is empty".to_string()));
            }
            names
                .teams
                .id(name)
                .map_err(|e| fail(role, e.reason("team")))
        };
        let (home_id, away_id) = (team(HOME, home)?, team(AWAY, away)?);
        if home_id == away_id {
            let shown = input::shown(names.teams.name(home_id));
            return Err(fail(AWAY, format!("'{shown}' is listed as playing itself")));
        }
        let league = names
            .leagues
            .id(field(LEAGUE))
            .map_err(|e: NameError| fail(LEAGUE, e.reason("league")))?;
        let season = match col(SEASON) {
            Some(_) => self
                .season(field(SEASON), date)
                .map_err(|e| fail(SEASON, e))?,
            None => self.season_is.unwrap_or_else(|| i32::from(date.year())),
        };
        let count = |role: usize| -> Result<u64, Rejection> {
            let b = field(role);
            let t =
                std::str::from_utf8(b).map_err(|_| fail(role, "not valid UTF-8".to_string()))?;
            parse_count(t).map_err(|e| fail(role, input::shown(&e)))
        };
        let game_number = match col(GAME) {
            Some(_) => {
                let g = count(GAME)?;
                u32::try_from(g).map_err(|_| fail(GAME, format!("game number {g} is too large")))?
            }
            None => 0,
        };
        let (hs, aw) = (field(HOME_SCORE), field(AWAY_SCORE));
        // Plain digits first: the general parse returns a large Result that costs a copy per row.
        let scores = match (digits(hs), digits(aw)) {
            (Some(h), Some(a)) => Some((h, a)),
            _ if hs.is_empty() && aw.is_empty() => None,
            _ => Some((count(HOME_SCORE)?, count(AWAY_SCORE)?)),
        };
        Ok(Game {
            date,
            packed_date,
            home: home_id,
            away: away_id,
            league,
            season,
            game_number,
            scores,
        })
    }

    fn date(&mut self, text: &[u8]) -> Result<(Date, u32), String> {
        // A valid date has ten bytes, which two words determine (compared one by one: an array
        // comparison reloads the words through memory).
        let words = (word(text), word(text.get(8..).unwrap_or_default()));
        if let Some(((w0, w1), d, packed)) = self.last_date
            && text.len() == 10
            && w0 == words.0
            && w1 == words.1
        {
            return Ok((d, packed));
        }
        let d = date::parse_iso_date(text)?;
        let packed = date::packed(d);
        self.last_date = Some((words, d, packed));
        Ok((d, packed))
    }

    fn season(&self, b: &[u8], date: Date) -> Result<i32, String> {
        // Up to nine digits fit an i32; anything else takes the general parse.
        let fast = digits(b).filter(|_| b.len() <= 9).map(|v| v as i32);
        let Some(season) = fast.or_else(|| std::str::from_utf8(b).ok()?.parse::<i32>().ok()) else {
            let shown = input::shown(&String::from_utf8_lossy(b));
            return Err(format!(
                "expected a season (a whole number), found '{shown}'"
            ));
        };
        let year = i32::from(date.year());
        if (i64::from(season) - i64::from(year)).abs() > i64::from(SEASON_DATE_GAP_YEARS) {
            return Err(format!(
                "the season is {season} but the game is dated {date} (more than {SEASON_DATE_GAP_YEARS} year apart: is the season or the date column wrong?)"
            ));
        }
        Ok(season)
    }
}
