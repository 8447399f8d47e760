//! Assembling the league to simulate: the season's clubs from the loaded team-seasons, their groups,
//! the games left as club indices, and the shrinkage and home edge to apply.

use std::collections::{BTreeMap, HashMap};

use super::strength::{HomeEdge, Shrinkage, ShrinkageSource};
use super::{Club, League};
use crate::data::schedule::SeasonPlan;
use crate::data::{Table, TeamSeason};
use crate::error::Error;
use crate::model::{Model, Row, predict};
use crate::profile::Profile;

/// Where the clubs' groups came from.
#[derive(Debug, Clone, PartialEq)]
pub enum GroupSource {
    /// A teams file.
    File(String),
    /// A column of the game log (its header).
    LogColumn(String),
    /// No groups: the whole league is one.
    Single,
}

/// Name of the one group when there are none.
pub const WHOLE_LEAGUE: &str = "whole league";

/// The season's clubs and games. `rows` and `t` are the loaded team-seasons (every season); only
/// the plan's season is used.
pub fn league(
    rows: &[TeamSeason],
    t: &Table,
    model: &Model,
    plan: &SeasonPlan,
    groups_file: Option<(&str, &BTreeMap<String, String>)>,
) -> Result<(League, GroupSource), Error> {
    let mut clubs: Vec<Club> = Vec::new();
    let mut index: HashMap<&str, u32> = HashMap::new();
    for (i, r) in rows.iter().enumerate() {
        if r.season != plan.season {
            continue;
        }
        if index.insert(r.team.as_str(), clubs.len() as u32).is_some() {
            return Err(Error::Usage(format!(
                "{}: '{}' appears in two leagues in {}; keep one with --league",
                r.at, r.team, plan.season
            )));
        }
        clubs.push(Club {
            team: r.team.clone(),
            group: 0,
            wins: r.wins,
            losses: r.losses,
            ties: r.ties,
            decisions: t.decisions[i],
            expected_win_pct: predict(model.kind, &model.params, &Row::of(t, i)),
        });
    }
    let mut games = Vec::with_capacity(plan.remaining.len());
    for f in &plan.remaining {
        let id = |team: &str| {
            index.get(team).copied().ok_or_else(|| {
                Error::Usage(format!(
                    "{}: '{team}' has no played games in the log's {} season, so its strength is unknown",
                    f.at, plan.season
                ))
            })
        };
        games.push((id(&f.home)?, id(&f.away)?));
    }
    let (names, source): (&BTreeMap<String, String>, GroupSource) = match groups_file {
        Some((path, g)) => (g, GroupSource::File(path.to_string())),
        None => match &plan.group_column {
            Some(h) if !plan.groups.is_empty() => (&plan.groups, GroupSource::LogColumn(h.clone())),
            _ => (&plan.groups, GroupSource::Single),
        },
    };
    let mut group_names: Vec<String> = Vec::new();
    for club in &mut clubs {
        let name = match source {
            GroupSource::Single => WHOLE_LEAGUE,
            _ => names.get(&club.team).map(String::as_str).ok_or_else(|| {
                let from = match &source {
                    GroupSource::File(p) => p.clone(),
                    _ => "the log's group column".to_string(),
                };
                Error::Usage(format!("'{}' has no group in {from}", club.team))
            })?,
        };
        club.group = match group_names.iter().position(|g| g == name) {
            Some(g) => g,
            None => {
                group_names.push(name.to_string());
                group_names.len() - 1
            }
        };
    }
    Ok((
        League {
            clubs,
            group_names,
            games,
        },
        source,
    ))
}

/// The shrinkage to apply, in order of precedence: `--regress-games`; the profile's run-based
/// constant; the actual record's constant saved in a profile, times (1 − φ); the same estimated on
/// the loaded table. φ comes from the
/// profile, else from the loaded table under the model.
pub fn shrinkage(
    given: Option<f64>,
    profile: Option<&Profile>,
    t: &Table,
    model: &Model,
) -> Result<Shrinkage, Error> {
    let phi = profile
        .and_then(|p| p.dispersion)
        .or_else(|| {
            crate::fit::stderr::std_errors(t, model.kind, &model.params).map(|s| s.dispersion)
        })
        .filter(|d| d.is_finite() && *d > 0.0)
        .ok_or_else(|| {
            Error::Usage(
                "cannot measure the dispersion of these data; pass --profile from `runcal fit --save-profile`"
                    .to_string(),
            )
        })?;
    if let Some(k) = given {
        if !(k.is_finite() && k >= 0.0) {
            return Err(Error::Usage(format!(
                "--regress-games must be a non-negative number, got {k}"
            )));
        }
        let mut s = Shrinkage::from_actual_record(0.0, phi);
        s.run_based_games = k;
        s.source = ShrinkageSource::Given;
        return Ok(s);
    }
    if let Some(k) = profile.and_then(|p| p.run_based_regression_games) {
        let mut s = Shrinkage::from_actual_record(0.0, phi);
        s.run_based_games = k;
        s.source = ShrinkageSource::Profile;
        return Ok(s);
    }
    let k = profile
        .and_then(|p| p.regression_games)
        .or_else(|| crate::luck::regression_games(t))
        .ok_or_else(|| {
            Error::Usage(
                "cannot estimate the regression toward .500 from these data (win% spread no larger than chance); pass --regress-games K or --profile".to_string(),
            )
        })?;
    Ok(Shrinkage::from_actual_record(k, phi))
}

/// The home edge from the plan's home records.
pub fn home_edge(plan: &SeasonPlan) -> HomeEdge {
    HomeEdge::estimate(plan.home_this_season, plan.home_earlier)
}
