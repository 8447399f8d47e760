//! `runcal.digest/1`: the weekly document's numbers as JSON, for scripts that build their own page.

use serde::Serialize;

use crate::digest::{Change, Club, Digest};
use crate::report::LuckReport;
use crate::report::json::{Named, Num, Pair, named};
use crate::report::luck::{LuckJson, luck_json as luck};

pub const SCHEMA: &str = "runcal.digest/1";

#[derive(Serialize)]
struct ChangeJson {
    before: Num,
    after: Num,
    change: Num,
}

fn change(c: Option<Change>) -> Option<ChangeJson> {
    c.map(|c| ChangeJson {
        before: Num(c.before),
        after: Num(c.after),
        change: Num(c.change),
    })
}

#[derive(Serialize)]
struct ClubJson<'a> {
    season: i32,
    league: Option<&'a str>,
    team: &'a str,
}

fn club(c: &Club) -> ClubJson<'_> {
    ClubJson {
        season: c.season,
        league: c.league.as_deref(),
        team: &c.team,
    }
}

#[derive(Serialize)]
struct CalibrationJson<'a> {
    model: &'static str,
    params: Named<'a, f64>,
    profile: &'a str,
    profile_runcal_version: &'a str,
    fitted_seasons: [i32; 2],
    fitted_fingerprint: &'a str,
    dispersion: Option<Num>,
    season_games: u64,
}

#[derive(Serialize)]
struct SourceJson<'a> {
    file: &'a str,
    fingerprint: &'a str,
}

#[derive(Serialize)]
struct WeekJson<'a> {
    #[serde(flatten)]
    club: ClubJson<'a>,
    games_before: u64,
    games_after: u64,
    wins_over_expected: Option<ChangeJson>,
    projected_wins: Option<ChangeJson>,
    /// Chance of finishing first in the group (schedule-aware simulation), then and now.
    first_place_chance: Option<ChangeJson>,
}

impl<'a> From<&'a crate::digest::ClubChange> for WeekJson<'a> {
    fn from(w: &'a crate::digest::ClubChange) -> WeekJson<'a> {
        WeekJson {
            club: club(&w.club),
            games_before: w.games_before,
            games_after: w.games_after,
            wins_over_expected: change(w.wins_over_expected),
            projected_wins: change(w.projected_wins),
            first_place_chance: change(w.first_place),
        }
    }
}

#[derive(Serialize)]
struct MoverJson<'a> {
    measure: &'static str,
    #[serde(flatten)]
    club: ClubJson<'a>,
    #[serde(flatten)]
    change: Option<ChangeJson>,
}

impl<'a> From<&'a crate::digest::Mover> for MoverJson<'a> {
    fn from(m: &'a crate::digest::Mover) -> MoverJson<'a> {
        MoverJson {
            measure: m.measure.name(),
            club: club(&m.club),
            change: change(Some(m.change)),
        }
    }
}

#[derive(Serialize)]
struct OutlookJson<'a> {
    #[serde(flatten)]
    club: ClubJson<'a>,
    wins: u64,
    losses: u64,
    ties: u64,
    remaining_games: u64,
    projected_wins: Num,
    projected_interval: Pair,
    first_place_chance: Option<Num>,
}

/// `runcal.digest/1`.
#[derive(Serialize)]
pub struct DigestJson<'a> {
    schema: &'static str,
    caution: &'static str,
    runcal_version: &'static str,
    as_of: String,
    compare_to: String,
    calibration: CalibrationJson<'a>,
    sources: Vec<SourceJson<'a>>,
    /// `runcal luck --format json` at --as-of, and at --compare-to (null without games by then).
    luck: LuckJson<'a>,
    luck_before: Option<LuckJson<'a>>,
    week: Vec<WeekJson<'a>>,
    movers: Vec<MoverJson<'a>>,
    projection_interval_level: f64,
    outlook: Vec<OutlookJson<'a>>,
}

/// The digest, with the luck reports of its two snapshots.
pub fn digest<'a>(
    d: &'a Digest,
    now: &'a LuckReport,
    before: Option<&'a LuckReport>,
) -> DigestJson<'a> {
    let c = &d.calibration;
    DigestJson {
        schema: SCHEMA,
        caution: d.caution,
        runcal_version: d.runcal_version,
        as_of: d.current.as_of.to_string(),
        compare_to: d.compare_to.to_string(),
        calibration: CalibrationJson {
            model: c.model.kind.name(),
            params: named(c.model.kind.param_names(), &c.model.params),
            profile: &c.profile,
            profile_runcal_version: &c.profile_version,
            fitted_seasons: c.fitted_seasons,
            fitted_fingerprint: &c.fitted_fingerprint,
            dispersion: c.dispersion.map(Num),
            season_games: c.season_games,
        },
        sources: d
            .sources
            .iter()
            .map(|s| SourceJson {
                file: &s.path,
                fingerprint: &s.fingerprint,
            })
            .collect(),
        luck: luck(now),
        luck_before: before.map(luck),
        week: d.changes.iter().map(WeekJson::from).collect(),
        movers: d.movers.iter().map(MoverJson::from).collect(),
        projection_interval_level: crate::luck::RANGE_LEVEL,
        outlook: d
            .outlook
            .iter()
            .map(|o| OutlookJson {
                club: club(&o.club),
                wins: o.wins,
                losses: o.losses,
                ties: o.ties,
                remaining_games: o.remaining,
                projected_wins: Num(o.projected_wins),
                projected_interval: Pair(o.range.0, o.range.1),
                first_place_chance: o.first_place.map(Num),
            })
            .collect(),
    }
}
