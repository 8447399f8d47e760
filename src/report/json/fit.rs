//! `runcal.fit/2`: one entry per fitted model and group, with its metrics, intervals and criteria.

use serde::Serialize;
use serde::ser::{SerializeMap, Serializer};

use super::{Matrix, Named, Num, Pair, named, params_of};
use crate::fit::{Group, Metrics, ModelFit};
use crate::report::FitReport;

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
