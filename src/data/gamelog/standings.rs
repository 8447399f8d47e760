//! Team-season records: summed game by game within a file, merged over the files of a load, and
//! turned into sorted [`TeamSeason`] rows.

use std::collections::HashMap;

use super::super::{Dataset, TeamSeason};
use super::names::Names;
use crate::error::{DataError, Location, Rejection};

/// A team-season: (season, league id, team id).
pub(super) type TeamSeasonKey = (i32, u32, u32);

#[derive(Debug, Clone, Default)]
pub(super) struct TeamRecord {
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

impl TeamRecord {
    /// Whether one more game with these runs still fits the run totals.
    fn can_take(&self, scored: u64, allowed: u64) -> bool {
        self.runs_scored.checked_add(scored).is_some()
            && self.runs_allowed.checked_add(allowed).is_some()
    }

    fn add_game(&mut self, scored: u64, allowed: u64) {
        self.games += 1;
        self.runs_scored += scored;
        self.runs_allowed += allowed;
        match scored.cmp(&allowed) {
            std::cmp::Ordering::Greater => {
                self.wins += 1;
                self.one_run_wins += u64::from(scored - allowed == 1);
            }
            std::cmp::Ordering::Less => {
                self.losses += 1;
                self.one_run_losses += u64::from(allowed - scored == 1);
            }
            std::cmp::Ordering::Equal => self.ties += 1,
        }
    }

    /// Add another file's record of the same team-season; `None` if the run totals overflow.
    fn absorb(&mut self, other: &TeamRecord) -> Option<()> {
        self.runs_scored = self.runs_scored.checked_add(other.runs_scored)?;
        self.runs_allowed = self.runs_allowed.checked_add(other.runs_allowed)?;
        self.games += other.games;
        self.wins += other.wins;
        self.losses += other.losses;
        self.ties += other.ties;
        self.one_run_wins += other.one_run_wins;
        self.one_run_losses += other.one_run_losses;
        Some(())
    }
}

/// One file's team-season records in the order they were first seen, found through a map, with
/// each team's latest record remembered: in a log ordered by season a team's key changes once a
/// season, so the map is consulted once per team-season rather than twice per game.
#[derive(Default)]
pub(super) struct FileRecords {
    list: Vec<(TeamSeasonKey, TeamRecord)>,
    index: HashMap<TeamSeasonKey, u32>,
    /// Per team id: position in `list` of the team's latest record (u32::MAX: none yet).
    latest: Vec<u32>,
}

impl FileRecords {
    /// Position of an existing record.
    fn find(&mut self, key: TeamSeasonKey) -> Option<usize> {
        let team = key.2 as usize;
        if let Some(&at) = self.latest.get(team)
            && let Some((k, _)) = self.list.get(at as usize)
            && *k == key
        {
            return Some(at as usize);
        }
        let at = *self.index.get(&key)?;
        self.remember(team, at);
        Some(at as usize)
    }

    /// Add a record that is not present yet (first seen at `line`); its position.
    fn insert(&mut self, key: TeamSeasonKey, line: u64) -> usize {
        let at = self.list.len() as u32;
        self.list.push((
            key,
            TeamRecord {
                first_line: line,
                ..TeamRecord::default()
            },
        ));
        self.index.insert(key, at);
        self.remember(key.2 as usize, at);
        at as usize
    }

    fn remember(&mut self, team: usize, at: u32) {
        if self.latest.len() <= team {
            self.latest.resize(team + 1, u32::MAX);
        }
        self.latest[team] = at;
    }

    /// Count one game for both sides; false (and nothing counted) if a run total would overflow.
    pub(super) fn add_game(
        &mut self,
        season: i32,
        league: u32,
        (home, away): (u32, u32),
        (home_score, away_score): (u64, u64),
        line: u64,
    ) -> bool {
        let sides = [
            (home, home_score, away_score),
            (away, away_score, home_score),
        ];
        // Checked first, so that absurd scores give a message instead of wrapping (or panicking).
        let found = sides.map(|(team, ..)| self.find((season, league, team)));
        let countable = sides.iter().zip(found).all(|(&(_, scored, allowed), at)| {
            at.is_none_or(|at| self.list[at].1.can_take(scored, allowed))
        });
        if !countable {
            return false;
        }
        for ((team, scored, allowed), at) in sides.into_iter().zip(found) {
            let at = at.unwrap_or_else(|| self.insert((season, league, team), line));
            self.list[at].1.add_game(scored, allowed);
        }
        true
    }

    #[cfg(test)]
    pub(super) fn describe(&self, names: &Names) -> String {
        let teams: Vec<&str> = self
            .list
            .iter()
            .map(|(k, _)| names.teams.name(k.2))
            .collect();
        format!("{:?} {teams:?}", self.list)
    }
}

/// Team-seasons over all files of a load, each with the file it was first seen in.
#[derive(Default)]
pub(super) struct Standings {
    merged: Vec<(TeamSeasonKey, TeamRecord, usize)>,
    index: HashMap<TeamSeasonKey, usize>,
}

impl Standings {
    /// Add one file's records (`file_no` into `files`).
    pub(super) fn merge(
        &mut self,
        records: FileRecords,
        file_no: usize,
        files: &[String],
    ) -> Result<(), DataError> {
        if self.merged.is_empty() {
            // The first file's records are the merge so far; their keys are distinct already.
            self.merged = records
                .list
                .into_iter()
                .map(|(k, r)| (k, r, file_no))
                .collect();
            self.index = self
                .merged
                .iter()
                .enumerate()
                .map(|(at, m)| (m.0, at))
                .collect();
            return Ok(());
        }
        for (key, rec) in records.list {
            let at = *self.index.entry(key).or_insert_with(|| {
                self.merged.push((
                    key,
                    TeamRecord {
                        first_line: rec.first_line,
                        ..TeamRecord::default()
                    },
                    file_no,
                ));
                self.merged.len() - 1
            });
            if self.merged[at].1.absorb(&rec).is_none() {
                return Err(DataError::Rejected(Rejection {
                    at: Location {
                        file: files[file_no].clone(),
                        line: Some(rec.first_line),
                        column: None,
                    },
                    reason: "the season's run totals over all files are too large to count"
                        .to_string(),
                }));
            }
        }
        Ok(())
    }

    /// The team-season rows in (season, league, team) order, so that rejections come out in the
    /// same order on every run; a team that scored and allowed nothing is rejected.
    pub(super) fn into_rows(
        self,
        names: &Names,
        files: &[String],
        skip_invalid: bool,
        ds: &mut Dataset,
    ) -> Result<Vec<TeamSeason>, DataError> {
        let Standings { merged, index } = self;
        drop(index);
        // Names are ranked once, so the sort compares integers (the empty league, shown as none,
        // ranks first as none does).
        let (league_rank, team_rank) = (names.leagues.rank(), names.teams.rank());
        // Sorted as small (key, position) pairs rather than moving the records themselves.
        let mut order: Vec<(i32, u32, u32, u32)> = merged
            .iter()
            .enumerate()
            .map(|(at, &((season, league, team), ..))| {
                let (l, t) = (league_rank[league as usize], team_rank[team as usize]);
                (season, l, t, at as u32)
            })
            .collect();
        order.sort_unstable();
        let mut rows: Vec<TeamSeason> = Vec::with_capacity(merged.len());
        for &(.., at) in &order {
            let ((season, league, team), ref rec, file_no) = merged[at as usize];
            let league = Some(names.leagues.name(league))
                .filter(|l| !l.is_empty())
                .map(str::to_string);
            let team = names.teams.name(team).to_string();
            let at = Location {
                file: files[file_no].clone(),
                line: Some(rec.first_line),
                column: None,
            };
            if rec.runs_scored == 0 && rec.runs_allowed == 0 {
                let reason = format!(
                    "{} {season}: runs scored and runs allowed are both 0 in every game",
                    super::super::input::shown(&team)
                );
                ds.reject(skip_invalid, Rejection { at, reason })?;
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
        // Already in (season, league, team) order: the ranks sort as the names do.
        debug_assert!(rows.is_sorted_by(|a, b| {
            (a.season, &a.league, &a.team) <= (b.season, &b.league, &b.team)
        }));
        Ok(rows)
    }
}
