//! Is the exponent constant? One exponent for every season against one per season (or per block of
//! seasons), by a quasi-likelihood F test: F = (ΔD/Δdf)/φ̂, with φ̂ the Pearson χ²/(n − K) of the
//! per-group model and F referred to F(K − 1, n − K) (McCullagh and Nelder, Generalized Linear Models,
//! 2nd ed., §12.6). Win records are underdispersed (φ ≈ 0.4), so the binomial likelihood-ratio test
//! (ΔD against χ²) would reject far too seldom; its p-value is reported beside, for comparison.

use std::collections::BTreeMap;

use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor};

use super::Options;
use crate::data::Table;
use crate::fit::loss::row_nll;
use crate::model::pythagorean_pct;

/// The level the verdict is stated at.
pub const LEVEL: f64 = 0.05;

/// What the alternative fits one exponent to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ChangeBy {
    Season,
    /// Consecutive, non-overlapping blocks of `--window` seasons (the last may be shorter).
    Block,
}

impl ChangeBy {
    pub fn name(self) -> &'static str {
        match self {
            ChangeBy::Season => "season",
            ChangeBy::Block => "block",
        }
    }
}

/// The test's numbers.
#[derive(Debug, Clone, PartialEq)]
pub struct ChangeTest {
    pub by: ChangeBy,
    /// Groups fitted, and groups left out (fewer team-seasons than `--min-group`, or no fit).
    pub groups: usize,
    pub groups_left_out: usize,
    pub rows: usize,
    /// The one exponent fitted to every row of the fitted groups.
    pub common_exponent: f64,
    /// Binomial deviance of one exponent minus that of one per group.
    pub deviance_change: f64,
    pub df_change: usize,
    pub df_residual: usize,
    /// Pearson χ²/(n − K) of the per-group model.
    pub dispersion: f64,
    pub f_statistic: f64,
    pub p_value: f64,
    /// ΔD against χ²(K − 1): what a binomial (dispersion 1) test would say.
    pub p_value_binomial: f64,
    pub level: f64,
    pub rejects: bool,
}

/// Negative log-likelihood and Pearson χ² of one exponent on a table.
fn nll_and_chi2(t: &Table, x: f64) -> (f64, f64) {
    let mut nll = 0.0;
    let mut chi2 = 0.0;
    for i in 0..t.len() {
        let p = pythagorean_pct(x, t.ln_ratio[i]);
        nll += row_nll(t.wins[i], t.losses[i], p);
        let v = p * (1.0 - p);
        if v > 0.0 {
            let e = t.win_pct[i] - p;
            chi2 += t.decisions[i] * e * e / v;
        }
    }
    (nll, chi2)
}

/// The groups' season spans.
fn groups(seasons: &[i32], by: ChangeBy, block: usize) -> Vec<(i32, i32)> {
    match by {
        ChangeBy::Season => seasons.iter().map(|&s| (s, s)).collect(),
        ChangeBy::Block => seasons
            .chunks(block.max(1))
            .filter_map(|c| Some((*c.first()?, *c.last()?)))
            .collect(),
    }
}

/// Run the test; `Err` says in words why it cannot be run on these data.
pub fn test(
    t: &Table,
    by_season: &BTreeMap<i32, Vec<usize>>,
    opts: &Options,
) -> Result<ChangeTest, String> {
    let seasons: Vec<i32> = by_season.keys().copied().collect();
    let mut used: Vec<usize> = Vec::new();
    let mut full_nll = 0.0;
    let mut full_chi2 = 0.0;
    let mut fitted = 0usize;
    let mut left_out = 0usize;
    for (a, b) in groups(&seasons, opts.change_by, opts.window) {
        let idx = super::rows_between(by_season, a, b);
        let fit = (idx.len() >= opts.min_group)
            .then(|| super::exponent_fit(t, &idx))
            .flatten();
        match fit {
            Some((f, sub)) => {
                let (nll, chi2) = nll_and_chi2(&sub, f.model.params[0]);
                full_nll += nll;
                full_chi2 += chi2;
                fitted += 1;
                used.extend(idx);
            }
            None => left_out += 1,
        }
    }
    if fitted < 2 {
        return Err(format!(
            "needs at least two {}s with {} or more team-seasons each",
            opts.change_by.name(),
            opts.min_group
        ));
    }
    used.sort_unstable();
    let n = used.len();
    if n <= fitted {
        return Err("needs more team-seasons than groups".to_string());
    }
    let (common, sub) = super::exponent_fit(t, &used)
        .ok_or_else(|| "one exponent cannot be fitted to these rows".to_string())?;
    let x0 = common.model.params[0];
    let (null_nll, _) = nll_and_chi2(&sub, x0);
    let deviance_change = (2.0 * (null_nll - full_nll)).max(0.0);
    let df_change = fitted - 1;
    let df_residual = n - fitted;
    let dispersion = full_chi2 / df_residual as f64;
    let f_statistic = deviance_change / df_change as f64 / dispersion;
    let p_value = FisherSnedecor::new(df_change as f64, df_residual as f64)
        .map(|d| d.sf(f_statistic))
        .unwrap_or(f64::NAN);
    let p_value_binomial = ChiSquared::new(df_change as f64)
        .map(|d| d.sf(deviance_change))
        .unwrap_or(f64::NAN);
    Ok(ChangeTest {
        by: opts.change_by,
        groups: fitted,
        groups_left_out: left_out,
        rows: n,
        common_exponent: x0,
        deviance_change,
        df_change,
        df_residual,
        dispersion,
        f_statistic,
        p_value,
        p_value_binomial,
        level: LEVEL,
        rejects: p_value < LEVEL,
    })
}
