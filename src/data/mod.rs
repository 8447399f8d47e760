//! Reading input: column roles, header normalisation, `--map`, validation, game-log aggregation.
//! Nothing here prints; warnings, rejections and what the filters left out are returned to the
//! caller in the [`Dataset`].

pub mod gamelog;
pub mod input;
pub mod roles;
pub mod schedule;
pub mod season;
pub mod table;

use std::collections::HashMap;

use crate::error::{DataError, Location, Rejection};
pub use roles::Mapping;
pub use table::{Table, TiePolicy, Weighting};

/// One team's season (or season so far), as read or aggregated.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct TeamSeason {
    pub season: i32,
    pub league: Option<String>,
    pub team: String,
    pub wins: u64,
    pub losses: u64,
    pub ties: u64,
    pub runs_scored: f64,
    pub runs_allowed: f64,
    /// Games played: the `games` column, or W+L+T when the file has none.
    pub games: u64,
    /// Record in games decided by one run (point, goal): (wins, losses). Game logs only.
    pub one_run: Option<(u64, u64)>,
    #[serde(skip)]
    pub at: Location,
}

impl TeamSeason {
    pub fn decisions(&self) -> u64 {
        self.wins + self.losses + self.ties
    }
}

/// An inclusive range of seasons, from `--seasons 1980-2006` or `--seasons 2019`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SeasonRange {
    pub first: i32,
    pub last: i32,
}

impl std::str::FromStr for SeasonRange {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let parse = |t: &str| {
            t.trim().parse::<i32>().map_err(|_| {
                format!("expected a season like 2019 or a range like 1980-2006, got '{s}'")
            })
        };
        let (first, last) = match s.trim().split_once('-') {
            Some((a, b)) => (parse(a)?, parse(b)?),
            None => {
                let y = parse(s)?;
                (y, y)
            }
        };
        if first > last {
            return Err(format!("season range '{s}' ends before it starts"));
        }
        Ok(SeasonRange { first, last })
    }
}

/// How to read and filter input.
#[derive(Debug, Clone)]
pub struct LoadOptions {
    pub maps: Vec<Mapping>,
    pub seasons: Option<SeasonRange>,
    pub league: Option<String>,
    /// Game logs only: games dated after this day count as not played yet.
    pub as_of: Option<gamelog::Date>,
    pub skip_invalid: bool,
    pub max_rows: u64,
    /// Longest physical line, and longest field (a quoted field may span lines), in bytes.
    pub max_line_bytes: usize,
    pub max_field_bytes: usize,
    /// Most distinct team names (and, separately, league names) in one load.
    pub max_names: usize,
    /// Game logs: games of earlier dates the duplicate check holds in memory (see `gamelog`).
    pub max_held_games: usize,
    /// The field delimiter of every input; `None`: each file's own, read from its first lines.
    pub delimiter: Option<u8>,
    /// The season of every row of an input without a season column (team-season tables; for game
    /// logs, instead of the date's year). `None`: a table without one is one season, numbered by
    /// the file's place in the list (1 for the first).
    pub season_is: Option<i32>,
    /// How an overtime-loss column of a team-season table counts.
    pub ot_losses: OtLosses,
}

/// How overtime and shootout losses (a team-season table's `ot_losses` column) count.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum OtLosses {
    /// As losses: the record is W, L + OTL, T (how hockey standings usually give a win%).
    #[default]
    Losses,
    /// As ties: half a win and half a loss under `--ties half` (left out under `--ties exclude`).
    Half,
    /// Left out: the record is W, L, T, and those games are taken off the games played.
    LeaveOut,
}

/// Most distinct team names of one load unless the caller says otherwise: far beyond any league's
/// history, far below what would exhaust memory.
pub const DEFAULT_MAX_NAMES: usize = 100_000;

/// Games of earlier dates the game-log duplicate check holds unless the caller says otherwise
/// (32 bytes each and the map: about 1.5 MB; a larger budget costs the date-ordered path time).
pub const DEFAULT_MAX_HELD_GAMES: usize = 1 << 15;

impl Default for LoadOptions {
    fn default() -> Self {
        LoadOptions {
            maps: Vec::new(),
            seasons: None,
            league: None,
            as_of: None,
            skip_invalid: false,
            max_rows: 50_000_000,
            max_line_bytes: input::DEFAULT_MAX_LINE_BYTES,
            max_field_bytes: input::DEFAULT_MAX_FIELD_BYTES,
            max_names: DEFAULT_MAX_NAMES,
            max_held_games: DEFAULT_MAX_HELD_GAMES,
            delimiter: None,
            season_is: None,
            ot_losses: OtLosses::Losses,
        }
    }
}

/// The filter that left a row out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Filter {
    Seasons,
    League,
}

impl LoadOptions {
    /// Which filter leaves out a row of this season and league, if any.
    pub fn left_out_by(&self, season: i32, league: Option<&str>) -> Option<Filter> {
        if let Some(r) = self.seasons
            && (season < r.first || season > r.last)
        {
            return Some(Filter::Seasons);
        }
        if let Some(want) = &self.league
            && !league.is_some_and(|l| l.eq_ignore_ascii_case(want))
        {
            return Some(Filter::League);
        }
        None
    }
}

/// The rows that survived validation, with everything that was set aside and why.
#[derive(Debug, Clone, Default)]
pub struct Dataset {
    pub rows: Vec<TeamSeason>,
    pub rejected: Vec<Rejection>,
    pub warnings: Vec<String>,
    /// What the reader assumed, for the user to know (printed as notes, not warnings).
    pub notes: Vec<String>,
    /// Rows left out by `--seasons` or `--league` (not errors).
    pub filtered_out: u64,
    /// Of `filtered_out`, the rows `--league` left out (the rest: `--seasons`).
    pub filtered_by_league: u64,
    /// Game logs: games not played yet, set aside (not errors): rows whose two scores are both
    /// empty (a schedule's rows) and games dated after `--as-of`.
    pub unplayed_games: u64,
    /// Of `unplayed_games`, the games dated after `--as-of`.
    pub after_as_of: u64,
    /// Game logs: the date of the last game counted.
    pub last_played: Option<gamelog::Date>,
}

impl Dataset {
    /// Distinct seasons in ascending order.
    pub fn seasons(&self) -> Vec<i32> {
        let mut s: Vec<i32> = self.rows.iter().map(|r| r.season).collect();
        s.sort_unstable();
        s.dedup();
        s
    }

    /// What was set aside without being an error, one phrase per cause, each naming the filter
    /// (or the missing scores) that set it aside.
    pub fn left_out(&self) -> Vec<String> {
        let mut phrases = Vec::new();
        if self.after_as_of > 0 {
            phrases.push(format!("{} games were after --as-of", self.after_as_of));
        }
        let no_scores = self.unplayed_games - self.after_as_of;
        if no_scores > 0 {
            phrases.push(format!("{no_scores} games have no scores yet (unplayed)"));
        }
        let by_seasons = self.filtered_out - self.filtered_by_league;
        if by_seasons > 0 {
            phrases.push(format!("{by_seasons} rows were outside --seasons"));
        }
        if self.filtered_by_league > 0 {
            phrases.push(format!(
                "{} rows were outside --league",
                self.filtered_by_league
            ));
        }
        phrases
    }

    /// Fail with a clear message when nothing is left to work on.
    pub fn require_rows(&self, what: &str) -> Result<(), DataError> {
        if !self.rows.is_empty() {
            return Ok(());
        }
        let left_out = self.left_out();
        let hint = if !left_out.is_empty() {
            format!(" ({})", left_out.join("; "))
        } else if !self.rejected.is_empty() {
            format!(" (all {} rows were rejected)", self.rejected.len())
        } else {
            " (the input has a header but no data rows)".to_string()
        };
        Err(DataError::NoRows {
            what: what.to_string(),
            hint,
        })
    }

    /// Record a bad row: an error, or with `--skip-invalid` a rejection to report and count.
    pub(crate) fn reject(&mut self, skip_invalid: bool, r: Rejection) -> Result<(), DataError> {
        if skip_invalid {
            self.rejected.push(r);
            Ok(())
        } else {
            Err(DataError::Rejected(r))
        }
    }

    /// Checks that need the whole table: duplicates, odd game counts, very short seasons.
    pub(crate) fn finish(&mut self, skip_invalid: bool) -> Result<(), DataError> {
        // Keys borrow the rows' names, and duplicates are removed in place: no second copy of
        // every name and row (a game log can hold tens of thousands of team-seasons).
        let mut first_of: HashMap<(i32, Option<&str>, &str), usize> =
            HashMap::with_capacity(self.rows.len());
        let mut duplicates: Vec<(usize, usize)> = Vec::new();
        for (i, row) in self.rows.iter().enumerate() {
            match first_of.entry((row.season, row.league.as_deref(), row.team.as_str())) {
                std::collections::hash_map::Entry::Occupied(e) => duplicates.push((i, *e.get())),
                std::collections::hash_map::Entry::Vacant(e) => {
                    e.insert(i);
                }
            }
        }
        drop(first_of);
        if !duplicates.is_empty() {
            let mut dropped = vec![false; self.rows.len()];
            for &(i, first) in &duplicates {
                let row = &self.rows[i];
                let league = row
                    .league
                    .as_deref()
                    .map(|l| format!(" {l}"))
                    .unwrap_or_default();
                let reason = format!(
                    "duplicate team-season {}{} {} (first at {})",
                    row.season, league, row.team, self.rows[first].at
                );
                let at = row.at.clone();
                self.reject(skip_invalid, Rejection { at, reason })?;
                dropped[i] = true;
            }
            let mut k = 0;
            self.rows.retain(|_| {
                k += 1;
                !dropped[k - 1]
            });
        }

        let odd: Vec<&TeamSeason> = self
            .rows
            .iter()
            .filter(|r| r.games != r.decisions())
            .collect();
        if let Some(first) = odd.first() {
            self.warnings.push(format!(
                "{} team-seasons have games different from W+L+T (unfinished or replayed games?); accepted, first at {} ({} games, {} decisions)",
                odd.len(),
                first.at,
                first.games,
                first.decisions()
            ));
        }
        let mut lengths: Vec<u64> = self.rows.iter().map(|r| r.games).collect();
        lengths.sort_unstable();
        if let Some(&median) = lengths.get(lengths.len() / 2) {
            let short: Vec<&TeamSeason> =
                self.rows.iter().filter(|r| r.games * 2 < median).collect();
            if let Some(first) = short.first() {
                self.warnings.push(format!(
                    "{} team-seasons are very short (under half the median of {median} games); fitted, but their win% is noisy; first at {} ({} games)",
                    short.len(),
                    first.at,
                    first.games
                ));
            }
        }
        Ok(())
    }
}

/// Parse a count (wins, losses, ties, games): a finite, non-negative whole number.
pub(crate) fn parse_count(text: &str) -> Result<u64, String> {
    let v = parse_number(text)?;
    if v.fract() != 0.0 {
        return Err(format!("expected a whole number, found '{text}'"));
    }
    if v > 1e15 {
        return Err(format!("'{text}' is too large for a count"));
    }
    Ok(v as u64)
}

/// Parse a non-negative finite number (runs may be fractional, e.g. averaged).
pub(crate) fn parse_number(text: &str) -> Result<f64, String> {
    let t = text.trim();
    if t.is_empty() {
        return Err("expected a number, found an empty field".to_string());
    }
    let v: f64 = t.parse().map_err(|_| not_a_number(t))?;
    if !v.is_finite() {
        return Err(format!("expected a finite number, found '{t}'"));
    }
    if v < 0.0 {
        return Err(format!("expected a non-negative number, found '{t}'"));
    }
    Ok(v)
}

/// Why `text` is no number, naming a decimal comma (`4,5`, `712,0`: a European locale's export)
/// or a thousands separator (`1,234`, which could be either) rather than just refusing it.
fn not_a_number(text: &str) -> String {
    let numeric = text
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, ',' | '.' | '-' | '+'));
    if !numeric || !text.contains(',') || !text.chars().any(|c| c.is_ascii_digit()) {
        return format!("expected a number, found '{text}'");
    }
    match text.split_once(',') {
        Some((whole, part))
            if !whole.is_empty()
                && whole.chars().all(|c| c.is_ascii_digit() || c == '-')
                && !part.is_empty()
                && part.chars().all(|c| c.is_ascii_digit())
                && part.len() != 3 =>
        {
            format!(
                "decimal comma in '{text}': runcal wants a point ({whole}.{part}); export the file with a decimal point"
            )
        }
        _ => format!(
            "'{text}' holds a comma (a decimal comma or a thousands separator): runcal wants plain digits with a decimal point, as in 1234.5"
        ),
    }
}

/// Parse a run total: a non-negative finite number up to 10^15 (larger is no real total, and would
/// let sums and runs per game overflow to infinity).
pub(crate) fn parse_runs(text: &str) -> Result<f64, String> {
    let v = parse_number(text)?;
    if v > 1e15 {
        return Err(format!("'{}' is too large for a run total", text.trim()));
    }
    Ok(v)
}

/// Read team-season files, or game logs when `game_logs` is set, into one dataset.
pub fn load(paths: &[String], game_logs: bool, opts: &LoadOptions) -> Result<Dataset, DataError> {
    if game_logs {
        gamelog::load(paths, opts)
    } else {
        if opts.as_of.is_some() {
            return Err(DataError::Usage(
                "--as-of needs game logs (add --games)".to_string(),
            ));
        }
        season::load(paths, opts)
    }
}

/// Refuse `--season-is` for a file that has a season column of its own (found by its aliases or
/// named by `--map`): which of the two would be meant cannot be guessed.
pub(crate) fn check_season_is(
    file: &str,
    map: &roles::ColumnMap,
    season: usize,
    opts: &LoadOptions,
) -> Result<(), DataError> {
    match (opts.season_is, map.header_of(season)) {
        (Some(value), Some(header)) => Err(DataError::Rejected(Rejection {
            at: Location {
                file: file.to_string(),
                line: Some(1),
                column: Some(header.to_string()),
            },
            reason: format!(
                "--season-is {value} is for files without a season column, and this file has one; drop --season-is to use the file's own seasons"
            ),
        })),
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn season_ranges_parse() {
        assert_eq!(
            "1980-2006".parse::<SeasonRange>().unwrap(),
            SeasonRange {
                first: 1980,
                last: 2006
            }
        );
        assert_eq!(
            "2019".parse::<SeasonRange>().unwrap(),
            SeasonRange {
                first: 2019,
                last: 2019
            }
        );
        assert!("2006-1980".parse::<SeasonRange>().is_err());
        assert!("x".parse::<SeasonRange>().is_err());
    }

    #[test]
    fn counts_reject_text_negatives_and_fractions() {
        assert_eq!(parse_count("81"), Ok(81));
        assert_eq!(parse_count("81.0"), Ok(81));
        assert!(parse_count("-1").is_err());
        assert!(parse_count("8.5").is_err());
        assert!(parse_count("NaN").is_err());
        assert!(parse_count("inf").is_err());
        assert!(parse_count("1e400").is_err());
        assert!(parse_count("").is_err());
    }
}
