//! The rest-of-season outlook: where each club finishes given who it still has to play.
//!
//! Each club's strength is its run-based win% to date shrunk toward .500 (the estimate `luck`
//! projects from); each game left is a log5 matchup with the league's home edge. Every simulated
//! season first draws each strength from its beta posterior, then plays the games left; the
//! outlook summarises the final-wins distribution, the chance of finishing first in the group (ties
//! for first share the credit equally) and the chance of reaching a target.

pub mod engine;
pub mod league;
pub mod strength;
mod summary;

pub use strength::{Beta, HomeEdge, HomePrior, Shrinkage, ShrinkageSource, log5_home};
pub use summary::{ClubOutlook, GroupOutlook, Percentile};

use crate::error::Error;

/// The caution every outlook output carries.
pub const CAUTION: &str = "These are descriptive simulations under a simple model (run-based strength, log5 matchups, \
one league-wide home edge), not predictions to bet on: runcal is not wagering or financial advice. Injuries, trades \
and schedule changes are outside the model, and strength estimates are uncertain.";

/// Most simulated seasons one run accepts.
pub const MAX_SIMULATIONS: u64 = 1_000_000;
/// Most simulated games (seasons × games left) one run accepts: about a minute on two cores.
pub const MAX_SIMULATED_GAMES: u64 = 20_000_000_000;
/// Most clubs one run accepts.
pub const MAX_CLUBS: usize = 10_000;
/// The central range's nominal level: from the 10th to the 90th percentile.
pub const RANGE_LEVEL: f64 = 0.8;

/// A club as the outlook sees it.
#[derive(Debug, Clone, PartialEq)]
pub struct Club {
    pub team: String,
    /// Index into [`League::group_names`].
    pub group: usize,
    pub wins: u64,
    pub losses: u64,
    pub ties: u64,
    /// Decisions as the win% counts them (ties as half, or left out).
    pub decisions: f64,
    /// The model's win% from runs scored and allowed so far.
    pub expected_win_pct: f64,
}

/// The clubs of one season, their groups and the games they have left.
#[derive(Debug, Clone, PartialEq)]
pub struct League {
    pub clubs: Vec<Club>,
    pub group_names: Vec<String>,
    /// (home, away) indices into `clubs`.
    pub games: Vec<(u32, u32)>,
}

/// How to simulate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Settings {
    pub simulations: u64,
    pub seed: u64,
    /// Draw every club's strength from its posterior in each simulated season. Off, the strengths
    /// are taken as known and finishing chances are overconfident.
    pub draw_strength: bool,
    pub target_wins: Option<u64>,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            simulations: 10_000,
            seed: 1,
            draw_strength: true,
            target_wins: None,
        }
    }
}

/// The result, ranked: groups by name, clubs within a group by chance of first place, then mean
/// final wins, then name.
#[derive(Debug, Clone, PartialEq)]
pub struct Outlook {
    pub settings: Settings,
    pub shrinkage: Shrinkage,
    pub home: HomeEdge,
    /// The home win% the games were played with (the posterior mean).
    pub home_win_pct: f64,
    pub games_left: usize,
    pub groups: Vec<GroupOutlook>,
}

impl Settings {
    /// Check the number of simulations (before any input is read).
    pub fn validate(&self) -> Result<(), Error> {
        if !(1..=MAX_SIMULATIONS).contains(&self.simulations) {
            return Err(Error::Usage(format!(
                "--simulations must be between 1 and {MAX_SIMULATIONS}, got {}",
                self.simulations
            )));
        }
        Ok(())
    }
}

impl League {
    /// Check sizes and indices before any work.
    pub fn validate(&self, settings: &Settings) -> Result<(), Error> {
        settings.validate()?;
        if self.clubs.is_empty() {
            return Err(Error::Usage("no clubs to look ahead for".to_string()));
        }
        if self.clubs.len() > MAX_CLUBS {
            return Err(Error::Usage(format!(
                "{} clubs: more than the {MAX_CLUBS} one run accepts",
                self.clubs.len()
            )));
        }
        let work = settings.simulations.saturating_mul(self.games.len() as u64);
        if work > MAX_SIMULATED_GAMES {
            return Err(Error::Usage(format!(
                "{} simulations of {} games is {work} simulated games, more than the {MAX_SIMULATED_GAMES} one run accepts; lower --simulations",
                settings.simulations,
                self.games.len()
            )));
        }
        let n = self.clubs.len() as u32;
        if self.games.iter().any(|&(h, a)| h >= n || a >= n || h == a)
            || self.clubs.iter().any(|c| c.group >= self.group_names.len())
        {
            return Err(Error::Usage(
                "a game or group names a club that does not exist".to_string(),
            ));
        }
        Ok(())
    }
}

/// The home side's chance in each game left, at the clubs' posterior-mean strengths.
pub fn game_probabilities(league: &League, shrinkage: &Shrinkage, home: &HomeEdge) -> Vec<f64> {
    let strength: Vec<f64> = posteriors(league, shrinkage)
        .iter()
        .map(Beta::mean)
        .collect();
    let h = home.win_pct();
    league
        .games
        .iter()
        .map(|&(a, b)| log5_home(strength[a as usize], strength[b as usize], h))
        .collect()
}

fn posteriors(league: &League, shrinkage: &Shrinkage) -> Vec<Beta> {
    league
        .clubs
        .iter()
        .map(|c| shrinkage.posterior(c.decisions, c.expected_win_pct))
        .collect()
}

/// The whole outlook from a season's rows, its plan (games played and left) and the model: the
/// league with its groups (a teams file, else the log's column, else one group), the strength
/// shrinkage (`regress_games`, else the profile's, else the data's) and the home edge of the plan,
/// then [`simulate`]. `runcal outlook` and the weekly document both call this.
#[allow(clippy::too_many_arguments)]
pub fn for_season(
    rows: &[crate::data::TeamSeason],
    table: &crate::data::Table,
    model: &crate::model::Model,
    plan: &crate::data::schedule::SeasonPlan,
    groups_file: Option<(&str, &std::collections::BTreeMap<String, String>)>,
    regress_games: Option<f64>,
    profile: Option<&crate::profile::Profile>,
    settings: &Settings,
) -> Result<(Outlook, league::GroupSource, usize), Error> {
    let (league, source) = league::league(rows, table, model, plan, groups_file)?;
    let shrinkage = league::shrinkage(regress_games, profile, table, model)?;
    let outlook = simulate(&league, &shrinkage, &league::home_edge(plan), settings)?;
    Ok((outlook, source, league.clubs.len()))
}

/// Simulate the rest of the season.
pub fn simulate(
    league: &League,
    shrinkage: &Shrinkage,
    home: &HomeEdge,
    settings: &Settings,
) -> Result<Outlook, Error> {
    league.validate(settings)?;
    let posteriors = posteriors(league, shrinkage);
    let fixed = game_probabilities(league, shrinkage, home);
    let banked: Vec<u64> = league.clubs.iter().map(|c| c.wins).collect();
    let group: Vec<usize> = league.clubs.iter().map(|c| c.group).collect();
    let plan = engine::Plan {
        posteriors: &posteriors,
        home: home.posterior(),
        banked: &banked,
        group: &group,
        groups: league.group_names.len(),
        games: &league.games,
        fixed: &fixed,
        draw_strength: settings.draw_strength,
    };
    let tally = engine::run(&plan, settings.simulations, settings.seed);
    let groups = summary::summarise(league, &posteriors, &tally, settings);
    Ok(Outlook {
        settings: *settings,
        shrinkage: *shrinkage,
        home: *home,
        home_win_pct: home.win_pct(),
        games_left: league.games.len(),
        groups,
    })
}
