//! The drift gate: rules that compare new data with a saved calibration.

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
    /// Largest allowed |refit − saved| in standard errors of the difference.
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
    }
    Ok(rules)
}

/// The one line that says why the gate failed, or that it passed.
pub fn verdict(rules: &[Rule]) -> String {
    let failed: Vec<&Rule> = rules.iter().filter(|r| !r.passed).collect();
    if failed.is_empty() {
        return format!("PASSED: all {} rules hold", rules.len());
    }
    let parts: Vec<String> = failed
        .iter()
        .map(|r| format!("{} = {:.4} exceeds {}", r.rule, r.value, r.threshold))
        .collect();
    format!("FAILED: {}", parts.join("; "))
}
