//! Expected wins, luck in wins and as a z under the calibrated noise model, regression to the mean,
//! rest-of-season projections.

pub mod noise;
pub mod projection;

pub use noise::{FAMILY_LEVEL, Noise, NoiseSource, holm, pearson_dispersion};
pub use projection::{
    Outlook, Projection, RANGE_LEVEL, beta_binomial_quantile, central_range, project,
    run_based_regression_games,
};

use crate::data::{Table, TeamSeason};
use crate::model::{Model, Row, predict};

/// One team-season with a model's expectation beside its record.
#[derive(Debug, Clone, PartialEq)]
pub struct TeamLine {
    pub season: i32,
    pub league: Option<String>,
    pub team: String,
    pub games: u64,
    pub wins: u64,
    pub losses: u64,
    pub ties: u64,
    pub runs_scored: f64,
    pub runs_allowed: f64,
    pub win_pct: f64,
    pub expected_win_pct: f64,
    /// Decisions × expected win%.
    pub expected_wins: f64,
    /// Wins (ties as half) minus expected wins.
    pub luck_wins: f64,
    /// The exponent this team-season received (`None` for the linear model).
    pub exponent: Option<f64>,
}

/// Every row of a table under a model. `rows` and `t` must be the same rows in the same order.
pub fn team_lines(rows: &[TeamSeason], t: &Table, model: &Model) -> Vec<TeamLine> {
    rows.iter()
        .enumerate()
        .map(|(i, r)| {
            let p = predict(model.kind, &model.params, &Row::of(t, i));
            let expected = t.decisions[i] * p;
            TeamLine {
                season: r.season,
                league: r.league.clone(),
                team: r.team.clone(),
                games: r.games,
                wins: r.wins,
                losses: r.losses,
                ties: r.ties,
                runs_scored: r.runs_scored,
                runs_allowed: r.runs_allowed,
                win_pct: t.win_pct[i],
                expected_win_pct: p,
                expected_wins: expected,
                luck_wins: t.wins[i] - expected,
                exponent: crate::model::exponent(
                    model.kind,
                    &model.params,
                    t.ln_rpg[i],
                    t.log10_rpg[i],
                ),
            }
        })
        .collect()
}

/// Luck as a binomial z-score, (W − n·p̂)/sqrt(n·p̂(1 − p̂)): the quasi-binomial z with φ = 1.
pub fn luck_z(wins: f64, decisions: f64, p: f64) -> Option<f64> {
    Noise::binomial().z(wins, decisions, p)
}

/// Two-sided normal p-value of a z-score: 2·(1 − Φ(|z|)) = erfc(|z|/√2).
pub fn two_sided_p(z: f64) -> f64 {
    statrs::function::erf::erfc(z.abs() / std::f64::consts::SQRT_2)
}

/// Games of regression to .500 for the *actual* record by the usual variance split of the table's
/// win%: var_true = var(win%) − mean(0.25/n), k = 0.25/var_true. `None` when the observed spread is
/// no larger than binomial noise alone. The run-based record's constant is
/// [`run_based_regression_games`].
pub fn regression_games(t: &Table) -> Option<f64> {
    let n = t.len();
    if n < 2 {
        return None;
    }
    let mean = t.win_pct.iter().sum::<f64>() / n as f64;
    let var_obs = t.win_pct.iter().map(|y| (y - mean).powi(2)).sum::<f64>() / (n as f64 - 1.0);
    let noise = t.decisions.iter().map(|d| 0.25 / d).sum::<f64>() / n as f64;
    let var_true = var_obs - noise;
    (var_true > 0.0).then(|| 0.25 / var_true)
}

/// How far a team's record runs from its scoring, in the noise model's terms.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Signal {
    /// z ≥ [`NOTABLE_Z`].
    Ahead,
    /// z ≤ −[`NOTABLE_Z`].
    Behind,
    Within,
}

/// A team in the weekly report.
#[derive(Debug, Clone, PartialEq)]
pub struct LuckLine {
    pub line: TeamLine,
    /// (W − n·p̂)/sqrt(φ·n·p̂(1 − p̂)) under the report's noise model.
    pub luck_z: Option<f64>,
    pub luck_p: Option<f64>,
    pub signal: Signal,
    /// Holm-adjusted p over every team-season ranked.
    pub holm_p: Option<f64>,
    /// The Holm-adjusted p is at most [`FAMILY_LEVEL`]: the gap stands out even among all teams ranked.
    pub beyond_chance: bool,
    /// (RS − RA)/games.
    pub run_diff_per_game: f64,
    pub one_run: Option<(u64, u64)>,
    pub projection: Option<Projection>,
}

/// |z| at or above this is called out in words.
pub const NOTABLE_Z: f64 = 2.0;

/// The name of the multiplicity adjustment, as the outputs print it.
pub const MULTIPLICITY: &str = "holm";

/// The family the multiplicity-aware flag adjusts over: every team-season ranked, also when `--top`
/// shows only the extremes (the extremes are the ones a selection makes look significant).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Family {
    pub method: &'static str,
    pub family_level: f64,
    /// Team-seasons of the whole ranking with a p-value.
    pub teams: usize,
}

impl Family {
    pub fn over(lines: &[LuckLine]) -> Family {
        Family {
            method: MULTIPLICITY,
            family_level: FAMILY_LEVEL,
            teams: lines.iter().filter(|l| l.luck_p.is_some()).count(),
        }
    }
}

/// The weekly report's lines and the family their Holm adjustment ran over.
#[derive(Debug, Clone)]
pub struct Ranking {
    pub lines: Vec<LuckLine>,
    pub family: Family,
}

/// Build the weekly report's lines, sorted by luck in wins (most ahead of their scoring first; ties
/// broken by season, league, team). Holm's adjustment runs over every team-season; with `top`,
/// only the `top` most ahead and most behind are kept after it (adjusting over the kept lines alone
/// would let the selection of extremes pass for evidence).
pub fn ranking(
    rows: &[TeamSeason],
    t: &Table,
    model: &Model,
    noise: &Noise,
    outlook: Option<&Outlook>,
    top: Option<usize>,
) -> Ranking {
    let mut out: Vec<LuckLine> = team_lines(rows, t, model)
        .into_iter()
        .enumerate()
        .map(|(i, line)| {
            let z = noise.z(t.wins[i], t.decisions[i], line.expected_win_pct);
            let projection = outlook.map(|o| {
                project(
                    t.wins[i],
                    t.decisions[i],
                    line.expected_win_pct,
                    o,
                    rows[i].games,
                )
            });
            LuckLine {
                luck_z: z,
                luck_p: z.map(two_sided_p),
                signal: match z {
                    Some(z) if z >= NOTABLE_Z => Signal::Ahead,
                    Some(z) if z <= -NOTABLE_Z => Signal::Behind,
                    _ => Signal::Within,
                },
                holm_p: None,
                beyond_chance: false,
                run_diff_per_game: (rows[i].runs_scored - rows[i].runs_allowed)
                    / rows[i].games.max(1) as f64,
                one_run: rows[i].one_run,
                projection,
                line,
            }
        })
        .collect();
    out.sort_by(|a, b| most_ahead_first(&a.line, &b.line));
    let p: Vec<Option<f64>> = out.iter().map(|l| l.luck_p).collect();
    for (l, adjusted) in out.iter_mut().zip(holm(&p)) {
        l.holm_p = adjusted;
        l.beyond_chance = adjusted.is_some_and(|q| q <= FAMILY_LEVEL);
    }
    let family = Family::over(&out);
    if let Some(n) = top {
        keep_extremes(&mut out, n);
    }
    Ranking { lines: out, family }
}

/// What every team-season of a ranking shares, before `--top` keeps its extremes: a heading may
/// state a season or a league once only when the whole ranking has it.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Ranked {
    pub team_seasons: usize,
    pub one_season: bool,
    pub one_league: bool,
}

impl Ranked {
    pub fn over(rows: &[TeamSeason]) -> Ranked {
        let first = rows.first();
        Ranked {
            team_seasons: rows.len(),
            one_season: rows
                .iter()
                .all(|r| Some(r.season) == first.map(|f| f.season)),
            one_league: rows
                .iter()
                .all(|r| Some(&r.league) == first.map(|f| &f.league)),
        }
    }
}

/// Nominal level of the projection's range of final wins.
pub const PROJECTION_LEVEL: f64 = RANGE_LEVEL;

/// The order of every luck listing: most wins above expected first; ties by season, league, team.
pub fn most_ahead_first(a: &TeamLine, b: &TeamLine) -> std::cmp::Ordering {
    b.luck_wins
        .total_cmp(&a.luck_wins)
        .then_with(|| (a.season, &a.league, &a.team).cmp(&(b.season, &b.league, &b.team)))
}

/// The `top` team lines furthest above and furthest below their expectation, each list most
/// extreme first.
pub fn extremes(teams: &[TeamLine], top: usize) -> (Vec<TeamLine>, Vec<TeamLine>) {
    let mut sorted: Vec<&TeamLine> = teams.iter().collect();
    sorted.sort_by(|a, b| most_ahead_first(a, b));
    let n = top.min(sorted.len());
    let ahead = sorted[..n].iter().map(|t| (*t).clone()).collect();
    let behind = sorted.iter().rev().take(n).map(|t| (*t).clone()).collect();
    (ahead, behind)
}

/// Keep the `n` lines most ahead and the `n` most behind of a list sorted most ahead first.
pub fn keep_extremes(lines: &mut Vec<LuckLine>, n: usize) {
    if n.saturating_mul(2) < lines.len() {
        let tail = lines.split_off(lines.len() - n);
        lines.truncate(n);
        lines.extend(tail);
    }
}

/// Positions (in a list sorted most ahead first) of the teams a chart labels: the three most
/// ahead and the three most behind, or all of them when there are six or fewer.
pub fn labelled_extremes(len: usize) -> Vec<usize> {
    if len <= 6 {
        (0..len).collect()
    } else {
        (0..3).chain(len - 3..len).collect()
    }
}

/// Equal-width bins over the finite values.
#[derive(Debug, Clone, PartialEq)]
pub struct Histogram {
    /// Left edge of the first bin.
    pub start: f64,
    pub width: f64,
    pub counts: Vec<u32>,
}

/// Bin values into `bins` equal-width bins spanning them (padded by 5% each side).
pub fn histogram(values: &[f64], bins: usize) -> Histogram {
    let (lo, hi) = values
        .iter()
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    let (lo, hi) = if lo.is_finite() { (lo, hi) } else { (0.0, 1.0) };
    let pad = ((hi - lo) * 0.05).max(1e-9);
    let (start, end) = (lo - pad, hi + pad);
    let bins = bins.max(1);
    let width = (end - start) / bins as f64;
    let mut counts = vec![0u32; bins];
    for v in values.iter().filter(|v| v.is_finite()) {
        let b = (((v - start) / width) as usize).min(bins - 1);
        counts[b] += 1;
    }
    Histogram {
        start,
        width,
        counts,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn z_of_an_even_team_at_expectation_is_zero() {
        assert_eq!(luck_z(81.0, 162.0, 0.5), Some(0.0));
        assert_eq!(luck_z(0.0, 10.0, 0.0), None);
    }
}
