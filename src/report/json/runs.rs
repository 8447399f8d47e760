//! `runcal.backtest/2`, `runcal.check/1` and `runcal.simulate/1`.

use serde::Serialize;

use super::{Named, Num, named, params_of};
use crate::fit::backtest::Candidate;
use crate::report::{BacktestReport, CheckReport, SimulateReport};

#[derive(Serialize)]
struct FoldJson<'a> {
    season: i32,
    train_rows: usize,
    test_rows: usize,
    params: Named<'a, f64>,
    loss: Num,
}

#[derive(Serialize)]
struct CandidateJson<'a> {
    model: &'static str,
    label: String,
    fitted: bool,
    params: Option<Named<'a, f64>>,
    mae: Num,
    rmse: Num,
    /// RMSE in wins over the held-out seasons' mean length.
    rmse_wins: Num,
    logloss: Num,
    /// Out-of-sample loss minus the best's, its paired standard error across folds, and the folds
    /// in which this candidate's loss was lowest.
    margin: Num,
    margin_se: Option<Num>,
    folds_won: usize,
    folds: usize,
    fold_details: Vec<FoldJson<'a>>,
}

/// `runcal.backtest/2`.
#[derive(Serialize)]
pub struct BacktestJson<'a> {
    schema: &'static str,
    scheme: &'static str,
    loss: &'static str,
    rows_used: usize,
    rows_rejected: usize,
    models: Vec<CandidateJson<'a>>,
    best: Option<String>,
    margin: Option<Num>,
    /// Whether the data can tell the candidates apart, and the recommendation.
    comparison: Option<&'a crate::fit::Comparison>,
}

pub fn backtest(r: &BacktestReport) -> BacktestJson<'_> {
    let models = r
        .scores
        .iter()
        .map(|s| {
            let (fitted, kind, params) = match &s.candidate {
                Candidate::Fit(k) => (true, *k, None),
                Candidate::Fixed(m) => (false, m.kind, Some(params_of(m))),
            };
            CandidateJson {
                model: kind.name(),
                label: s.candidate.label(),
                fitted,
                params,
                mae: Num(s.metrics.mae),
                rmse: Num(s.metrics.rmse),
                rmse_wins: Num(s.metrics.rmse_wins),
                logloss: Num(s.metrics.logloss),
                margin: Num(s.margin),
                margin_se: s.margin_se.map(Num),
                folds_won: s.folds_won,
                folds: s.folds.len(),
                fold_details: s
                    .folds
                    .iter()
                    .map(|f| FoldJson {
                        season: f.season,
                        train_rows: f.train_rows,
                        test_rows: f.test_rows,
                        params: named(kind.param_names(), &f.params),
                        loss: Num(f.loss),
                    })
                    .collect(),
            }
        })
        .collect();
    BacktestJson {
        schema: "runcal.backtest/2",
        scheme: r.scheme.name(),
        loss: r.loss.name(),
        rows_used: r.rows_used,
        rows_rejected: r.rows_rejected,
        models,
        best: r.scores.first().map(|s| s.candidate.label()),
        margin: r.margin.map(Num),
        comparison: r.comparison.as_ref(),
    }
}

#[derive(Serialize)]
struct RuleJson<'a> {
    rule: &'a str,
    threshold: Num,
    value: Num,
    passed: bool,
    detail: &'a str,
}

/// `runcal.check/1`.
#[derive(Serialize)]
pub struct CheckJson<'a> {
    schema: &'static str,
    passed: bool,
    verdict: &'a str,
    profile: &'a str,
    rows_used: usize,
    rows_rejected: usize,
    rules: Vec<RuleJson<'a>>,
}

pub fn check(r: &CheckReport) -> CheckJson<'_> {
    CheckJson {
        schema: "runcal.check/1",
        passed: r.passed,
        verdict: &r.verdict,
        profile: &r.profile,
        rows_used: r.rows_used,
        rows_rejected: r.rows_rejected,
        rules: r
            .rules
            .iter()
            .map(|x| RuleJson {
                rule: &x.rule,
                threshold: Num(x.threshold),
                value: Num(x.value),
                passed: x.passed,
                detail: &x.detail,
            })
            .collect(),
    }
}

#[derive(Serialize)]
struct DesignJson<'a> {
    teams: usize,
    seasons: usize,
    games: usize,
    exponent: f64,
    runs_per_game: f64,
    talent_sd: f64,
    seed: u64,
    league: &'a str,
}

#[derive(Serialize)]
struct SimulatedTeamJson<'a> {
    season: i32,
    league: &'a str,
    team: String,
    games: u64,
    wins: u64,
    losses: u64,
    runs_scored: u64,
    runs_allowed: u64,
}

/// `runcal.simulate/1`.
#[derive(Serialize)]
pub struct SimulateJson<'a> {
    schema: &'static str,
    design: DesignJson<'a>,
    teams: Vec<SimulatedTeamJson<'a>>,
}

pub fn simulate<'a>(r: &'a SimulateReport<'a>) -> SimulateJson<'a> {
    let d = r.design;
    SimulateJson {
        schema: "runcal.simulate/1",
        design: DesignJson {
            teams: d.teams,
            seasons: d.seasons,
            games: d.games,
            exponent: d.shape,
            runs_per_game: d.runs_per_game,
            talent_sd: d.talent_sd,
            seed: d.seed,
            league: &d.league,
        },
        teams: r
            .rows
            .iter()
            .map(|row| SimulatedTeamJson {
                season: row.season,
                league: &d.league,
                team: crate::simulate::club_name(row.team),
                games: row.games,
                wins: row.wins,
                losses: row.losses,
                runs_scored: row.runs_scored,
                runs_allowed: row.runs_allowed,
            })
            .collect(),
    }
}
