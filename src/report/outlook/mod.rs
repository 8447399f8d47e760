//! `runcal outlook`: table, JSON (`runcal.outlook/1`), CSV and the final-wins chart. Layout only:
//! the clubs arrive ranked and every number computed.

pub mod json;
pub mod svg;

use super::csv::{cell, finish, safe, write_err};
use super::table::{folded_table, model_label};
use super::{ModelSource, Report, num, pct, record};
use crate::data::gamelog::Date;
use crate::data::schedule::PlanCounts;
use crate::error::Error;
use crate::model::Model;
use crate::outlook::league::GroupSource;
use crate::outlook::{ClubOutlook, HomePrior, Outlook, ShrinkageSource};

pub const SCHEMA: &str = "runcal.outlook/1";

/// The result of `runcal outlook`.
#[derive(Debug, Clone)]
pub struct OutlookReport {
    pub outlook: Outlook,
    pub season: i32,
    pub as_of: Option<Date>,
    /// The last day with a played game of the season.
    pub last_played: Option<Date>,
    pub model: Model,
    pub source: ModelSource,
    pub groups_from: GroupSource,
    pub counts: PlanCounts,
    pub rows_used: usize,
    pub rows_rejected: usize,
    pub unit: super::Unit,
}

impl Report for OutlookReport {
    fn table(&self) -> String {
        table(self)
    }
    fn json(&self) -> Result<Vec<u8>, Error> {
        super::json::to_bytes(&json::render(self))
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        csv(self)
    }
    fn svg(&self) -> Option<Result<Vec<u8>, Error>> {
        Some(svg::render(self).map(String::into_bytes))
    }
}

impl OutlookReport {
    /// Every club, group by group, in rank order.
    pub fn clubs(&self) -> impl Iterator<Item = &ClubOutlook> {
        self.outlook.groups.iter().flat_map(|g| &g.clubs)
    }

    /// "2026 season, games through 2026-07-15" (or "to date").
    pub fn cut(&self) -> String {
        match (self.last_played, self.as_of) {
            (None, Some(a)) => format!("{} season, before its first game (as of {a})", self.season),
            (l, a) => match super::games_through(l, a) {
                Some(cut) => format!("{} season, {cut}", self.season),
                None => format!("{} season, before its first game", self.season),
            },
        }
    }
}

pub(crate) fn source_text(s: &ModelSource) -> String {
    s.describe()
}

fn shrinkage_text(o: &Outlook, unit: super::Unit) -> String {
    let s = &o.shrinkage;
    let how = match s.source {
        ShrinkageSource::Profile => format!("saved in the profile; φ {:.3}", s.dispersion),
        ShrinkageSource::FromActualRecord { actual_games } => format!(
            "(1 − φ)·k with k {actual_games:.1} games for the actual record, φ {:.3}",
            s.dispersion
        ),
        ShrinkageSource::Given => "given with --regress-games".to_string(),
    };
    let draw = if o.settings.draw_strength {
        "drawn from its beta posterior in every simulated season"
    } else {
        "held fixed (--no-strength-draw: finishing chances are overconfident)"
    };
    format!(
        "strength: {}-based win% regressed toward .500 by {:.1} games ({how}); {draw}",
        unit.singular(),
        s.run_based_games
    )
}

fn home_text(o: &Outlook) -> String {
    let h = &o.home;
    let prior = match h.prior_source {
        HomePrior::EarlierSeasons { games } => {
            format!("earlier seasons of the log, {games:.0} games")
        }
        HomePrior::CommonPractice => "common practice".to_string(),
    };
    let this = if h.observed.games > 0.0 {
        format!(
            "{} over {:.0} games this season",
            pct(h.observed.wins / h.observed.games),
            h.observed.games
        )
    } else {
        "no games this season".to_string()
    };
    format!(
        "home edge: home sides win {} ({this}, shrunk toward {} from {prior}, worth {:.0} games)",
        pct(o.home_win_pct),
        pct(h.prior_win_pct),
        h.prior_games
    )
}

fn schedule_text(c: &PlanCounts) -> String {
    let mut parts = Vec::new();
    if c.log_unplayed > 0 {
        parts.push(format!("{} unplayed in the log", c.log_unplayed));
    }
    if c.log_after_as_of > 0 {
        parts.push(format!("{} dated after --as-of", c.log_after_as_of));
    }
    if c.scheduled + c.scheduled_in_log > 0 {
        parts.push(format!(
            "{} from the schedule ({} of its rows already in the log)",
            c.scheduled, c.scheduled_in_log
        ));
    }
    if c.postponed > 0 {
        parts.push(format!(
            "{} scheduled on or before the last day played (postponed, still to play)",
            c.postponed
        ));
    }
    if parts.is_empty() {
        parts.push("none (the season is over)".to_string());
    }
    format!("games left: {}", parts.join(", "))
}

fn groups_text(g: &GroupSource) -> String {
    match g {
        GroupSource::File(p) => format!("groups from {p}"),
        GroupSource::LogColumn(h) => format!("groups from the log's '{h}' column"),
        GroupSource::Single => "no groups: the whole league is one".to_string(),
    }
}

pub(crate) fn percent(p: f64) -> String {
    if p.is_finite() {
        format!("{:.1}%", 100.0 * p)
    } else {
        "-".to_string()
    }
}

pub fn table(r: &OutlookReport) -> String {
    let o = &r.outlook;
    let mut out = format!(
        "runcal outlook: {}; {} games left; {} simulated seasons (seed {})\n",
        r.cut(),
        o.games_left,
        o.settings.simulations,
        o.settings.seed
    );
    out.push_str(&format!(
        "model: {} ({})\n{}\n{}\n{}; {}\n",
        model_label(&r.model),
        source_text(&r.source),
        shrinkage_text(o, r.unit),
        home_text(o),
        schedule_text(&r.counts),
        groups_text(&r.groups_from)
    ));
    let target = o.settings.target_wins.map(|t| format!("reach {t}"));
    let mut header = vec![
        "group",
        "team",
        "record",
        "left",
        "strength",
        "opponents",
        "mean wins",
        "10th",
        "median",
        "90th",
        "range holds",
        "first",
    ];
    if let Some(t) = &target {
        header.push(t.as_str());
    }
    let rows: Vec<Vec<String>> = r
        .clubs()
        .map(|c| {
            let mut row = vec![
                c.group.clone(),
                c.team.clone(),
                record(c.wins, c.losses, c.ties),
                c.games_left.to_string(),
                pct(c.strength),
                c.schedule_strength.map_or("-".into(), pct),
                num(c.mean_final_wins, 1),
                c.low.wins.to_string(),
                c.median.wins.to_string(),
                c.high.wins.to_string(),
                percent(c.range_mass),
                percent(c.chance_first),
            ];
            if target.is_some() {
                row.push(c.chance_target.map_or("-".into(), percent));
            }
            row
        })
        .collect();
    let (t, folded) = folded_table(&header, &rows, &["group", "team", "record"], &["group"]);
    for (name, value) in folded {
        out.push_str(&format!("{name}: {value}\n"));
    }
    out.push_str(&t.to_string());
    out.push('\n');
    out.push_str(&format!(
        "final wins: 10th and 90th are the totals with about 10% of simulated seasons below and above; \
'range holds' is the share of seasons within them (nominal {:.0}%). \
first: chance of finishing first in the group, ties for first sharing the credit equally. \
strength: win% against an average club at a neutral site; opponents: mean strength of the games left.\n",
        100.0 * crate::outlook::RANGE_LEVEL
    ));
    out.push_str(crate::outlook::CAUTION);
    out.push('\n');
    out
}

pub fn csv(r: &OutlookReport) -> Result<Vec<u8>, Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "season",
        "group",
        "team",
        "wins",
        "losses",
        "ties",
        "games_left",
        "strength",
        "strength_sd",
        "schedule_strength",
        "mean_final_wins",
        "p10_wins",
        "p10_level",
        "p50_wins",
        "p50_level",
        "p90_wins",
        "p90_level",
        "range_mass",
        "chance_first",
        "chance_target",
    ])
    .map_err(write_err)?;
    for c in r.clubs() {
        w.write_record([
            r.season.to_string(),
            safe(&c.group).into_owned(),
            safe(&c.team).into_owned(),
            c.wins.to_string(),
            c.losses.to_string(),
            c.ties.to_string(),
            c.games_left.to_string(),
            cell(Some(c.strength)),
            cell(Some(c.strength_sd)),
            cell(c.schedule_strength),
            cell(Some(c.mean_final_wins)),
            c.low.wins.to_string(),
            cell(Some(c.low.level)),
            c.median.wins.to_string(),
            cell(Some(c.median.level)),
            c.high.wins.to_string(),
            cell(Some(c.high.level)),
            cell(Some(c.range_mass)),
            cell(Some(c.chance_first)),
            cell(c.chance_target),
        ])
        .map_err(write_err)?;
    }
    finish(w)
}
