//! JSON printers. Each schema is a serde-derived struct whose field order is the contract's key
//! order; the `schema` field carries the contract's version: change a shape only with a bump.

use serde::Serialize;
use serde::ser::{SerializeMap, SerializeSeq, Serializer};

use super::{FitReport, TeamLine};
use crate::fit::backtest::Candidate;
use crate::fit::{Group, Metrics, ModelFit};
use crate::model::Model;

/// A number that becomes `null` when it is not finite (JSON has no NaN or infinity).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Num(pub f64);

impl Serialize for Num {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        if self.0.is_finite() {
            s.serialize_f64(self.0)
        } else {
            s.serialize_none()
        }
    }
}

/// `[lo, hi]`, each finite or null.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pair(pub f64, pub f64);

impl Serialize for Pair {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut seq = s.serialize_seq(Some(2))?;
        seq.serialize_element(&Num(self.0))?;
        seq.serialize_element(&Num(self.1))?;
        seq.end()
    }
}

/// Parameter names mapped to values, in the model's parameter order.
#[derive(Debug, Clone, Copy)]
pub struct Named<'a, T> {
    pub names: &'a [&'a str],
    pub values: &'a [T],
}

impl<T: Copy + Into<Cell>> Serialize for Named<'_, T> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut m = s.serialize_map(Some(self.names.len()))?;
        for (n, v) in self.names.iter().zip(self.values) {
            m.serialize_entry(n, &(*v).into())?;
        }
        m.end()
    }
}

/// A value of a [`Named`] map: a number or an interval.
#[derive(Debug, Clone, Copy, Serialize)]
#[serde(untagged)]
pub enum Cell {
    Number(Num),
    Interval(Pair),
}

impl From<f64> for Cell {
    fn from(v: f64) -> Cell {
        Cell::Number(Num(v))
    }
}

impl From<(f64, f64)> for Cell {
    fn from((lo, hi): (f64, f64)) -> Cell {
        Cell::Interval(Pair(lo, hi))
    }
}

pub fn named<'a, T>(names: &'a [&'a str], values: &'a [T]) -> Named<'a, T> {
    Named { names, values }
}

pub fn params_of(m: &Model) -> Named<'_, f64> {
    named(m.kind.param_names(), &m.params)
}

/// Render a serialisable schema as pretty JSON with a closing newline.
pub fn to_bytes<T: Serialize>(value: &T) -> Result<Vec<u8>, crate::error::Error> {
    let mut s = serde_json::to_string_pretty(value)
        .map_err(|e| crate::error::Error::Serialize(e.to_string()))?;
    s.push('\n');
    Ok(s.into_bytes())
}

#[derive(Serialize)]
pub struct MetricsJson {
    mae: Num,
    rmse: Num,
    logloss: Num,
    bias: Num,
    max_abs: Num,
    rmse_wins: Num,
}

impl From<&Metrics> for MetricsJson {
    fn from(m: &Metrics) -> MetricsJson {
        MetricsJson {
            mae: Num(m.mae),
            rmse: Num(m.rmse),
            logloss: Num(m.logloss),
            bias: Num(m.bias),
            max_abs: Num(m.max_abs),
            rmse_wins: Num(m.rmse_wins),
        }
    }
}

/// One entry of `fits` in `runcal.fit/1`.
#[derive(Serialize)]
pub struct ModelFitJson<'a> {
    model: &'static str,
    loss: &'static str,
    group: Option<&'a Group>,
    fitted: bool,
    rows: usize,
    params: Named<'a, f64>,
    std_errors: Option<Named<'a, f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    std_errors_binomial: Option<Named<'a, f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    dispersion: Option<Num>,
    ci: Option<Named<'a, (f64, f64)>>,
    ci_level: Option<f64>,
    #[serde(
        skip_serializing_if = "Option::is_none",
        serialize_with = "serialize_metrics_ci"
    )]
    metrics_ci: Option<Vec<(&'static str, Pair)>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    bootstrap_sd: Option<Named<'a, f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    bootstrap_resamples: Option<usize>,
    #[serde(skip_serializing_if = "Option::is_none")]
    bootstrap_failed: Option<usize>,
    metrics: MetricsJson,
    runs_per_win: Num,
    average_rpg: Num,
    exponent_range: Option<Pair>,
    iterations: u64,
    converged: bool,
    /// Quasi-binomial covariance of the parameters (dispersion × inverse information), in the
    /// order of `params`.
    covariance: Option<Matrix<'a>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    covariance_binomial: Option<Matrix<'a>>,
    correlation: Option<Matrix<'a>>,
    /// Rows whose p̂ lies outside (0, 1), left out of the information and the dispersion.
    #[serde(skip_serializing_if = "Option::is_none")]
    rows_outside_unit: Option<usize>,
    /// Log-likelihood, AIC and QAIC (log-loss fits).
    criteria: Option<CriteriaJson>,
    /// Plain-words warnings that the data do not pin a parameter down.
    weak_identification: &'a [String],
}

/// A square matrix whose non-finite entries become null.
#[derive(Debug, Clone, Copy)]
pub struct Matrix<'a>(pub &'a [Vec<f64>]);

impl Serialize for Matrix<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut seq = s.serialize_seq(Some(self.0.len()))?;
        for row in self.0 {
            seq.serialize_element(&row.iter().map(|&v| Num(v)).collect::<Vec<_>>())?;
        }
        seq.end()
    }
}

#[derive(Serialize)]
pub struct CriteriaJson {
    log_likelihood: Num,
    parameters: usize,
    aic: Num,
    qaic: Num,
    dispersion: Num,
}

/// Serialises `[(name, [lo, hi]), …]` as an object.
struct Intervals<'a>(&'a [(&'static str, Pair)]);

impl Serialize for Intervals<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut m = s.serialize_map(Some(self.0.len()))?;
        for (k, v) in self.0 {
            m.serialize_entry(k, v)?;
        }
        m.end()
    }
}

fn serialize_metrics_ci<S: Serializer>(
    v: &Option<Vec<(&'static str, Pair)>>,
    s: S,
) -> Result<S::Ok, S::Error> {
    match v {
        Some(list) => Intervals(list).serialize(s),
        None => s.serialize_none(),
    }
}

impl<'a> From<&'a ModelFit> for ModelFitJson<'a> {
    fn from(f: &'a ModelFit) -> ModelFitJson<'a> {
        let names = f.model.kind.param_names();
        let se = f.std_errors.as_ref();
        let iv = f.intervals.as_ref();
        ModelFitJson {
            model: f.model.kind.name(),
            loss: f.loss.name(),
            group: f.group.as_ref(),
            fitted: f.fitted,
            rows: f.rows,
            params: params_of(&f.model),
            std_errors: se.map(|s| named(names, &s.corrected)),
            std_errors_binomial: se.map(|s| named(names, &s.binomial)),
            dispersion: se.map(|s| Num(s.dispersion)),
            ci: iv.map(|i| named(names, &i.params)),
            ci_level: iv.map(|i| i.level),
            metrics_ci: iv.map(|i| {
                i.metrics
                    .iter()
                    .map(|(k, &(lo, hi))| (*k, Pair(lo, hi)))
                    .collect()
            }),
            bootstrap_sd: iv.map(|i| named(names, &i.params_sd)),
            bootstrap_resamples: iv.map(|i| i.resamples),
            bootstrap_failed: iv.map(|i| i.failed),
            metrics: (&f.metrics).into(),
            runs_per_win: Num(f.runs_per_win),
            average_rpg: Num(f.average_rpg),
            exponent_range: f.exponent_range.map(|(lo, hi)| Pair(lo, hi)),
            iterations: f.iterations,
            converged: f.converged,
            covariance: se.map(|s| Matrix(&s.covariance)),
            covariance_binomial: se.map(|s| Matrix(&s.covariance_binomial)),
            correlation: se.map(|s| Matrix(&s.correlation)),
            rows_outside_unit: se.map(|s| s.rows_outside_unit),
            criteria: f.criteria.map(|c| CriteriaJson {
                log_likelihood: Num(c.log_likelihood),
                parameters: c.parameters,
                aic: Num(c.aic),
                qaic: Num(c.qaic),
                dispersion: Num(c.dispersion),
            }),
            weak_identification: &f.weak_identification,
        }
    }
}

#[derive(Serialize)]
struct TooSmallJson<'a> {
    group: &'a Group,
    rows: usize,
}

/// `runcal.fit/2`.
#[derive(Serialize)]
pub struct FitJson<'a> {
    schema: &'static str,
    caution: &'static str,
    rows_used: usize,
    rows_rejected: usize,
    loss: &'static str,
    fits: Vec<ModelFitJson<'a>>,
    too_small_groups: Vec<TooSmallJson<'a>>,
    unfitted_groups: &'a [crate::fit::calibrate::UnfittedGroup],
    /// The in-sample comparison of the fitted log-loss models: ΔQAIC, the verdict, the
    /// recommendation (`null` with fewer than two such fits, or with `--by`).
    comparison: Option<&'a crate::fit::Comparison>,
}

pub fn fit(r: &FitReport) -> FitJson<'_> {
    FitJson {
        schema: "runcal.fit/2",
        caution: crate::CAUTION,
        rows_used: r.rows_used,
        rows_rejected: r.rows_rejected,
        loss: r.loss.name(),
        fits: r.calibration.fits.iter().map(ModelFitJson::from).collect(),
        too_small_groups: r
            .calibration
            .too_small
            .iter()
            .map(|(group, rows)| TooSmallJson { group, rows: *rows })
            .collect(),
        unfitted_groups: &r.calibration.unfitted,
        comparison: r.calibration.comparison.as_ref(),
    }
}

/// The record and expectation columns every team row shares.
#[derive(Serialize)]
pub struct TeamJson<'a> {
    season: i32,
    league: Option<&'a str>,
    team: &'a str,
    games: u64,
    wins: u64,
    losses: u64,
    ties: u64,
    runs_scored: Num,
    runs_allowed: Num,
    win_pct: Num,
    expected_win_pct: Num,
    expected_wins: Num,
    luck_wins: Num,
}

impl<'a> From<&'a TeamLine> for TeamJson<'a> {
    fn from(t: &'a TeamLine) -> TeamJson<'a> {
        TeamJson {
            season: t.season,
            league: t.league.as_deref(),
            team: &t.team,
            games: t.games,
            wins: t.wins,
            losses: t.losses,
            ties: t.ties,
            runs_scored: Num(t.runs_scored),
            runs_allowed: Num(t.runs_allowed),
            win_pct: Num(t.win_pct),
            expected_win_pct: Num(t.expected_win_pct),
            expected_wins: Num(t.expected_wins),
            luck_wins: Num(t.luck_wins),
        }
    }
}

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

pub fn backtest(r: &super::BacktestReport) -> BacktestJson<'_> {
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

pub fn check(r: &super::CheckReport) -> CheckJson<'_> {
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

pub fn simulate<'a>(r: &'a super::SimulateReport<'a>) -> SimulateJson<'a> {
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
