//! Standard errors of log-loss fits from the analytic (expected) information matrix, the
//! dispersion that turns them quasi-binomial, information criteria and identification warnings.
//!
//! Every model is a binomial regression on known quantities of each row: with g = ∂logit(p̂)/∂θ
//! ([`crate::model::logit_gradient`]) the information is I = Σ n·p̂(1−p̂)·g·gᵀ. For the Pythagorean
//! and Pythagenport models (logistic regressions without intercept on ln(RS/RA) and
//! log10(RPG)·ln(RS/RA)) this is X′WX, equal to the observed information; for PythagenPat the
//! covariate is ∂(x·ln(RS/RA))/∂z = x·ln(RPG)·ln(RS/RA) with x = RPG^z; for the linear model
//! g = (∂p̂/∂r)/(p̂(1−p̂)), the identity-link binomial regression's own information. These are the
//! covariances a GLM library reports at the same optimum (statsmodels' IRLS uses the expected
//! information). No finite differences: the Pythagenport valley (corr(a, b) ≈ −0.999 within one
//! era) makes a numerical Hessian of a total log-loss of ~10⁵ unreliable.

use super::loss::Metrics;
use crate::data::Table;
use crate::model::{Model, ModelKind, Row, logit_gradient, plausible_ranges, predict};

/// Standard errors two ways, with the dispersion that links them and the covariance behind them.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct StdErrors {
    /// Binomial: the inverse information, as if every game were an independent coin flip.
    pub binomial: Vec<f64>,
    /// Quasi-binomial: binomial × sqrt(dispersion).
    pub corrected: Vec<f64>,
    /// Pearson χ²/(n − p) over the rows with 0 < p̂ < 1: how much the win records vary around the
    /// model compared with binomial noise.
    pub dispersion: f64,
    /// Binomial covariance of the parameters (the inverse information), k × k.
    #[serde(default)]
    pub covariance_binomial: Vec<Vec<f64>>,
    /// Quasi-binomial covariance: dispersion × the binomial one.
    #[serde(default)]
    pub covariance: Vec<Vec<f64>>,
    /// The parameters' correlation matrix (the same for both scales).
    #[serde(default)]
    pub correlation: Vec<Vec<f64>>,
    /// Rows whose p̂ lies outside (0, 1) (a linear prediction past 0 or 1, or a side with no runs):
    /// they carry no likelihood slope, so they are left out of the information, of the dispersion's
    /// χ² and of its degrees of freedom alike.
    #[serde(default)]
    pub rows_outside_unit: usize,
}

/// Information criteria of a log-loss fit. The log-likelihood omits the binomial coefficients,
/// which are the same for every model fitted to the same rows, so only differences mean anything.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Criteria {
    /// Σ [W·ln p̂ + L·ln(1 − p̂)] (ties as half a win and half a loss).
    pub log_likelihood: f64,
    /// Fitted parameters (k).
    pub parameters: usize,
    /// 2k − 2·lnL.
    pub aic: f64,
    /// 2k − 2·lnL/φ with this fit's own dispersion φ.
    pub qaic: f64,
    pub dispersion: f64,
}

/// Pearson χ² and the rows it covers.
fn pearson(t: &Table, kind: ModelKind, params: &[f64]) -> (f64, usize) {
    let (mut chi2, mut rows) = (0.0, 0);
    for i in 0..t.len() {
        let p = predict(kind, params, &Row::of(t, i));
        let v = p * (1.0 - p);
        if v > 0.0 {
            let e = t.win_pct[i] - p;
            chi2 += t.decisions[i] * e * e / v;
            rows += 1;
        }
    }
    (chi2, rows)
}

/// The expected information Σ n·p̂(1−p̂)·g·gᵀ, k × k, and the rows that carry none.
pub fn information(t: &Table, kind: ModelKind, params: &[f64]) -> (Vec<Vec<f64>>, usize) {
    let k = params.len();
    let mut info = vec![vec![0.0; k]; k];
    let mut outside = 0;
    for i in 0..t.len() {
        let row = Row::of(t, i);
        let p = predict(kind, params, &row);
        let v = t.decisions[i] * p * (1.0 - p);
        match logit_gradient(kind, params, &row) {
            Some(g) if p > 0.0 && p < 1.0 => {
                for a in 0..k {
                    for b in 0..k {
                        info[a][b] += v * g[a] * g[b];
                    }
                }
            }
            _ => outside += 1,
        }
    }
    (info, outside)
}

/// The inverse of a 1×1 or 2×2 positive definite matrix.
fn invert(m: &[Vec<f64>]) -> Option<Vec<Vec<f64>>> {
    match m.len() {
        1 => (m[0][0] > 0.0 && m[0][0].is_finite()).then(|| vec![vec![1.0 / m[0][0]]]),
        2 => {
            let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
            if !(det > 0.0 && det.is_finite() && m[0][0] > 0.0) {
                return None;
            }
            Some(vec![
                vec![m[1][1] / det, -m[0][1] / det],
                vec![-m[1][0] / det, m[0][0] / det],
            ])
        }
        _ => None,
    }
}

/// Standard errors at a log-loss optimum; `None` when the information is not positive definite.
pub fn std_errors(t: &Table, kind: ModelKind, params: &[f64]) -> Option<StdErrors> {
    let k = params.len();
    let (info, rows_outside_unit) = information(t, kind, params);
    let (chi2, rows) = pearson(t, kind, params);
    if rows <= k {
        return None;
    }
    let dispersion = chi2 / (rows - k) as f64;
    let covariance_binomial = invert(&info)?;
    if !dispersion.is_finite() {
        return None;
    }
    let binomial: Vec<f64> = (0..k).map(|a| covariance_binomial[a][a].sqrt()).collect();
    let correlation = (0..k)
        .map(|a| {
            (0..k)
                .map(|b| covariance_binomial[a][b] / (binomial[a] * binomial[b]))
                .collect()
        })
        .collect();
    let covariance = covariance_binomial
        .iter()
        .map(|r| r.iter().map(|v| v * dispersion).collect())
        .collect();
    Some(StdErrors {
        corrected: binomial.iter().map(|s| s * dispersion.sqrt()).collect(),
        binomial,
        dispersion,
        covariance_binomial,
        covariance,
        correlation,
        rows_outside_unit,
    })
}

/// AIC and QAIC of a log-loss fit with `parameters` parameters and dispersion φ.
pub fn criteria(t: &Table, metrics: &Metrics, parameters: usize, dispersion: f64) -> Criteria {
    let games: f64 = t.decisions.iter().sum();
    let log_likelihood = -metrics.logloss * games;
    let k = parameters as f64;
    Criteria {
        log_likelihood,
        parameters,
        aic: 2.0 * k - 2.0 * log_likelihood,
        qaic: 2.0 * k - 2.0 * log_likelihood / dispersion,
        dispersion,
    }
}

/// |correlation| beyond which two parameters are not separately determined.
pub const WEAK_CORRELATION: f64 = 0.99;

/// Plain-words warnings that a fit's parameters are weakly identified: a parameter correlation
/// beyond ±0.99, or a (quasi-binomial) standard error wider than the parameter's whole plausible
/// range ([`crate::model::plausible_ranges`]).
pub fn weak_identification(model: &Model, se: &StdErrors) -> Vec<String> {
    let names = model.kind.param_names();
    let mut flags = Vec::new();
    for a in 0..names.len() {
        for b in a + 1..names.len() {
            let r = se.correlation[a][b];
            if r.abs() > WEAK_CORRELATION {
                flags.push(format!(
                    "{} and {} are correlated at {r:+.4}: the data fix only a combination of them, not each one",
                    names[a], names[b]
                ));
            }
        }
    }
    for ((name, &(lo, hi)), &s) in names
        .iter()
        .zip(plausible_ranges(model.kind))
        .zip(&se.corrected)
    {
        if s > hi - lo {
            flags.push(format!(
                "the standard error of {name} ({s:.3}) is wider than its whole plausible range {lo}–{hi}: the data do not determine it"
            ));
        }
    }
    flags
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::Weighting;
    use crate::fit::testdata::databank;
    use crate::fit::{Loss, fit_model};

    #[test]
    fn pythagenport_on_one_era_is_flagged_as_weakly_identified() {
        let (t, _) = databank(Some("1980-2006"), Weighting::None);
        let f = fit_model(&t, ModelKind::Pythagenport, Loss::Logloss).unwrap();
        let se = f.std_errors.as_ref().unwrap();
        // statsmodels GLM on the same covariates gives corr(a, b) = −0.9995 here
        // (tests/reference/reference_values.json); anything beyond ±0.99 is flagged.
        assert!(se.correlation[0][1] < -0.99, "{:?}", se.correlation);
        assert_eq!(
            f.weak_identification.len(),
            1,
            "{:?}",
            f.weak_identification
        );
        assert!(f.weak_identification[0].contains("a and b are correlated"));
        let py = fit_model(&t, ModelKind::Pythagorean, Loss::Logloss).unwrap();
        assert!(py.weak_identification.is_empty());
    }

    #[test]
    fn qaic_is_aic_when_the_dispersion_is_one() {
        let (t, _) = databank(Some("1980-2006"), Weighting::None);
        let f = fit_model(&t, ModelKind::Pythagorean, Loss::Logloss).unwrap();
        let c = criteria(&t, &f.metrics, 1, 1.0);
        // Definitions (Akaike 1974; the quasi-likelihood form of Lebreton et al. 1992).
        assert_eq!(c.aic, c.qaic);
        assert!(
            (c.aic - (2.0 + 2.0 * f.metrics.logloss * t.decisions.iter().sum::<f64>())).abs()
                < 1e-6
        );
    }
}
