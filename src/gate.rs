//! The drift gate: rules that compare new data with a saved calibration.

use statrs::distribution::{ChiSquared, ContinuousCDF, Normal};

use crate::fit::{Metrics, ModelFit};
use crate::profile::Profile;

/// One rule of the gate with its measured value.
#[derive(Debug, Clone, PartialEq)]
pub struct Rule {
    pub rule: String,
    pub threshold: f64,
    pub value: f64,
    pub passed: bool,
    /// One line on what was measured.
    pub detail: String,
}

/// Bounds on the saved calibration's error on new data.
#[derive(Debug, Clone, Copy, Default)]
pub struct Bounds {
    pub max_mae: Option<f64>,
    pub max_rmse: Option<f64>,
    pub max_logloss: Option<f64>,
    /// Largest allowed |refit − saved| in standard errors of the difference (one parameter); for
    /// two parameters, the joint Wald rule at the same two-sided normal level (see [`joint_drift`]).
    pub max_drift: Option<f64>,
}

/// Evaluate every rule. `scored` is the saved model's metrics on the new data, `refit` the same model
/// fitted to the new data by the saved loss.
pub fn evaluate(
    profile: &Profile,
    scored: &Metrics,
    refit: &ModelFit,
    bounds: &Bounds,
) -> Result<Vec<Rule>, String> {
    let mut rules = Vec::new();
    for (name, bound, value) in [
        ("max_mae", bounds.max_mae, scored.mae),
        ("max_rmse", bounds.max_rmse, scored.rmse),
        ("max_logloss", bounds.max_logloss, scored.logloss),
    ] {
        if let Some(b) = bound {
            rules.push(Rule {
                rule: name.to_string(),
                threshold: b,
                value,
                passed: value <= b,
                detail: format!("{} of the saved calibration on the new data", &name[4..]),
            });
        }
    }
    if let Some(s) = bounds.max_drift {
        let joint = (refit.model.params.len() == 2)
            .then(|| {
                let saved = profile.model().params;
                let cov_saved = profile.covariance.as_ref()?;
                let cov_new = &refit.std_errors.as_ref()?.covariance;
                joint_drift(&saved, &refit.model.params, cov_saved, cov_new, s)
            })
            .flatten();
        match joint {
            Some(rule) => rules.push(rule),
            None => rules.extend(drift_one_at_a_time(profile, refit, s)?),
        }
    }
    Ok(rules)
}

/// One z rule per parameter: |refit − saved| / sqrt(se_saved² + se_new²) against `max_drift`.
fn drift_one_at_a_time(profile: &Profile, refit: &ModelFit, s: f64) -> Result<Vec<Rule>, String> {
    let mut rules = Vec::new();
    for (i, name) in profile.model.param_names().iter().enumerate() {
        let saved = profile.params.get(*name).copied().unwrap_or(f64::NAN);
        let new = refit.model.params[i];
        let se_saved = profile.std_error_of(name).ok_or_else(|| {
            format!(
                "--max-drift needs the profile's standard errors or interval for '{name}' (save the profile from a log-loss fit, or with --bootstrap)"
            )
        })?;
        let se_new = refit.std_errors.as_ref().map_or(0.0, |se| se.corrected[i]);
        // The two estimates come from different data, so their difference has variance se₁² + se₂².
        let se = (se_saved * se_saved + se_new * se_new).sqrt();
        let drift = (new - saved).abs() / se;
        rules.push(Rule {
            rule: format!("max_drift:{name}"),
            threshold: s,
            value: drift,
            passed: drift <= s,
            detail: format!("{name} refitted {new:.4} vs saved {saved:.4}, difference {:+.4} (standard error {se:.4})", new - saved),
        });
    }
    Ok(rules)
}

/// The joint drift rule for a two-parameter model: the Wald statistic W = Δᵀ(Σ_saved + Σ_new)⁻¹Δ
/// of the parameter change Δ (the two fits come from different data, so their covariances add),
/// against the χ²₂ quantile at the level 2Φ(max_drift) − 1 that |z| ≤ max_drift has for one
/// parameter (max_drift 3 → level 0.9973 → W ≤ 11.83). With one parameter the same construction
/// is exactly today's z rule (W = z², χ²₁ quantile = max_drift²). `None` when the summed
/// covariance is not positive definite.
pub fn joint_drift(
    saved: &[f64],
    new: &[f64],
    cov_saved: &[Vec<f64>],
    cov_new: &[Vec<f64>],
    max_drift: f64,
) -> Option<Rule> {
    if saved.len() != 2 || new.len() != 2 || cov_saved.len() != 2 || cov_new.len() != 2 {
        return None;
    }
    let c = |i: usize, j: usize| cov_saved[i][j] + cov_new[i][j];
    let (saa, sab, sbb) = (c(0, 0), 0.5 * (c(0, 1) + c(1, 0)), c(1, 1));
    let det = saa * sbb - sab * sab;
    if !(det > 0.0 && saa > 0.0 && det.is_finite()) {
        return None;
    }
    let (da, db) = (new[0] - saved[0], new[1] - saved[1]);
    let wald = (sbb * da * da - 2.0 * sab * da * db + saa * db * db) / det;
    let level = 2.0 * Normal::standard().cdf(max_drift) - 1.0;
    let threshold = ChiSquared::new(2.0).ok()?.inverse_cdf(level);
    Some(Rule {
        rule: "max_drift:joint".to_string(),
        threshold,
        value: wald,
        passed: wald <= threshold,
        detail: format!(
            "parameters refitted ({:.4}, {:.4}) vs saved ({:.4}, {:.4}): Wald statistic {wald:.3} on the summed covariance against the chi-square (2 df) quantile {threshold:.3} at level {level:.6} (two-sided normal level of --max-drift {max_drift})",
            new[0], new[1], saved[0], saved[1]
        ),
    })
}

/// The one line that says why the gate failed, or that it passed.
pub fn verdict(rules: &[Rule]) -> String {
    let failed: Vec<&Rule> = rules.iter().filter(|r| !r.passed).collect();
    if failed.is_empty() {
        return match rules.len() {
            1 => "PASSED: the one rule holds".to_string(),
            n => format!("PASSED: all {n} rules hold"),
        };
    }
    let parts: Vec<String> = failed
        .iter()
        .map(|r| format!("{} = {:.4} exceeds {}", r.rule, r.value, r.threshold))
        .collect();
    format!("FAILED: {}", parts.join("; "))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::Weighting;
    use crate::fit::testdata::databank;
    use crate::fit::{Loss, fit_model};
    use crate::model::ModelKind;

    #[test]
    fn correlated_pythagenport_change_passes_one_at_a_time_but_fails_jointly() {
        // The covariance of Pythagenport on Databank 1980–2006, where corr(a, b) ≈ −0.9995.
        let (t, _) = databank(Some("1980-2006"), Weighting::None);
        let f = fit_model(&t, ModelKind::Pythagenport, Loss::Logloss).unwrap();
        let cov = f.std_errors.unwrap().covariance;
        let se = |i: usize| (2.0 * cov[i][i]).sqrt();
        let (saved, new): ([f64; 2], [f64; 2]) = ([0.03, 1.90], [2.26, -0.36]);
        // Each change alone is within 3 standard errors of the difference…
        for i in 0..2 {
            let z = (new[i] - saved[i]).abs() / se(i);
            assert!(z < 3.0, "parameter {i}: z {z}");
        }
        // …but together they move the exponent at the data's run level far more than the
        // covariance allows: the χ²₂ quantile at 2Φ(3) − 1 = 0.9973 is 11.829 (scipy.stats
        // chi2.ppf(0.9973002039367398, 2) = 11.829).
        let rule = joint_drift(&saved, &new, &cov, &cov, 3.0).unwrap();
        assert!((rule.threshold - 11.829).abs() < 1e-3, "{}", rule.threshold);
        assert!(!rule.passed, "{rule:?}");
        // Moving along the valley (the direction the data do not determine) passes.
        let along = [
            saved[0] + 0.5,
            saved[1] - 0.5 * t.log10_rpg.iter().sum::<f64>() / t.len() as f64,
        ];
        assert!(joint_drift(&saved, &along, &cov, &cov, 3.0).unwrap().passed);
    }

    #[test]
    fn joint_rule_with_one_parameter_would_be_the_z_rule() {
        // With one parameter W = z² and the χ²₁ quantile at 2Φ(s) − 1 is s² (a χ²₁ variable is the
        // square of a standard normal).
        let s: f64 = 2.5;
        let level = 2.0 * Normal::standard().cdf(s) - 1.0;
        let q = ChiSquared::new(1.0).unwrap().inverse_cdf(level);
        assert!((q - s * s).abs() < 1e-8, "{q}");
    }
}
