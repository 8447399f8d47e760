//! `runcal.outlook/1`: serde structs in the contract's key order.

use serde::Serialize;

use super::{OutlookReport, SCHEMA};
use crate::outlook::league::GroupSource;
use crate::outlook::{HomePrior, Percentile, ShrinkageSource};
use crate::report::json::{Named, Num, params_of};
use crate::report::luck::SourceJson;

#[derive(Serialize)]
struct PercentileJson {
    wins: u64,
    level: Num,
}

impl From<&Percentile> for PercentileJson {
    fn from(p: &Percentile) -> PercentileJson {
        PercentileJson {
            wins: p.wins,
            level: Num(p.level),
        }
    }
}

#[derive(Serialize)]
struct PercentilesJson {
    p10: PercentileJson,
    p50: PercentileJson,
    p90: PercentileJson,
}

#[derive(Serialize)]
struct DistributionJson {
    from: u64,
    shares: Vec<Num>,
}

#[derive(Serialize)]
struct ClubJson<'a> {
    group: &'a str,
    team: &'a str,
    wins: u64,
    losses: u64,
    ties: u64,
    games_left: u64,
    strength: Num,
    strength_sd: Num,
    schedule_strength: Option<Num>,
    mean_final_wins: Num,
    percentiles: PercentilesJson,
    range_mass: Num,
    chance_first: Num,
    chance_target: Option<Num>,
    final_wins_distribution: DistributionJson,
}

#[derive(Serialize)]
struct ShrinkageJson {
    run_based_games: Num,
    dispersion: Num,
    source: &'static str,
    actual_record_games: Option<Num>,
}

#[derive(Serialize)]
struct Record {
    wins: Num,
    games: Num,
}

#[derive(Serialize)]
struct PriorJson {
    win_pct: Num,
    games: Num,
    source: &'static str,
    earlier_games: Option<Num>,
}

#[derive(Serialize)]
struct HomeJson {
    win_pct: Num,
    this_season: Record,
    prior: PriorJson,
}

#[derive(Serialize)]
struct ScheduleJson {
    log_unplayed: u64,
    log_after_as_of: u64,
    scheduled: u64,
    scheduled_in_log: u64,
    postponed: u64,
    earlier_unplayed: u64,
}

#[derive(Serialize)]
#[serde(rename_all = "lowercase")]
enum GroupsFrom<'a> {
    File(&'a str),
    Column(&'a str),
}

/// `runcal.outlook/1`.
#[derive(Serialize)]
pub struct OutlookJson<'a> {
    schema: &'static str,
    season: i32,
    as_of: Option<String>,
    last_played: Option<String>,
    model: &'static str,
    params: Named<'a, f64>,
    source: SourceJson<'a>,
    rows_used: usize,
    rows_rejected: usize,
    simulations: u64,
    seed: u64,
    strength_draw: bool,
    games_left: usize,
    shrinkage: ShrinkageJson,
    home: HomeJson,
    schedule: ScheduleJson,
    groups_from: Option<GroupsFrom<'a>>,
    range_level: f64,
    target_wins: Option<u64>,
    ties_for_first: &'static str,
    clubs: Vec<ClubJson<'a>>,
    caution: &'static str,
}

pub fn render(r: &OutlookReport) -> OutlookJson<'_> {
    let o = &r.outlook;
    let s = &o.shrinkage;
    let (shrink_source, actual) = match s.source {
        ShrinkageSource::Profile => ("profile", None),
        ShrinkageSource::FromActualRecord { actual_games } => {
            ("from_actual_record", Some(Num(actual_games)))
        }
        ShrinkageSource::Given => ("given", None),
    };
    let (prior_source, earlier_games) = match o.home.prior_source {
        HomePrior::EarlierSeasons { games } => ("earlier_seasons", Some(Num(games))),
        HomePrior::CommonPractice => ("common_practice", None),
    };
    let c = &r.counts;
    OutlookJson {
        schema: SCHEMA,
        season: r.season,
        as_of: r.as_of.map(|d| d.to_string()),
        last_played: r.last_played.map(|d| d.to_string()),
        model: r.model.kind.name(),
        params: params_of(&r.model),
        source: SourceJson::of(&r.source),
        rows_used: r.rows_used,
        rows_rejected: r.rows_rejected,
        simulations: o.settings.simulations,
        seed: o.settings.seed,
        strength_draw: o.settings.draw_strength,
        games_left: o.games_left,
        shrinkage: ShrinkageJson {
            run_based_games: Num(s.run_based_games),
            dispersion: Num(s.dispersion),
            source: shrink_source,
            actual_record_games: actual,
        },
        home: HomeJson {
            win_pct: Num(o.home_win_pct),
            this_season: Record {
                wins: Num(o.home.observed.wins),
                games: Num(o.home.observed.games),
            },
            prior: PriorJson {
                win_pct: Num(o.home.prior_win_pct),
                games: Num(o.home.prior_games),
                source: prior_source,
                earlier_games,
            },
        },
        schedule: ScheduleJson {
            log_unplayed: c.log_unplayed,
            log_after_as_of: c.log_after_as_of,
            scheduled: c.scheduled,
            scheduled_in_log: c.scheduled_in_log,
            postponed: c.postponed,
            earlier_unplayed: c.earlier_unplayed,
        },
        groups_from: match &r.groups_from {
            GroupSource::File(p) => Some(GroupsFrom::File(p)),
            GroupSource::LogColumn(h) => Some(GroupsFrom::Column(h)),
            GroupSource::Single => None,
        },
        range_level: crate::outlook::RANGE_LEVEL,
        target_wins: o.settings.target_wins,
        ties_for_first: "credit split equally",
        clubs: r
            .clubs()
            .map(|c| ClubJson {
                group: &c.group,
                team: &c.team,
                wins: c.wins,
                losses: c.losses,
                ties: c.ties,
                games_left: c.games_left,
                strength: Num(c.strength),
                strength_sd: Num(c.strength_sd),
                schedule_strength: c.schedule_strength.map(Num),
                mean_final_wins: Num(c.mean_final_wins),
                percentiles: PercentilesJson {
                    p10: (&c.low).into(),
                    p50: (&c.median).into(),
                    p90: (&c.high).into(),
                },
                range_mass: Num(c.range_mass),
                chance_first: Num(c.chance_first),
                chance_target: c.chance_target.map(Num),
                final_wins_distribution: DistributionJson {
                    from: c.wins,
                    shares: c.distribution.iter().map(|&v| Num(v)).collect(),
                },
            })
            .collect(),
        caution: crate::outlook::CAUTION,
    }
}
