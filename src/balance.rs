//! League balance: in a season's complete table every game gives one team a win and the other a
//! loss (or both a tie), and every run scored is a run allowed. So over a season's rows
//! Σwins = Σlosses, Σties is even and Σruns scored = Σruns allowed. Games between leagues cancel out
//! when every league of the season is in the file, so the totals are taken per season over all the
//! rows of that season, whatever their league. A file holding only some of the clubs that play each
//! other (one league of several, a division) does not balance; such a file should not be gated on it.

use crate::data::TeamSeason;

/// Tolerance `fit` and `check` warn at (a fraction; see [`SeasonBalance::wins_imbalance`]): real
/// league tables balance to about 0.02% or better (the Baseball Databank's worst season, 1906, is
/// 0.017% off in runs), so half a percent means rows are missing, doubled or mistyped.
pub const WARN_IMBALANCE: f64 = 0.005;

/// One season's totals.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SeasonBalance {
    pub season: i32,
    pub teams: usize,
    pub wins: u64,
    pub losses: u64,
    pub ties: u64,
    pub runs_scored: f64,
    pub runs_allowed: f64,
}

impl SeasonBalance {
    /// (|Σwins − Σlosses| + (Σties mod 2)) / (Σwins + Σlosses + Σties): the share of decisions that
    /// have no opposite side (an odd tie total leaves one tie without its partner).
    pub fn wins_imbalance(&self) -> f64 {
        let off = self.wins.abs_diff(self.losses) + self.ties % 2;
        let all = self.wins + self.losses + self.ties;
        if all == 0 {
            0.0
        } else {
            off as f64 / all as f64
        }
    }

    /// |ΣRS − ΣRA| / (ΣRS + ΣRA).
    pub fn runs_imbalance(&self) -> f64 {
        let all = self.runs_scored + self.runs_allowed;
        if all > 0.0 {
            (self.runs_scored - self.runs_allowed).abs() / all
        } else {
            0.0
        }
    }
}

/// Totals of every season with at least two teams (one team alone cannot balance), in season order.
pub fn seasons(rows: &[TeamSeason]) -> Vec<SeasonBalance> {
    let mut by: std::collections::BTreeMap<i32, SeasonBalance> = Default::default();
    for r in rows {
        let b = by.entry(r.season).or_insert(SeasonBalance {
            season: r.season,
            teams: 0,
            wins: 0,
            losses: 0,
            ties: 0,
            runs_scored: 0.0,
            runs_allowed: 0.0,
        });
        b.teams += 1;
        b.wins = b.wins.saturating_add(r.wins);
        b.losses = b.losses.saturating_add(r.losses);
        b.ties = b.ties.saturating_add(r.ties);
        b.runs_scored += r.runs_scored;
        b.runs_allowed += r.runs_allowed;
    }
    by.into_values().filter(|b| b.teams >= 2).collect()
}

/// The worst season by each measure: (season, value) for wins and for runs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Worst {
    pub wins: Option<(SeasonBalance, f64)>,
    pub runs: Option<(SeasonBalance, f64)>,
}

pub fn worst(rows: &[TeamSeason]) -> Worst {
    let all = seasons(rows);
    let pick = |f: fn(&SeasonBalance) -> f64| {
        all.iter()
            .map(|b| (*b, f(b)))
            .max_by(|a, b| a.1.total_cmp(&b.1).then(b.0.season.cmp(&a.0.season)))
    };
    Worst {
        wins: pick(SeasonBalance::wins_imbalance),
        runs: pick(SeasonBalance::runs_imbalance),
    }
}

/// One line per season whose totals are off by more than `tolerance`.
pub fn warnings(rows: &[TeamSeason], tolerance: f64) -> Vec<String> {
    let mut out = Vec::new();
    for b in seasons(rows) {
        if b.wins_imbalance() > tolerance {
            out.push(format!(
                "season {}: the {} teams' wins ({}) and losses ({}) do not balance{} ({:.2}% off): are rows missing or doubled?",
                b.season,
                b.teams,
                b.wins,
                b.losses,
                if b.ties % 2 == 1 { format!(", and their ties ({}) are odd", b.ties) } else { String::new() },
                100.0 * b.wins_imbalance()
            ));
        }
        if b.runs_imbalance() > tolerance {
            out.push(format!(
                "season {}: the {} teams' runs scored ({}) and allowed ({}) do not balance ({:.2}% off): are rows missing or mistyped?",
                b.season,
                b.teams,
                b.runs_scored,
                b.runs_allowed,
                100.0 * b.runs_imbalance()
            ));
        }
    }
    out
}

/// The gate's two balance rules at `max` (a fraction): the worst season by wins and by runs.
pub fn rules(rows: &[TeamSeason], max: f64) -> Vec<crate::gate::Rule> {
    let w = worst(rows);
    let mut out = Vec::new();
    for (name, found, what) in [
        (
            "league_wins_balance",
            w.wins,
            "wins vs losses (and unpaired ties)",
        ),
        ("league_runs_balance", w.runs, "runs scored vs allowed"),
    ] {
        let (value, detail) = match found {
            Some((b, v)) => (
                v,
                format!("{what}: worst season {} off by {:.3}%", b.season, 100.0 * v),
            ),
            None => (0.0, format!("{what}: no season with two or more teams")),
        };
        out.push(crate::gate::Rule {
            rule: name.to_string(),
            threshold: max,
            value,
            passed: value <= max,
            detail,
        });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(season: i32, w: u64, l: u64, t: u64, rs: f64, ra: f64) -> TeamSeason {
        TeamSeason {
            season,
            league: None,
            team: format!("T{w}{l}"),
            wins: w,
            losses: l,
            ties: t,
            runs_scored: rs,
            runs_allowed: ra,
            games: w + l + t,
            one_run: None,
            at: crate::error::Location {
                file: "test".into(),
                line: None,
                column: None,
            },
        }
    }

    #[test]
    fn a_closed_season_balances_and_a_doubled_row_does_not() {
        // Every game has one winner and one loser, and each run is scored by one side and allowed by
        // the other (common practice: the identity behind standings tables).
        let ok = [row(1, 6, 4, 1, 50.0, 40.0), row(1, 4, 6, 1, 40.0, 50.0)];
        assert!(warnings(&ok, 0.0).is_empty());
        let w = worst(&ok);
        assert_eq!(w.wins.unwrap().1, 0.0);
        let bad = [ok[0].clone(), ok[1].clone(), row(1, 6, 4, 0, 50.0, 40.0)];
        let b = seasons(&bad)[0];
        // (|16 − 14| + 0) / 32 and |140 − 130| / 270.
        assert!((b.wins_imbalance() - 2.0 / 32.0).abs() < 1e-15);
        assert!((b.runs_imbalance() - 10.0 / 270.0).abs() < 1e-15);
        assert_eq!(warnings(&bad, WARN_IMBALANCE).len(), 2);
        let r = rules(&bad, 0.01);
        assert!(r.iter().all(|r| !r.passed));
    }

    #[test]
    fn an_odd_tie_total_counts_as_an_imbalance() {
        let rows = [row(2, 5, 5, 1, 30.0, 30.0), row(2, 5, 5, 0, 30.0, 30.0)];
        assert!((seasons(&rows)[0].wins_imbalance() - 1.0 / 21.0).abs() < 1e-15);
    }

    #[test]
    fn a_lone_team_season_is_not_judged() {
        assert!(seasons(&[row(3, 9, 1, 0, 90.0, 10.0)]).is_empty());
    }
}
