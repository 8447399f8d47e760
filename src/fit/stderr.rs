//! Standard errors of log-loss fits from the observed information.

use super::loss::row_nll;
use crate::data::Table;
use crate::model::{ModelKind, Row, predict};

/// Standard errors two ways, with the dispersion that links them.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct StdErrors {
    /// Binomial: the inverse observed information, as if every game were an independent coin flip.
    pub binomial: Vec<f64>,
    /// Quasi-binomial: binomial × sqrt(dispersion).
    pub corrected: Vec<f64>,
    /// Pearson χ²/(n − p): how much the win records vary around the model compared with binomial noise.
    pub dispersion: f64,
}

/// Pearson χ²/(n − p) of a fitted model.
fn dispersion(t: &Table, kind: ModelKind, params: &[f64]) -> f64 {
    let mut chi2 = 0.0;
    for i in 0..t.len() {
        let p = predict(kind, params, &Row::of(t, i));
        let v = p * (1.0 - p);
        if v > 0.0 {
            let e = t.win_pct[i] - p;
            chi2 += t.decisions[i] * e * e / v;
        }
    }
    chi2 / (t.len() as f64 - params.len() as f64)
}

/// Standard errors at a log-loss optimum; `None` when the information is not positive definite.
pub fn std_errors(t: &Table, kind: ModelKind, params: &[f64]) -> Option<StdErrors> {
    if t.len() <= params.len() {
        return None;
    }
    let binomial = match kind {
        ModelKind::Pythagorean => {
            // Logistic regression without intercept: I(x) = Σ n·p(1−p)·ln²(RS/RA).
            let x = params[0];
            let info: f64 = (0..t.len())
                .filter(|&i| t.ln_ratio[i].is_finite())
                .map(|i| {
                    let l = t.ln_ratio[i];
                    let q = 1.0 / (1.0 + (-x * l).exp());
                    t.decisions[i] * q * (1.0 - q) * l * l
                })
                .sum();
            (info > 0.0).then(|| vec![1.0 / info.sqrt()])?
        }
        _ => numeric_std_errors(t, kind, params)?,
    };
    let dispersion = dispersion(t, kind, params);
    if !dispersion.is_finite() {
        return None;
    }
    let corrected = binomial.iter().map(|s| s * dispersion.sqrt()).collect();
    Some(StdErrors {
        binomial,
        corrected,
        dispersion,
    })
}

fn total_nll(t: &Table, kind: ModelKind, params: &[f64]) -> f64 {
    (0..t.len())
        .map(|i| {
            row_nll(
                t.wins[i],
                t.losses[i],
                predict(kind, params, &Row::of(t, i)),
            )
        })
        .sum()
}

/// The inverse of a central-difference Hessian of the total negative log-likelihood.
fn numeric_std_errors(t: &Table, kind: ModelKind, params: &[f64]) -> Option<Vec<f64>> {
    let k = params.len();
    let h: Vec<f64> = params.iter().map(|v| 1e-4 * v.abs().max(1e-2)).collect();
    let f = |d: &[f64]| {
        let p: Vec<f64> = params.iter().zip(d).map(|(a, b)| a + b).collect();
        total_nll(t, kind, &p)
    };
    let f0 = f(&vec![0.0; k]);
    let mut hess = vec![vec![0.0; k]; k];
    for i in 0..k {
        for j in i..k {
            let v = if i == j {
                let mut up = vec![0.0; k];
                up[i] = h[i];
                let mut down = vec![0.0; k];
                down[i] = -h[i];
                (f(&up) - 2.0 * f0 + f(&down)) / (h[i] * h[i])
            } else {
                let at = |si: f64, sj: f64| {
                    let mut d = vec![0.0; k];
                    d[i] = si * h[i];
                    d[j] = sj * h[j];
                    f(&d)
                };
                (at(1.0, 1.0) - at(1.0, -1.0) - at(-1.0, 1.0) + at(-1.0, -1.0))
                    / (4.0 * h[i] * h[j])
            };
            hess[i][j] = v;
            hess[j][i] = v;
        }
    }
    let variances = match k {
        1 => vec![1.0 / hess[0][0]],
        2 => {
            let det = hess[0][0] * hess[1][1] - hess[0][1] * hess[1][0];
            if det.is_nan() || det <= 0.0 {
                return None;
            }
            vec![hess[1][1] / det, hess[0][0] / det]
        }
        _ => return None,
    };
    variances
        .into_iter()
        .map(|v| (v > 0.0 && v.is_finite()).then(|| v.sqrt()))
        .collect()
}
