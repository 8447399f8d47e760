//! The published win-expectation formulas, as pure functions of a row's precomputed quantities.

use std::fmt;

use crate::data::Table;

/// A win-expectation formula.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize, serde::Deserialize,
)]
#[serde(rename_all = "lowercase")]
pub enum ModelKind {
    /// RS^x / (RS^x + RA^x) (Pythagorean expectation).
    Pythagorean,
    /// Pythagorean with x = RPG^z (PythagenPat).
    Pythagenpat,
    /// Pythagorean with x = a·log10(RPG) + b (Pythagenport).
    Pythagenport,
    /// 0.5 + (RS − RA)/(G·runs_per_win).
    Linear,
}

impl ModelKind {
    pub const ALL: [ModelKind; 4] = [
        ModelKind::Pythagorean,
        ModelKind::Pythagenpat,
        ModelKind::Pythagenport,
        ModelKind::Linear,
    ];

    pub fn name(self) -> &'static str {
        match self {
            ModelKind::Pythagorean => "pythagorean",
            ModelKind::Pythagenpat => "pythagenpat",
            ModelKind::Pythagenport => "pythagenport",
            ModelKind::Linear => "linear",
        }
    }

    pub fn param_names(self) -> &'static [&'static str] {
        match self {
            ModelKind::Pythagorean => &["exponent"],
            ModelKind::Pythagenpat => &["z"],
            ModelKind::Pythagenport => &["a", "b"],
            ModelKind::Linear => &["runs_per_win"],
        }
    }

    /// Where a fit starts: the usual published values.
    pub fn start(self) -> Vec<f64> {
        match self {
            ModelKind::Pythagorean => vec![2.0],
            ModelKind::Pythagenpat => vec![0.287],
            ModelKind::Pythagenport => vec![1.5, 0.45],
            ModelKind::Linear => vec![10.0],
        }
    }

    /// Whether the model turns each row's run environment into an exponent.
    pub fn has_exponent(self) -> bool {
        self != ModelKind::Linear
    }
}

impl fmt::Display for ModelKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl std::str::FromStr for ModelKind {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let s = s.trim().to_ascii_lowercase();
        ModelKind::ALL
            .into_iter()
            .find(|k| k.name() == s)
            .ok_or_else(|| {
                format!("unknown model '{s}' (models: pythagorean, pythagenpat, pythagenport, linear, or all)")
            })
    }
}

/// A model with its parameter values.
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    pub kind: ModelKind,
    pub params: Vec<f64>,
}

impl Model {
    pub fn new(kind: ModelKind, params: Vec<f64>) -> Model {
        Model { kind, params }
    }

    /// Check the parameters against the model's domain: every value finite; the Pythagorean exponent,
    /// PythagenPat's z and the linear runs per win positive (the fitter works in ln of them);
    /// Pythagenport's exponent a·log10(RPG) + b positive from 1 to 100 runs per game (b > 0 and
    /// 2a + b > 0), so no team's expectation runs backwards.
    pub fn validate(&self) -> Result<(), String> {
        let names = self.kind.param_names();
        if self.params.len() != names.len() {
            return Err(format!(
                "{} takes {} parameter(s) ({}), got {}",
                self.kind,
                names.len(),
                names.join(", "),
                self.params.len()
            ));
        }
        if let Some((n, v)) = names.iter().zip(&self.params).find(|(_, v)| !v.is_finite()) {
            return Err(format!(
                "{} {n} must be a finite number, got {v}",
                self.kind
            ));
        }
        match self.kind {
            ModelKind::Pythagenport => {
                let (a, b) = (self.params[0], self.params[1]);
                if !(b > 0.0 && 2.0 * a + b > 0.0) {
                    return Err(format!(
                        "pythagenport a {a}, b {b} give a non-positive exponent a·log10(RPG) + b between 1 and 100 runs per game (need b > 0 and 2a + b > 0)"
                    ));
                }
            }
            _ => {
                if self.params[0] <= 0.0 {
                    return Err(format!(
                        "{} {} must be positive, got {}",
                        self.kind, names[0], self.params[0]
                    ));
                }
            }
        }
        Ok(())
    }

    /// `pythagorean:1.83`, `pythagenport:1.5,0.45`.
    pub fn label(&self) -> String {
        let p: Vec<String> = self.params.iter().map(|v| format!("{v}")).collect();
        format!("{}:{}", self.kind, p.join(","))
    }

    /// The exponent a row receives; `None` for the linear model.
    pub fn exponent_at(&self, rpg: f64) -> Option<f64> {
        exponent(self.kind, &self.params, rpg.ln(), rpg.log10())
    }

    /// Runs per win at a run environment: the marginal value of a run.
    pub fn runs_per_win(&self, rpg: f64) -> f64 {
        runs_per_win(self.kind, &self.params, rpg)
    }

    /// Expected win% from raw totals.
    pub fn expected_win_pct(&self, runs_scored: f64, runs_allowed: f64, games: f64) -> f64 {
        let rpg = (runs_scored + runs_allowed) / games;
        let row = Row {
            ln_ratio: (runs_scored / runs_allowed).ln(),
            ln_rpg: rpg.ln(),
            log10_rpg: rpg.log10(),
            diff_per_game: (runs_scored - runs_allowed) / games,
        };
        predict(self.kind, &self.params, &row)
    }
}

impl std::str::FromStr for Model {
    type Err = String;
    /// Parse `MODEL:P[,P…]`.
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let (name, rest) = s
            .split_once(':')
            .ok_or_else(|| format!("expected MODEL:PARAMS such as pythagorean:2.37, got '{s}'"))?;
        let kind: ModelKind = name.parse()?;
        let params: Vec<f64> = rest
            .split(',')
            .map(|p| {
                p.trim()
                    .parse::<f64>()
                    .ok()
                    .filter(|v| v.is_finite())
                    .ok_or_else(|| format!("'{p}' in '{s}' is not a number"))
            })
            .collect::<Result<_, _>>()?;
        let want = kind.param_names();
        if params.len() != want.len() {
            return Err(format!(
                "{kind} takes {} parameter(s) ({}), got {} in '{s}'",
                want.len(),
                want.join(", "),
                params.len()
            ));
        }
        let m = Model { kind, params };
        m.validate().map_err(|e| format!("{e} in '{s}'"))?;
        Ok(m)
    }
}

/// The quantities of one row that the formulas read.
#[derive(Debug, Clone, Copy)]
pub struct Row {
    pub ln_ratio: f64,
    pub ln_rpg: f64,
    pub log10_rpg: f64,
    pub diff_per_game: f64,
}

impl Row {
    #[inline]
    pub fn of(t: &Table, i: usize) -> Row {
        Row {
            ln_ratio: t.ln_ratio[i],
            ln_rpg: t.ln_rpg[i],
            log10_rpg: t.log10_rpg[i],
            diff_per_game: t.diff_per_game[i],
        }
    }
}

/// The exponent of a run environment; `None` for the linear model.
#[inline]
pub fn exponent(kind: ModelKind, params: &[f64], ln_rpg: f64, log10_rpg: f64) -> Option<f64> {
    match kind {
        ModelKind::Pythagorean => Some(params[0]),
        ModelKind::Pythagenpat => Some((params[0] * ln_rpg).exp()),
        ModelKind::Pythagenport => Some(params[0] * log10_rpg + params[1]),
        ModelKind::Linear => None,
    }
}

/// RS^x/(RS^x+RA^x) written as 1/(1+exp(−x·ln(RS/RA))): no power of a large run total is ever formed,
/// so 10^9 runs cannot overflow. A side with no runs gives exactly 0 or 1.
#[inline]
pub fn pythagorean_pct(x: f64, ln_ratio: f64) -> f64 {
    if ln_ratio.is_infinite() {
        // x·(±inf) is NaN at x = 0; the limit depends only on the signs.
        return if x == 0.0 {
            0.5
        } else if (x > 0.0) == (ln_ratio > 0.0) {
            1.0
        } else {
            0.0
        };
    }
    logistic(x * ln_ratio)
}

/// The logistic function σ(η) = 1/(1+exp(−η)): the one sigmoid every exponent model uses.
#[inline]
pub fn logistic(eta: f64) -> f64 {
    1.0 / (1.0 + (-eta).exp())
}

/// Expected win% of one row.
#[inline]
pub fn predict(kind: ModelKind, params: &[f64], row: &Row) -> f64 {
    match exponent(kind, params, row.ln_rpg, row.log10_rpg) {
        Some(x) => pythagorean_pct(x, row.ln_ratio),
        None => 0.5 + row.diff_per_game / params[0],
    }
}

/// A row's p̂ with the first and second derivatives of logit(p̂) in the parameters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LogitDerivatives {
    pub p: f64,
    /// g = ∂logit(p̂)/∂θ (entries past the parameter count are 0).
    pub gradient: [f64; 2],
    /// ∂²logit(p̂)/∂θ∂θᵀ.
    pub hessian: [[f64; 2]; 2],
}

/// p̂ of one row and the derivatives of its logit, in one evaluation. g = ∂logit(p̂)/∂θ is the
/// direction in which the row's score moves: the log-likelihood's gradient is Σ (W − n·p̂)·g, its
/// expected (Fisher) information Σ n·p̂(1−p̂)·g·gᵀ, and the observed information adds
/// −(W − n·p̂)·∂g. For the exponent models logit(p̂) = x(θ)·ln(RS/RA), so g = ln(RS/RA)·∂x/∂θ: a
/// fixed covariate for the Pythagorean and Pythagenport models (logistic regressions without
/// intercept, ∂g = 0), x·ln(RPG)·ln(RS/RA) for PythagenPat. For the linear model
/// g = (∂p̂/∂r)/(p̂(1−p̂)). `None` where p̂ lies outside (0, 1) (a zero-run side, or a linear
/// prediction past 0 or 1): such a row has no likelihood slope.
#[inline]
pub fn logit_derivatives(kind: ModelKind, params: &[f64], row: &Row) -> Option<LogitDerivatives> {
    let l = row.ln_ratio;
    let exponent_model = |x: f64, gradient: [f64; 2], hessian: [[f64; 2]; 2]| {
        l.is_finite().then(|| LogitDerivatives {
            p: pythagorean_pct(x, l),
            gradient,
            hessian,
        })
    };
    match kind {
        ModelKind::Pythagorean => exponent_model(params[0], [l, 0.0], [[0.0; 2]; 2]),
        ModelKind::Pythagenpat => {
            let x = (params[0] * row.ln_rpg).exp();
            let g = l * x * row.ln_rpg;
            exponent_model(x, [g, 0.0], [[g * row.ln_rpg, 0.0], [0.0; 2]])
        }
        ModelKind::Pythagenport => exponent_model(
            params[0] * row.log10_rpg + params[1],
            [l * row.log10_rpg, l],
            [[0.0; 2]; 2],
        ),
        ModelKind::Linear => {
            let (r, d) = (params[0], row.diff_per_game);
            let p = 0.5 + d / r;
            let v = p * (1.0 - p);
            // g = p'/v with p' = −d/r², p'' = 2d/r³, v' = (1 − 2p)·p'.
            let (dp, ddp) = (-d / (r * r), 2.0 * d / (r * r * r));
            (p > 0.0 && p < 1.0).then(|| LogitDerivatives {
                p,
                gradient: [dp / v, 0.0],
                hessian: [
                    [ddp / v - dp * dp * (1.0 - 2.0 * p) / (v * v), 0.0],
                    [0.0; 2],
                ],
            })
        }
    }
}

/// ∂logit(p̂)/∂θ of one row (see [`logit_derivatives`]).
#[inline]
pub fn logit_gradient(kind: ModelKind, params: &[f64], row: &Row) -> Option<[f64; 2]> {
    logit_derivatives(kind, params, row).map(|d| d.gradient)
}

/// The range each parameter plausibly takes for a major-league-like run environment (common
/// practice; values from memory of published fits, widened): exponent 1–3, PythagenPat z 0.15–0.45,
/// Pythagenport a 0–3 and b −1–2, runs per win 5–20. A standard error wider than its parameter's
/// whole range means the data do not determine that parameter.
pub fn plausible_ranges(kind: ModelKind) -> &'static [(f64, f64)] {
    match kind {
        ModelKind::Pythagorean => &[(1.0, 3.0)],
        ModelKind::Pythagenpat => &[(0.15, 0.45)],
        ModelKind::Pythagenport => &[(0.0, 3.0), (-1.0, 2.0)],
        ModelKind::Linear => &[(5.0, 20.0)],
    }
}

/// Runs per win at runs-per-game `rpg` (both teams): d(win%)/d(RS per game) at RS = RA is x/(2·RPG),
/// so one win costs 2·RPG/x runs; the linear model states it directly.
pub fn runs_per_win(kind: ModelKind, params: &[f64], rpg: f64) -> f64 {
    match exponent(kind, params, rpg.ln(), rpg.log10()) {
        Some(x) => 2.0 * rpg / x,
        None => params[0],
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn logistic_form_equals_power_form() {
        // RS^x/(RS^x+RA^x) with RS=800, RA=700, x=2: 640000/(640000+490000).
        let p = pythagorean_pct(2.0, (800.0f64 / 700.0).ln());
        assert!((p - 640000.0 / 1130000.0).abs() < 1e-15);
    }

    #[test]
    fn huge_and_zero_runs_stay_finite() {
        assert_eq!(pythagorean_pct(2.0, f64::NEG_INFINITY), 0.0);
        assert_eq!(pythagorean_pct(2.0, f64::INFINITY), 1.0);
        assert_eq!(pythagorean_pct(0.0, f64::INFINITY), 0.5);
        assert_eq!(pythagorean_pct(-1.0, f64::INFINITY), 0.0);
        let p = pythagorean_pct(15.0, (1e9f64 / 9.9e8).ln());
        assert!(p.is_finite() && p > 0.5);
    }

    #[test]
    fn runs_per_win_at_exponent_two_equals_runs_per_game() {
        // Common practice: with exponent 2, one win costs about one game's worth of runs (both teams).
        assert!((runs_per_win(ModelKind::Pythagorean, &[2.0], 9.0) - 9.0).abs() < 1e-12);
    }

    #[test]
    fn references_parse() {
        let m: Model = "pythagenport:1.5,0.45".parse().unwrap();
        assert_eq!(m.params, vec![1.5, 0.45]);
        assert!("pythagorean:1,2".parse::<Model>().is_err());
        assert!("cubic:3".parse::<Model>().is_err());
        assert!("linear:0".parse::<Model>().is_err());
        // Outside the domain: a negative exponent, z or intercept.
        assert!("pythagorean:-2".parse::<Model>().is_err());
        assert!("pythagorean:0".parse::<Model>().is_err());
        assert!("pythagenpat:-0.3".parse::<Model>().is_err());
        assert!("pythagenport:1.5,-0.45".parse::<Model>().is_err());
        assert!("pythagenport:-1,0.45".parse::<Model>().is_err());
    }
}
