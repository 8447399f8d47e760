//! The weekly document's assembly: the luck lines as of a date and as of an earlier date (a week
//! before by default), each club's change between the two, the biggest movers ranked, and the
//! rest-of-season outlook. Everything is computed here; `report::document` only lays it out.
//!
//! The outlook comes from the luck report's projection (expected win% regressed toward .500, a
//! beta-binomial range). A schedule-aware simulation can later supply the same [`OutlookLine`]s with
//! more per-club results (a first-place chance) without touching the rest of the assembly.

use std::io::Read;

use crate::data::gamelog::Date;
use crate::error::Error;
use crate::luck::LuckLine;
use crate::model::Model;

/// Days between the two dates when no comparison date is given.
pub const WEEK: u32 = 7;

/// How many clubs each measure's movers name at most.
pub const MOVERS_PER_MEASURE: usize = 3;

/// A change smaller than this (wins) is not a move: it shows as 0.0 at the tables' one decimal.
pub const SMALLEST_MOVE: f64 = 0.05;

/// A change in first-place chance smaller than this (five percentage points) is not a move: well
/// above the Monte-Carlo noise of two 10,000-season runs (about one point at most), and a smaller
/// change tells a reader little (our choice).
pub const SMALLEST_CHANCE_MOVE: f64 = 0.05;

/// The calibration the document applies, and where its numbers come from.
#[derive(Debug, Clone, PartialEq)]
pub struct Calibration {
    pub model: Model,
    /// Path of the profile as given.
    pub profile: String,
    /// The runcal version that wrote the profile.
    pub profile_version: String,
    /// Seasons and fingerprint of the data the profile was fitted on.
    pub fitted_seasons: [i32; 2],
    pub fitted_fingerprint: String,
    /// Pearson X²/df of the fit, when the profile carries it.
    pub dispersion: Option<f64>,
    pub season_games: u64,
}

/// An input file and the fingerprint of its bytes.
#[derive(Debug, Clone, PartialEq)]
pub struct SourceFile {
    pub path: String,
    pub fingerprint: String,
}

/// The luck lines of every club as of one date (the same lines `runcal luck --as-of` reports).
#[derive(Debug, Clone, PartialEq)]
pub struct Snapshot {
    pub as_of: Date,
    /// The date of the last game counted.
    pub last_played: Option<Date>,
    pub rows_used: usize,
    pub rows_rejected: usize,
    pub ranked: crate::luck::Ranked,
    /// The luck z's noise model and what the projection used, with their notes and warnings.
    pub settings: crate::applied::LuckSettings,
    /// How far these data sit from the profile's run environment (empty when it suits them).
    pub mismatch: Vec<String>,
    pub lines: Vec<LuckLine>,
    /// Each club's chance of finishing first in its group (team → chance), from the schedule-aware
    /// simulation of the games left; `None` when no outlook was simulated.
    pub first_place: Option<std::collections::BTreeMap<String, f64>>,
}

/// One number at the earlier date, at the later one, and the difference.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Change {
    pub before: f64,
    pub after: f64,
    pub change: f64,
}

impl Change {
    fn between(before: f64, after: f64) -> Change {
        Change {
            before,
            after,
            change: after - before,
        }
    }
}

/// A club as the luck lines name it.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
pub struct Club {
    pub season: i32,
    pub league: Option<String>,
    pub team: String,
}

impl Club {
    fn of(l: &LuckLine) -> Club {
        Club {
            season: l.line.season,
            league: l.line.league.clone(),
            team: l.line.team.clone(),
        }
    }
}

/// A club's week: `None` where the club had no games at the earlier date (or no projection).
#[derive(Debug, Clone, PartialEq)]
pub struct ClubChange {
    pub club: Club,
    pub games_before: u64,
    pub games_after: u64,
    pub wins_over_expected: Option<Change>,
    pub projected_wins: Option<Change>,
    pub first_place: Option<Change>,
}

/// Which number a mover moved in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Measure {
    WinsOverExpected,
    ProjectedWins,
    FirstPlace,
}

impl Measure {
    pub fn name(self) -> &'static str {
        match self {
            Measure::WinsOverExpected => "wins_over_expected",
            Measure::ProjectedWins => "projected_wins",
            Measure::FirstPlace => "first_place_chance",
        }
    }
}

/// One of the week's biggest changes.
#[derive(Debug, Clone, PartialEq)]
pub struct Mover {
    pub measure: Measure,
    pub club: Club,
    pub change: Change,
}

/// A club's rest of season.
#[derive(Debug, Clone, PartialEq)]
pub struct OutlookLine {
    pub club: Club,
    pub wins: u64,
    pub losses: u64,
    pub ties: u64,
    pub remaining: u64,
    pub projected_wins: f64,
    /// 80% range of final wins.
    pub range: (f64, f64),
    /// Chance of finishing first in its group (schedule-aware simulation).
    pub first_place: Option<f64>,
}

/// The whole document, computed.
#[derive(Debug, Clone, PartialEq)]
pub struct Digest {
    pub runcal_version: &'static str,
    pub calibration: Calibration,
    pub sources: Vec<SourceFile>,
    pub current: Snapshot,
    /// The comparison date and its snapshot (`None` inside when no game had been played by then).
    pub compare_to: Date,
    pub previous: Option<Snapshot>,
    /// Every club of the current snapshot, most gained in wins over expected first.
    pub changes: Vec<ClubChange>,
    /// The biggest movers: per measure, largest absolute change first.
    pub movers: Vec<Mover>,
    /// Every projected club, most projected wins first.
    pub outlook: Vec<OutlookLine>,
    /// Positions in `current.lines` the luck chart names.
    pub luck_labels: Vec<usize>,
    pub caution: &'static str,
}

/// FNV-1a (64-bit) over a file's bytes, in the profile's `fnv1a64:` notation.
pub fn file_fingerprint(path: &str) -> Result<String, Error> {
    let wrap = |source: std::io::Error| {
        Error::Data(crate::error::DataError::Io {
            file: path.to_string(),
            source,
        })
    };
    let mut file = std::fs::File::open(path).map_err(wrap)?;
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    let mut buf = vec![0u8; 1 << 16];
    loop {
        let n = file.read(&mut buf).map_err(wrap)?;
        if n == 0 {
            break;
        }
        for &b in &buf[..n] {
            h ^= u64::from(b);
            h = h.wrapping_mul(0x0100_0000_01b3);
        }
    }
    Ok(format!("fnv1a64:{h:016x}"))
}

/// Each input file with its fingerprint.
pub fn sources(files: &[String]) -> Result<Vec<SourceFile>, Error> {
    files
        .iter()
        .map(|f| {
            Ok(SourceFile {
                path: f.clone(),
                fingerprint: file_fingerprint(f)?,
            })
        })
        .collect()
}

fn changes(current: &Snapshot, previous: Option<&Snapshot>) -> Vec<ClubChange> {
    let before = |club: &Club| previous.and_then(|p| p.lines.iter().find(|l| Club::of(l) == *club));
    let mut out: Vec<ClubChange> = current
        .lines
        .iter()
        .map(|now| {
            let club = Club::of(now);
            let then = before(&club);
            let projected = |l: &LuckLine| l.projection.map(|p| p.projected_wins);
            let chance = |s: Option<&Snapshot>| {
                s.and_then(|s| s.first_place.as_ref()?.get(&now.line.team).copied())
            };
            ClubChange {
                games_before: then.map_or(0, |t| t.line.games),
                games_after: now.line.games,
                wins_over_expected: then
                    .map(|t| Change::between(t.line.luck_wins, now.line.luck_wins)),
                projected_wins: then
                    .and_then(projected)
                    .zip(projected(now))
                    .map(|(b, a)| Change::between(b, a)),
                first_place: chance(previous)
                    .filter(|_| then.is_some())
                    .zip(chance(Some(current)))
                    .map(|(b, a)| Change::between(b, a)),
                club,
            }
        })
        .collect();
    let key = |c: &ClubChange| c.wins_over_expected.map_or(f64::NEG_INFINITY, |x| x.change);
    out.sort_by(|a, b| key(b).total_cmp(&key(a)).then_with(|| a.club.cmp(&b.club)));
    out
}

fn movers(changes: &[ClubChange]) -> Vec<Mover> {
    let mut out = Vec::new();
    for measure in [
        Measure::WinsOverExpected,
        Measure::ProjectedWins,
        Measure::FirstPlace,
    ] {
        let mut these: Vec<Mover> = changes
            .iter()
            .filter_map(|c| {
                let (change, smallest) = match measure {
                    Measure::WinsOverExpected => (c.wins_over_expected?, SMALLEST_MOVE),
                    Measure::ProjectedWins => (c.projected_wins?, SMALLEST_MOVE),
                    Measure::FirstPlace => (c.first_place?, SMALLEST_CHANCE_MOVE),
                };
                (change.change.abs() >= smallest).then(|| Mover {
                    measure,
                    club: c.club.clone(),
                    change,
                })
            })
            .collect();
        these.sort_by(|a, b| {
            b.change
                .change
                .abs()
                .total_cmp(&a.change.change.abs())
                .then_with(|| a.club.cmp(&b.club))
        });
        these.truncate(MOVERS_PER_MEASURE);
        out.extend(these);
    }
    out
}

fn outlook(current: &Snapshot) -> Vec<OutlookLine> {
    let mut out: Vec<OutlookLine> = current
        .lines
        .iter()
        .filter_map(|l| {
            let p = l.projection?;
            Some(OutlookLine {
                club: Club::of(l),
                wins: l.line.wins,
                losses: l.line.losses,
                ties: l.line.ties,
                remaining: p.remaining,
                projected_wins: p.projected_wins,
                range: p.interval,
                first_place: current
                    .first_place
                    .as_ref()
                    .and_then(|f| f.get(&l.line.team).copied()),
            })
        })
        .collect();
    out.sort_by(|a, b| {
        b.projected_wins
            .total_cmp(&a.projected_wins)
            .then_with(|| a.club.cmp(&b.club))
    });
    out
}

/// Each club's chance of finishing first in its group, by team.
pub fn first_place_chances(o: &crate::outlook::Outlook) -> std::collections::BTreeMap<String, f64> {
    o.groups
        .iter()
        .flat_map(|g| g.clubs.iter().map(|c| (c.team.clone(), c.chance_first)))
        .collect()
}

/// Put the document together from its two snapshots.
pub fn assemble(
    calibration: Calibration,
    sources: Vec<SourceFile>,
    current: Snapshot,
    compare_to: Date,
    previous: Option<Snapshot>,
) -> Digest {
    let changes = changes(&current, previous.as_ref());
    Digest {
        runcal_version: env!("CARGO_PKG_VERSION"),
        movers: movers(&changes),
        outlook: outlook(&current),
        luck_labels: crate::luck::labelled_extremes(current.lines.len()),
        changes,
        calibration,
        sources,
        current,
        compare_to,
        previous,
        caution: crate::CAUTION,
    }
}

/// The luck lines and their settings at one date, under the profile, with the precedence of
/// `runcal luck` ([`crate::applied::luck_settings`]) and no overrides.
pub fn snapshot(
    ds: &crate::data::Dataset,
    table: &crate::data::Table,
    profile: &crate::profile::Profile,
    as_of: Date,
) -> Result<Snapshot, Error> {
    let chosen = crate::applied::choose_model(Some((profile, "")), None, profile.model, table)?;
    let over = crate::applied::Overrides::default();
    let settings = crate::applied::luck_settings(&chosen, Some(profile), &over, &ds.rows, table)?;
    Ok(Snapshot {
        as_of,
        last_played: ds.last_played,
        rows_used: ds.rows.len(),
        rows_rejected: ds.rejected.len(),
        ranked: crate::luck::Ranked::over(&ds.rows),
        mismatch: crate::applied::environment_mismatch(profile, &ds.rows, None),
        lines: crate::luck::ranking(
            &ds.rows,
            table,
            &chosen.model,
            &settings.noise,
            settings.outlook.as_ref(),
            None,
        )
        .lines,
        settings,
        first_place: None,
    })
}

impl Calibration {
    /// What the document says about a saved calibration found at `path`.
    pub fn of(profile: &crate::profile::Profile, path: &str) -> Calibration {
        Calibration {
            model: profile.model(),
            profile: path.to_string(),
            profile_version: profile.runcal_version.clone(),
            fitted_seasons: profile.fitted_on.seasons,
            fitted_fingerprint: profile.fitted_on.fingerprint.clone(),
            dispersion: profile.dispersion,
            season_games: profile.season_games,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::gamelog::days_earlier;

    fn date(s: &str) -> Date {
        s.parse().unwrap()
    }

    #[test]
    fn a_week_earlier_crosses_months_years_and_leap_days() {
        // Calendar facts (GNU `date -d '2026-03-03 - 7 days'` prints 2026-02-24).
        assert_eq!(days_earlier(date("2026-03-03"), WEEK), date("2026-02-24"));
        assert_eq!(days_earlier(date("2024-03-01"), 1), date("2024-02-29"));
        assert_eq!(days_earlier(date("2026-01-03"), WEEK), date("2025-12-27"));
        assert_eq!(days_earlier(date("2026-07-15"), 0), date("2026-07-15"));
    }

    fn change(club: &str, woe: Option<f64>, proj: Option<f64>) -> ClubChange {
        let c = |v: f64| Change::between(0.0, v);
        ClubChange {
            club: Club {
                season: 2026,
                league: None,
                team: club.to_string(),
            },
            games_before: 1,
            games_after: 2,
            wins_over_expected: woe.map(c),
            projected_wins: proj.map(c),
            first_place: None,
        }
    }

    #[test]
    fn movers_are_the_largest_absolute_changes_of_each_measure() {
        let cs = vec![
            change("A", Some(0.5), Some(-3.0)),
            change("B", Some(-2.0), Some(0.01)),
            change("C", Some(1.0), None),
            change("D", Some(0.04), Some(1.0)),
            change("E", None, Some(2.0)),
        ];
        let m = movers(&cs);
        let names: Vec<(&str, &str)> = m
            .iter()
            .map(|m| (m.measure.name(), m.club.team.as_str()))
            .collect();
        // Common practice for "biggest movers": by size of the change, either direction; a change
        // that prints as 0.0 is no move.
        assert_eq!(
            names,
            vec![
                ("wins_over_expected", "B"),
                ("wins_over_expected", "C"),
                ("wins_over_expected", "A"),
                ("projected_wins", "A"),
                ("projected_wins", "E"),
                ("projected_wins", "D"),
            ]
        );
    }
}
