//! The luck report's layout, once for every format: the gap and its noise-aware signal first, then
//! the evidence behind it (run differential, expected win%, record), then the outlook. The table,
//! the CSV and the JSON (`runcal.luck/2`) list the same values in the same order.

use serde::Serialize;

use super::ModelSource;

use super::Grid;
use super::json::{Num, Pair, named, to_bytes};
use super::table::grid_table;
use super::{LuckReport, csv as csvfmt, num, pct, record, signed};
use crate::error::Error;
use crate::luck::{Family, LuckLine, NOTABLE_Z, Noise, Signal};

pub const SCHEMA: &str = "runcal.luck/2";

/// The reading of a team's gap, in words.
fn reading(l: &LuckLine) -> &'static str {
    match (l.signal, l.beyond_chance) {
        (Signal::Ahead, true) => "well ahead of scoring, beyond chance",
        (Signal::Ahead, false) => "well ahead of scoring",
        (Signal::Behind, true) => "well behind scoring, beyond chance",
        (Signal::Behind, false) => "well behind scoring",
        (Signal::Within, _) => "",
    }
}

fn optional(v: Option<f64>, f: impl Fn(f64) -> String) -> String {
    v.map_or_else(|| "-".to_string(), f)
}

pub fn table(r: &LuckReport) -> String {
    let mut out = heading(r);
    let (t, folded) = grid_table(&grid(r));
    for (name, value) in folded {
        out.push_str(&format!("{name}: {value}\n"));
    }
    out.push_str(&t.to_string());
    out.push('\n');
    out.push_str(&footnotes(r));
    out
}

/// The luck table's columns and cells: the terminal table and the weekly document lay out these.
/// A header "group\ncolumn" opens a group of columns; "\ncolumn" continues it.
pub fn grid(r: &LuckReport) -> Grid {
    let with_one_run = r.teams.iter().any(|l| l.one_run.is_some());
    let level = r.outlook.map(|o| o.level);
    let range_label = format!("\n{:.0}% range", level.unwrap_or(0.0) * 100.0);
    let (one, many) = (r.unit.singular(), r.unit.plural());
    let diff_label = format!("the evidence\n{one} diff/game");
    let for_against = format!("\n{many} for–against");
    let one_run = format!("\none-{one} record");
    let mut header: Vec<&str> = vec![
        "season",
        "league",
        "team",
        "the gap\nwins vs expected",
        "\ngap in SD",
        "\np",
        "\nHolm p",
        "\nreading",
        diff_label.as_str(),
        for_against.as_str(),
        "\nexpected win%",
        "\nwin%",
        "\nrecord",
        "\ngames",
        "\nexpected wins",
    ];
    if with_one_run {
        header.push(one_run.as_str());
    }
    if level.is_some() {
        header.extend([
            "the outlook\nfinal wins",
            range_label.as_str(),
            "\nrange holds",
        ]);
    }
    let rows: Vec<Vec<String>> = r
        .teams
        .iter()
        .map(|l| {
            let t = &l.line;
            let mut row = vec![
                t.season.to_string(),
                t.league.clone().unwrap_or_else(|| "-".into()),
                t.team.clone(),
                signed(t.luck_wins, 1),
                optional(l.luck_z, |z| signed(z, 2)),
                optional(l.luck_p, |p| num(p, 3)),
                optional(l.holm_p, |p| num(p, 3)),
                reading(l).to_string(),
                signed(l.run_diff_per_game, 2),
                format!("{}–{}", num(t.runs_scored, 0), num(t.runs_allowed, 0)),
                pct(t.expected_win_pct),
                pct(t.win_pct),
                record(t.wins, t.losses, t.ties),
                t.games.to_string(),
                num(t.expected_wins, 1),
            ];
            if with_one_run {
                row.push(l.one_run.map_or("-".into(), |(w, lo)| record(w, lo, 0)));
            }
            if level.is_some() {
                match &l.projection {
                    Some(p) => row.extend([
                        num(p.projected_wins, 1),
                        format!("{:.0}–{:.0}", p.interval.0, p.interval.1),
                        format!("{:.1}%", 100.0 * p.mass),
                    ]),
                    None => row.extend(["-".into(), "-".into(), "-".into()]),
                }
            }
            row
        })
        .collect();
    Grid {
        header: Grid::names(&header),
        rows,
        text: Grid::names(&["season", "league", "team", "\nreading"]),
        // A heading states a season or league only when the whole ranking shares it.
        fold: [
            ("season", r.ranked.one_season),
            ("league", r.ranked.one_league),
        ]
        .iter()
        .filter(|(_, alike)| *alike)
        .map(|(name, _)| name.to_string())
        .collect(),
    }
}

fn heading(r: &LuckReport) -> String {
    let shown = if r.teams.len() < r.ranked.team_seasons {
        format!(
            "{} of {} team-seasons shown",
            r.teams.len(),
            r.ranked.team_seasons
        )
    } else {
        super::count(r.ranked.team_seasons, "team-season", "team-seasons")
    };
    let mut out = format!(
        "runcal luck: {shown}, {} rejected; {}; {}",
        r.rows_rejected,
        super::table::model_label(&r.model),
        r.source.describe()
    );
    if let Some(cut) = super::games_through(r.last_played, r.as_of) {
        out.push_str(&format!("; {cut}"));
    }
    out.push('\n');
    if let Some(n) = r.finished {
        out.push_str(&format!(
            "season complete: every team has played its {n} games; final records, no projection\n"
        ));
    }
    out
}

fn footnotes(r: &LuckReport) -> String {
    let n = &r.noise;
    let family = r.family;
    let mut out = format!(
        "gap in SD: (W − n·p̂)/√(φ·n·p̂(1 − p̂)), {} noise with dispersion φ = {:.3} ({}); \"well ahead/behind\" at |z| ≥ {NOTABLE_Z}; \
\"beyond chance\": Holm-adjusted p ≤ {} over the {} ranked with a z\n",
        n.model,
        n.dispersion,
        n.source.describe(),
        family.family_level,
        match family.teams {
            1 => "1 team-season".to_string(),
            k => format!("{k} team-seasons"),
        }
    );
    if let Some(o) = r.outlook {
        out.push_str(&format!(
            "outlook: {}-game season; {}-based win% regressed toward .500 by {:.1} games; {:.0}% range from a beta-binomial, with the probability it actually holds\n",
            o.season_games,
            r.unit.singular(),
            o.regression_games,
            o.level * 100.0
        ));
    }
    out.push_str(crate::CAUTION);
    out.push('\n');
    out
}

const CSV_HEADER: [&str; 28] = [
    "season",
    "league",
    "team",
    "luck_wins",
    "luck_z",
    "luck_p",
    "holm_p",
    "signal",
    "beyond_chance",
    "run_diff_per_game",
    "runs_scored",
    "runs_allowed",
    "expected_win_pct",
    "win_pct",
    "wins",
    "losses",
    "ties",
    "games",
    "expected_wins",
    "one_run_wins",
    "one_run_losses",
    "remaining_games",
    "regressed_win_pct",
    "projected_wins",
    "range_low",
    "range_high",
    "range_level",
    "range_mass",
];

pub fn csv(r: &LuckReport) -> Result<Vec<u8>, Error> {
    use csvfmt::{cell, safe, write_err};
    let mut w = ::csv::Writer::from_writer(Vec::new());
    w.write_record(CSV_HEADER).map_err(write_err)?;
    let count = |v: Option<u64>| v.map(|x| x.to_string()).unwrap_or_default();
    for l in &r.teams {
        let t = &l.line;
        let p = l.projection.as_ref();
        w.write_record([
            t.season.to_string(),
            safe(t.league.as_deref().unwrap_or_default()).into_owned(),
            safe(&t.team).into_owned(),
            cell(Some(t.luck_wins)),
            cell(l.luck_z),
            cell(l.luck_p),
            cell(l.holm_p),
            signal_name(l.signal).unwrap_or_default().to_string(),
            l.beyond_chance.to_string(),
            cell(Some(l.run_diff_per_game)),
            cell(Some(t.runs_scored)),
            cell(Some(t.runs_allowed)),
            cell(Some(t.expected_win_pct)),
            cell(Some(t.win_pct)),
            t.wins.to_string(),
            t.losses.to_string(),
            t.ties.to_string(),
            t.games.to_string(),
            cell(Some(t.expected_wins)),
            count(l.one_run.map(|o| o.0)),
            count(l.one_run.map(|o| o.1)),
            count(p.map(|p| p.remaining)),
            cell(p.map(|p| p.regressed_win_pct)),
            cell(p.map(|p| p.projected_wins)),
            cell(p.map(|p| p.interval.0)),
            cell(p.map(|p| p.interval.1)),
            cell(p.map(|p| p.level)),
            cell(p.map(|p| p.mass)),
        ])
        .map_err(write_err)?;
    }
    csvfmt::finish(w)
}

fn signal_name(s: Signal) -> Option<&'static str> {
    match s {
        Signal::Ahead => Some("ahead"),
        Signal::Behind => Some("behind"),
        Signal::Within => None,
    }
}

#[derive(Serialize)]
struct GapJson {
    luck_wins: Num,
    luck_z: Option<Num>,
    luck_p: Option<Num>,
    holm_p: Option<Num>,
    /// "ahead", "behind" or null.
    signal: Option<&'static str>,
    beyond_chance: bool,
}

#[derive(Serialize)]
struct EvidenceJson {
    run_diff_per_game: Num,
    runs_scored: Num,
    runs_allowed: Num,
    expected_win_pct: Num,
    win_pct: Num,
    wins: u64,
    losses: u64,
    ties: u64,
    games: u64,
    expected_wins: Num,
    one_run_wins: Option<u64>,
    one_run_losses: Option<u64>,
}

#[derive(Serialize)]
struct TeamOutlookJson {
    remaining_games: u64,
    regressed_win_pct: Num,
    projected_wins: Num,
    range: Pair,
    range_level: Num,
    range_mass: Num,
}

#[derive(Serialize)]
struct TeamJson<'a> {
    season: i32,
    league: Option<&'a str>,
    team: &'a str,
    gap: GapJson,
    evidence: EvidenceJson,
    outlook: Option<TeamOutlookJson>,
}

#[derive(Serialize)]
#[serde(untagged)]
pub(crate) enum SourceJson<'a> {
    Profile { profile: &'a str },
    Named(&'static str),
}

impl<'a> SourceJson<'a> {
    /// `{"profile": path}`, or the source's one word.
    pub(crate) fn of(s: &'a ModelSource) -> SourceJson<'a> {
        match s {
            ModelSource::Profile(p) => SourceJson::Profile { profile: p },
            ModelSource::Fitted => SourceJson::Named("fitted"),
            ModelSource::Given => SourceJson::Named("given"),
            ModelSource::Published => SourceJson::Named("published"),
        }
    }
}

#[derive(Serialize)]
struct OutlookJson {
    season_games: u64,
    /// Games of regression toward .500 applied to the run-based win%.
    regression_games: Num,
    range_level: Num,
}

/// `runcal.luck/2`.
#[derive(Serialize)]
pub struct LuckJson<'a> {
    schema: &'static str,
    caution: &'static str,
    model: &'static str,
    params: super::json::Named<'a, f64>,
    source: SourceJson<'a>,
    rows_used: usize,
    rows_rejected: usize,
    as_of: Option<String>,
    /// Date of the last game counted (game logs only).
    games_through: Option<String>,
    /// Every team has played the season's games: final records, no projection.
    season_complete: bool,
    noise: Noise,
    multiplicity: Family,
    signal_z: f64,
    outlook: Option<OutlookJson>,
    teams: Vec<TeamJson<'a>>,
}

fn team_json(l: &LuckLine) -> TeamJson<'_> {
    let t = &l.line;
    TeamJson {
        season: t.season,
        league: t.league.as_deref(),
        team: &t.team,
        gap: GapJson {
            luck_wins: Num(t.luck_wins),
            luck_z: l.luck_z.map(Num),
            luck_p: l.luck_p.map(Num),
            holm_p: l.holm_p.map(Num),
            signal: signal_name(l.signal),
            beyond_chance: l.beyond_chance,
        },
        evidence: EvidenceJson {
            run_diff_per_game: Num(l.run_diff_per_game),
            runs_scored: Num(t.runs_scored),
            runs_allowed: Num(t.runs_allowed),
            expected_win_pct: Num(t.expected_win_pct),
            win_pct: Num(t.win_pct),
            wins: t.wins,
            losses: t.losses,
            ties: t.ties,
            games: t.games,
            expected_wins: Num(t.expected_wins),
            one_run_wins: l.one_run.map(|(w, _)| w),
            one_run_losses: l.one_run.map(|(_, lo)| lo),
        },
        outlook: l.projection.map(|p| TeamOutlookJson {
            remaining_games: p.remaining,
            regressed_win_pct: Num(p.regressed_win_pct),
            projected_wins: Num(p.projected_wins),
            range: Pair(p.interval.0, p.interval.1),
            range_level: Num(p.level),
            range_mass: Num(p.mass),
        }),
    }
}

pub fn json(r: &LuckReport) -> Result<Vec<u8>, Error> {
    to_bytes(&luck_json(r))
}

/// The `runcal.luck/2` object (the weekly document's JSON embeds it).
pub fn luck_json(r: &LuckReport) -> LuckJson<'_> {
    LuckJson {
        schema: SCHEMA,
        caution: crate::CAUTION,
        model: r.model.kind.name(),
        params: named(r.model.kind.param_names(), &r.model.params),
        source: SourceJson::of(&r.source),
        rows_used: r.rows_used,
        rows_rejected: r.rows_rejected,
        as_of: r.as_of.map(|d| d.to_string()),
        games_through: r.last_played.map(|d| d.to_string()),
        season_complete: r.finished.is_some(),
        noise: r.noise,
        multiplicity: r.family,
        signal_z: NOTABLE_Z,
        outlook: r.outlook.map(|o| OutlookJson {
            season_games: o.season_games,
            regression_games: Num(o.regression_games),
            range_level: Num(o.level),
        }),
        teams: r.teams.iter().map(team_json).collect(),
    }
}
