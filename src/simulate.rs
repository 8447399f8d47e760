//! Synthetic leagues with a known truth.
//!
//! Game scores are independent Weibull draws: S. J. Miller ("A derivation of the Pythagorean
//! won-loss formula in baseball", Chance 20(1), 2007) shows that a team whose runs scored and allowed
//! are independent Weibulls of shape γ wins RS^γ/(RS^γ+RA^γ) of its games. Team strength is an offence
//! and a defence multiplier, redrawn every season.

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Binomial, Distribution, Normal, Weibull};
use statrs::function::gamma::gamma;

use crate::data::gamelog::Date;
use crate::model::Model;

/// Names of the fictional league's clubs; larger leagues continue as "Club 21", "Club 22", ….
const CLUBS: [&str; 20] = [
    "Ashford Kestrels",
    "Bramblebay Otters",
    "Cobalt Creek Miners",
    "Dunmore Lanterns",
    "Eastwick Ferrymen",
    "Fallowfield Foxes",
    "Greystone Gulls",
    "Harrowgate Hornets",
    "Ironvale Rams",
    "Juniper Falls Pilots",
    "Kestrel Point Tides",
    "Larkspur Lumberjacks",
    "Millbrook Comets",
    "Northmoor Stags",
    "Oakhollow Owls",
    "Pennywell Sparrows",
    "Quarry Hill Masons",
    "Riverbend Rafters",
    "Saltmarsh Herons",
    "Thornbury Badgers",
];

pub fn club_name(i: usize) -> String {
    CLUBS
        .get(i)
        .map_or_else(|| format!("Club {}", i + 1), |s| (*s).to_string())
}

/// What to simulate.
#[derive(Debug, Clone)]
pub struct Design {
    pub teams: usize,
    pub seasons: usize,
    pub games: usize,
    /// Weibull shape of every team's scores.
    pub shape: f64,
    /// Mean runs per team per game in an average matchup.
    pub runs_per_game: f64,
    /// Standard deviation of ln(offence) and ln(defence) multipliers.
    pub talent_sd: f64,
    pub first_season: i32,
    pub league: String,
    pub seed: u64,
}

/// Limits of a simulated league (documented in the README): sizes that fit in memory and time, run
/// totals far from overflow, and four-digit years.
pub mod limits {
    pub const MAX_TEAMS: usize = 10_000;
    pub const MAX_SEASONS: usize = 100_000;
    pub const MAX_GAMES: usize = 10_000;
    /// Team-seasons held in memory at once (a game log streams, but is held to the same size).
    pub const MAX_TEAM_SEASONS: usize = 5_000_000;
    pub const MAX_RUNS_PER_GAME: f64 = 1_000.0;
    pub const MAX_TALENT_SD: f64 = 1.0;
    /// Weibull shapes (Pythagorean exponents) from 0.5 to 20 cover every sport's published values
    /// with room; a smaller shape has tails whose run totals no integer holds.
    pub const SHAPE_RANGE: (f64, f64) = (0.5, 20.0);
    pub const YEAR_RANGE: (i32, i32) = (1, 9999);
}

impl Design {
    /// A league like the demo's (Weibull shape 1.83, 4.5 runs per team per game, talent sd 0.08),
    /// seasons numbered from 1.
    pub fn like_demo(teams: usize, seasons: usize, games: usize, seed: u64) -> Design {
        Design {
            teams,
            seasons,
            games,
            seed,
            shape: 1.83,
            runs_per_game: 4.5,
            talent_sd: 0.08,
            first_season: 1,
            league: "Simulated".to_string(),
        }
    }

    /// Check a Weibull league: the cheap invariant first (an even number of teams, so every team
    /// plays every round), then sizes and parameters.
    pub fn validate(&self) -> Result<(), String> {
        if self.teams < 2 || !self.teams.is_multiple_of(2) {
            return Err(format!(
                "--teams must be an even number of at least 2 (every team plays every round), got {}",
                self.teams
            ));
        }
        self.validate_common()
    }

    /// Checks shared by both kinds of league: sizes against [`limits`], parameter domains, years.
    pub fn validate_common(&self) -> Result<(), String> {
        use limits::*;
        for (name, v, max) in [
            ("--teams", self.teams, MAX_TEAMS),
            ("--seasons", self.seasons, MAX_SEASONS),
            ("--games", self.games, MAX_GAMES),
        ] {
            if v == 0 || v > max {
                return Err(format!("{name} must lie from 1 to {max}, got {v}"));
            }
        }
        if self.teams * self.seasons > MAX_TEAM_SEASONS {
            return Err(format!(
                "--teams × --seasons is {}; runcal simulates at most {MAX_TEAM_SEASONS} team-seasons",
                self.teams * self.seasons
            ));
        }
        let (lo, hi) = SHAPE_RANGE;
        if !(self.shape >= lo && self.shape <= hi) {
            return Err(format!(
                "--exponent (the Weibull shape) must lie from {lo} to {hi}, got {:?}",
                self.shape
            ));
        }
        if !(self.runs_per_game > 0.0 && self.runs_per_game <= MAX_RUNS_PER_GAME) {
            return Err(format!(
                "--runs-per-game must be positive and at most {MAX_RUNS_PER_GAME}, got {:?}",
                self.runs_per_game
            ));
        }
        if !(self.talent_sd >= 0.0 && self.talent_sd <= MAX_TALENT_SD) {
            return Err(format!(
                "--talent-sd must lie from 0 to {MAX_TALENT_SD}, got {:?}",
                self.talent_sd
            ));
        }
        let (first, last) = YEAR_RANGE;
        let last_season = i64::from(self.first_season) + self.seasons as i64 - 1;
        if self.first_season < first || last_season > i64::from(last) {
            return Err(format!(
                "seasons {}–{last_season} leave the years {first}–{last} (--first-season, --seasons)",
                self.first_season
            ));
        }
        // The last round's date must keep a four-digit year too (a long season runs past New Year).
        let too_late = |when: String| {
            format!(
                "the last game would be played {when}: choose an earlier --first-season or fewer --games"
            )
        };
        match season_day(last_season as i32, self.games - 1) {
            Ok(day) if i32::from(day.year()) > last => return Err(too_late(format!("on {day}"))),
            Ok(_) => {}
            Err(_) => return Err(too_late("after 9999-12-31, past the calendar".to_string())),
        }
        Ok(())
    }
}

/// One simulated game.
#[derive(Debug, Clone, PartialEq)]
pub struct Game {
    pub season: i32,
    pub date: Date,
    pub home: usize,
    pub away: usize,
    pub home_score: u64,
    pub away_score: u64,
}

/// The date `offset` days after 1 April of `year`; an error past the calendar's years (jiff's,
/// -9999 to 9999), which a game log could not hold.
pub fn season_day(year: i32, offset: usize) -> Result<Date, String> {
    let out_of_range = || format!("season {year}, day {offset}: the date is beyond the year 9999");
    let year = i16::try_from(year).map_err(|_| out_of_range())?;
    let opening = Date::new(year, 4, 1).map_err(|_| out_of_range())?;
    let days = i64::try_from(offset).map_err(|_| out_of_range())?;
    opening
        .checked_add(
            jiff::Span::new()
                .try_days(days)
                .map_err(|_| out_of_range())?,
        )
        .map_err(|_| out_of_range())
}

/// Weibull-score games of a league, handed to `sink` in date order. Each round pairs every team once
/// (a random matching, a coin for home field); runs are the scores rounded, and a tie after rounding
/// goes to the side with the higher unrounded score, which gets one more run (an extra-innings run).
pub fn games(design: &Design, mut sink: impl FnMut(&Game)) -> Result<(), String> {
    design.validate()?;
    let mut rng = ChaCha8Rng::seed_from_u64(design.seed);
    let talent = Normal::new(0.0, design.talent_sd).map_err(|e| e.to_string())?;
    // E[Weibull(λ, γ)] = λ·Γ(1 + 1/γ), so the scale that gives mean μ is μ/Γ(1 + 1/γ).
    let scale_per_run = 1.0 / gamma(1.0 + 1.0 / design.shape);
    let unit = Weibull::new(1.0, design.shape).map_err(|e| e.to_string())?;
    let n = design.teams;
    let mut order: Vec<usize> = (0..n).collect();
    for s in 0..design.seasons {
        let season = design.first_season + s as i32;
        let offence: Vec<f64> = (0..n).map(|_| talent.sample(&mut rng).exp()).collect();
        let defence: Vec<f64> = (0..n).map(|_| talent.sample(&mut rng).exp()).collect();
        for round in 0..design.games {
            let date = season_day(season, round)?;
            // Fisher–Yates shuffle, then pair neighbours.
            for i in (1..n).rev() {
                let j = rng.random_range(0..=i);
                order.swap(i, j);
            }
            for pair in order.chunks_exact(2) {
                let (home, away) = if rng.random_bool(0.5) {
                    (pair[0], pair[1])
                } else {
                    (pair[1], pair[0])
                };
                let mean_home = design.runs_per_game * offence[home] * defence[away];
                let mean_away = design.runs_per_game * offence[away] * defence[home];
                let x_home: f64 = mean_home * scale_per_run * unit.sample(&mut rng);
                let x_away: f64 = mean_away * scale_per_run * unit.sample(&mut rng);
                let mut home_score = x_home.round() as u64;
                let mut away_score = x_away.round() as u64;
                if home_score == away_score {
                    if x_home >= x_away {
                        home_score += 1;
                    } else {
                        away_score += 1;
                    }
                }
                sink(&Game {
                    season,
                    date,
                    home,
                    away,
                    home_score,
                    away_score,
                });
            }
        }
    }
    Ok(())
}

/// A simulated team-season.
#[derive(Debug, Clone, PartialEq)]
pub struct SeasonRow {
    pub season: i32,
    pub team: usize,
    pub games: u64,
    pub wins: u64,
    pub losses: u64,
    pub runs_scored: u64,
    pub runs_allowed: u64,
}

impl SeasonRow {
    /// A team-season before its first game.
    pub fn empty(season: i32, team: usize) -> SeasonRow {
        SeasonRow {
            season,
            team,
            games: 0,
            wins: 0,
            losses: 0,
            runs_scored: 0,
            runs_allowed: 0,
        }
    }

    /// Count one game (simulated games never tie).
    pub fn add_game(&mut self, scored: u64, allowed: u64) {
        self.games += 1;
        self.runs_scored += scored;
        self.runs_allowed += allowed;
        if scored > allowed {
            self.wins += 1;
        } else {
            self.losses += 1;
        }
    }

    /// The row as a loaded team-season (club names from the fictional league).
    pub fn team_season(&self, league: Option<&str>) -> crate::data::TeamSeason {
        crate::data::TeamSeason {
            season: self.season,
            league: league.map(str::to_string),
            team: club_name(self.team),
            wins: self.wins,
            losses: self.losses,
            ties: 0,
            runs_scored: self.runs_scored as f64,
            runs_allowed: self.runs_allowed as f64,
            games: self.games,
            one_run: None,
            at: crate::error::Location {
                file: "simulated".to_string(),
                line: None,
                column: None,
            },
        }
    }
}

/// Team-season totals of a Weibull league.
pub fn seasons(design: &Design) -> Result<Vec<SeasonRow>, String> {
    design.validate()?;
    let n = design.teams;
    let mut rows: Vec<SeasonRow> = Vec::with_capacity(n * design.seasons);
    for s in 0..design.seasons {
        for team in 0..n {
            rows.push(SeasonRow::empty(design.first_season + s as i32, team));
        }
    }
    games(design, |g| {
        let base = (g.season - design.first_season) as usize * n;
        for (team, scored, allowed) in [
            (g.home, g.home_score, g.away_score),
            (g.away, g.away_score, g.home_score),
        ] {
            rows[base + team].add_game(scored, allowed);
        }
    })?;
    Ok(rows)
}

/// Team-seasons whose expected win% is exactly a given model's: each season draws a run environment
/// uniformly from `rpg_range` (both teams, per game), each team a run ratio, and wins are binomial.
pub fn truth_seasons(
    design: &Design,
    truth: &Model,
    rpg_range: (f64, f64),
) -> Result<Vec<SeasonRow>, String> {
    design.validate_common()?;
    truth.validate()?;
    let max = 2.0 * limits::MAX_RUNS_PER_GAME;
    if !(rpg_range.0 > 0.0 && rpg_range.1 >= rpg_range.0 && rpg_range.1 <= max) {
        return Err(format!(
            "--rpg-range must be positive, ascending and at most {max}, got {}-{}",
            rpg_range.0, rpg_range.1
        ));
    }
    let mut rng = ChaCha8Rng::seed_from_u64(design.seed);
    let spread = Normal::new(0.0, 2.0 * design.talent_sd).map_err(|e| e.to_string())?;
    let g = design.games as f64;
    let mut rows = Vec::new();
    for s in 0..design.seasons {
        let rpg = if rpg_range.1 > rpg_range.0 {
            rng.random_range(rpg_range.0..rpg_range.1)
        } else {
            rpg_range.0
        };
        for team in 0..design.teams {
            let ratio: f64 = spread.sample(&mut rng).exp();
            let runs = g * rpg;
            let rs = (runs * ratio / (1.0 + ratio)).round().max(1.0);
            let ra = (runs / (1.0 + ratio)).round().max(1.0);
            let p = truth.expected_win_pct(rs, ra, g).clamp(0.0, 1.0);
            let wins = Binomial::new(design.games as u64, p)
                .map_err(|e| e.to_string())?
                .sample(&mut rng);
            rows.push(SeasonRow {
                season: design.first_season + s as i32,
                team,
                games: design.games as u64,
                wins,
                losses: design.games as u64 - wins,
                runs_scored: rs as u64,
                runs_allowed: ra as u64,
            });
        }
    }
    Ok(rows)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn days_roll_over_months_and_years() {
        assert_eq!(season_day(2026, 30).unwrap().to_string(), "2026-05-01");
        assert_eq!(season_day(2026, 275).unwrap().to_string(), "2027-01-01");
    }

    #[test]
    fn every_team_plays_every_round_and_totals_balance() {
        let d = Design {
            teams: 6,
            seasons: 2,
            games: 10,
            shape: 1.8,
            runs_per_game: 4.5,
            talent_sd: 0.1,
            first_season: 2001,
            league: "Test".into(),
            seed: 3,
        };
        let rows = seasons(&d).unwrap();
        assert!(
            rows.iter()
                .all(|r| r.games == 10 && r.wins + r.losses == 10)
        );
        let wins: u64 = rows.iter().map(|r| r.wins).sum();
        assert_eq!(wins, 6 * 2 * 10 / 2, "every game has one winner");
        let rs: u64 = rows.iter().map(|r| r.runs_scored).sum();
        let ra: u64 = rows.iter().map(|r| r.runs_allowed).sum();
        assert_eq!(rs, ra, "every run scored is a run allowed");
    }
}
