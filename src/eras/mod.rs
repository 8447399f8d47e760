//! Era drift: how a league's Pythagorean exponent moves over its seasons, and how much of the movement
//! its run environment explains.
//!
//! Every number here is a log-loss (binomial GLM) fit with the dispersion-corrected standard error of
//! `fit::stderr`; the run environment's share comes from PythagenPat (x = RPG^z), fitted on the whole
//! history and at its published z. The core computes everything; `report/` only prints it.

pub mod change;
pub mod span;

use std::collections::BTreeMap;

use rayon::prelude::*;

use crate::data::{Table, TeamSeason};
use crate::error::FitError;
use crate::fit::{self, Loss, bootstrap};
use crate::model::ModelKind;
pub use change::{ChangeBy, ChangeTest};
pub use span::Recommendation;

/// PythagenPat's published z (from memory; the value the trade quotes for major-league baseball).
pub const PUBLISHED_Z: f64 = 0.287;

/// The caution an era report carries.
pub const CAUTION: &str = "Descriptive statistics, not wagering or financial advice. Exponents are \
estimates; neighbouring windows share seasons, so their points are not independent.";

/// The standard normal's 97.5% quantile.
const Z95: f64 = 1.959_963_984_540_054;

/// The most bootstrap resamples a window may ask for: beyond this an interval's percentiles no longer
/// move, and 150 windows × 100,000 resamples is already minutes of work.
pub const MAX_RESAMPLES: usize = 100_000;

/// How windows move over the seasons.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum WindowKind {
    /// `N` consecutive seasons, moved on one season at a time.
    Rolling,
    /// From the first season, one season longer each step (the first holds `N` seasons).
    Expanding,
}

impl WindowKind {
    pub fn name(self) -> &'static str {
        match self {
            WindowKind::Rolling => "rolling",
            WindowKind::Expanding => "expanding",
        }
    }
}

/// What to compute.
#[derive(Debug, Clone, Copy)]
pub struct Options {
    /// Seasons per window.
    pub window: usize,
    pub kind: WindowKind,
    /// Windows (and seasons in the change test) with fewer team-seasons are listed but not fitted.
    pub min_group: usize,
    /// The standard error a recommended calibration span must reach.
    pub target_se: f64,
    pub change_by: ChangeBy,
    /// Bootstrap intervals for each window; each window replaces the seed with `window_seed`.
    pub bootstrap: Option<bootstrap::Options<'static>>,
}

impl Options {
    /// Refuse options no analysis can honour, before any work.
    pub fn validate(&self, seasons: usize) -> Result<(), FitError> {
        let bad = |m: String| Err(FitError::Invalid(m));
        if self.window == 0 {
            return bad("--window must be at least 1 season".to_string());
        }
        if self.window > seasons {
            return bad(format!(
                "--window {} is longer than the {seasons} season(s) in the data",
                self.window
            ));
        }
        if !(self.target_se.is_finite() && self.target_se > 0.0) {
            return bad(format!(
                "--target-se must be a positive number, got {}",
                self.target_se
            ));
        }
        if let Some(b) = &self.bootstrap {
            if b.resamples < 2 || b.resamples > MAX_RESAMPLES {
                return bad(format!(
                    "--bootstrap takes 2 to {MAX_RESAMPLES} resamples per window, got {}",
                    b.resamples
                ));
            }
            if b.resample == bootstrap::Resample::Season && self.window < 2 {
                return bad(
                    "--resample season draws whole seasons: it needs windows of at least 2 seasons"
                        .to_string(),
                );
            }
            if !(b.level > 0.0 && b.level < 1.0) {
                return bad(format!(
                    "--ci-level must lie between 0 and 1, got {}",
                    b.level
                ));
            }
        }
        Ok(())
    }
}

/// The whole history's calibration, against which windows are read.
#[derive(Debug, Clone, PartialEq)]
pub struct History {
    pub first: i32,
    pub last: i32,
    pub rows: usize,
    pub runs_per_game: f64,
    /// One Pythagorean exponent for every season.
    pub exponent: f64,
    pub exponent_se: f64,
    /// PythagenPat's z fitted on every season, with its quasi-binomial and binomial standard errors.
    pub z: f64,
    pub z_se: f64,
    pub z_se_binomial: f64,
}

/// A window's fit and how its run environment reads it.
#[derive(Debug, Clone, PartialEq)]
pub struct WindowFit {
    pub exponent: f64,
    /// Quasi-binomial (dispersion-corrected) standard error.
    pub std_error: f64,
    pub std_error_binomial: f64,
    pub dispersion: f64,
    pub converged: bool,
    /// RPG^z with the whole history's z, and with the published z.
    pub implied_history: f64,
    pub implied_published: f64,
    /// exponent − implied, with the delta-method standard error (see `gap_history_se`).
    pub gap_history: f64,
    pub gap_history_se: f64,
    pub gap_published: f64,
    pub gap_published_se: f64,
    /// exponent ± 1.96 standard errors (normal approximation, 95%).
    pub normal_interval: (f64, f64),
    /// Bootstrap percentile interval and the seed its resamples used.
    pub interval: Option<(f64, f64)>,
    pub bootstrap_seed: Option<u64>,
}

/// One window of seasons.
#[derive(Debug, Clone, PartialEq)]
pub struct Window {
    pub first: i32,
    pub last: i32,
    pub seasons: usize,
    pub rows: usize,
    /// Runs per game (both teams): Σ(RS+RA)/ΣG over the window.
    pub runs_per_game: f64,
    /// `None` when the window has fewer team-seasons than the minimum.
    pub fit: Option<WindowFit>,
}

/// Everything `runcal eras` reports.
#[derive(Debug, Clone)]
pub struct EraAnalysis {
    pub window: usize,
    pub kind: WindowKind,
    pub min_group: usize,
    pub target_se: f64,
    pub ci_level: Option<f64>,
    pub resamples: Option<usize>,
    pub history: History,
    pub windows: Vec<Window>,
    pub change: Option<ChangeTest>,
    /// Why there is no change test, when there is none.
    pub change_skipped: Option<String>,
    pub recommendation: Recommendation,
}

/// Row indices of each season, ascending by season.
pub fn seasons_of(rows: &[TeamSeason]) -> BTreeMap<i32, Vec<usize>> {
    let mut by: BTreeMap<i32, Vec<usize>> = BTreeMap::new();
    for (i, r) in rows.iter().enumerate() {
        by.entry(r.season).or_default().push(i);
    }
    by
}

/// The rows of seasons `seasons[a..b]`, in input order (so a window's table is the table
/// `--seasons A-B` loads).
pub fn rows_between(by_season: &BTreeMap<i32, Vec<usize>>, first: i32, last: i32) -> Vec<usize> {
    let mut idx: Vec<usize> = by_season
        .range(first..=last)
        .flat_map(|(_, v)| v.iter().copied())
        .collect();
    idx.sort_unstable();
    idx
}

/// Runs per game over some rows, summed as `Table::new` sums them.
pub fn runs_per_game(rows: &[TeamSeason], idx: &[usize]) -> f64 {
    let (runs, games) = idx.iter().fold((0.0, 0.0), |(r, g), &i| {
        (
            r + rows[i].runs_scored + rows[i].runs_allowed,
            g + rows[i].games as f64,
        )
    });
    runs / games
}

/// Each window's own bootstrap seed: a SplitMix64 mix of the base seed and the window's seasons, so a
/// window draws the same resamples whatever other seasons the file holds, and `runcal fit --seasons
/// A-B --bootstrap N --seed S` with this seed reproduces its interval.
pub fn window_seed(seed: u64, first: i32, last: i32) -> u64 {
    let span = (u64::from(first as u32) << 32) | u64::from(last as u32);
    splitmix64(seed ^ splitmix64(span))
}

fn splitmix64(mut x: u64) -> u64 {
    x = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
    x = (x ^ (x >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    x = (x ^ (x >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    x ^ (x >> 31)
}

/// The windows' season spans over the distinct seasons present, in order.
pub fn spans(seasons: &[i32], window: usize, kind: WindowKind) -> Vec<(i32, i32, usize)> {
    if window == 0 || window > seasons.len() {
        return Vec::new();
    }
    (window..=seasons.len())
        .map(|end| {
            let start = match kind {
                WindowKind::Rolling => end - window,
                WindowKind::Expanding => 0,
            };
            (seasons[start], seasons[end - 1], end - start)
        })
        .collect()
}

/// The Pythagorean log-loss fit of some rows, or `None` when they cannot be fitted.
pub(crate) fn exponent_fit(t: &Table, idx: &[usize]) -> Option<(fit::ModelFit, Table)> {
    let sub = t.subset(idx);
    let f = fit::fit_model(&sub, ModelKind::Pythagorean, Loss::Logloss).ok()?;
    Some((f, sub))
}

/// The whole history: one exponent and PythagenPat's z.
fn history(t: &Table, rows: &[TeamSeason], first: i32, last: i32) -> Result<History, FitError> {
    let x = fit::fit_model(t, ModelKind::Pythagorean, Loss::Logloss)?;
    let z = fit::fit_model(t, ModelKind::Pythagenpat, Loss::Logloss)?;
    let missing = |what: &str| {
        FitError::Invalid(format!(
            "the {what} of the whole history has no standard error (too few informative rows)"
        ))
    };
    let xse = x.std_errors.ok_or_else(|| missing("exponent"))?;
    let zse = z.std_errors.ok_or_else(|| missing("PythagenPat z"))?;
    let all: Vec<usize> = (0..rows.len()).collect();
    Ok(History {
        first,
        last,
        rows: rows.len(),
        runs_per_game: runs_per_game(rows, &all),
        exponent: x.model.params[0],
        exponent_se: xse.corrected[0],
        z: z.model.params[0],
        z_se: zse.corrected[0],
        z_se_binomial: zse.binomial[0],
    })
}

/// The gap's variance needs Cov(x̂_window, ẑ_history): both solve score equations over shared rows, so
/// (delta method) Cov = φ_w · Σ_{i∈w} n·q(1−q)·l²·RPG_i^z·ln RPG_i / (I_w · I_h), with I the binomial
/// informations (1/SE²) and q the history's PythagenPat prediction.
fn score_covariance(sub: &Table, h: &History, se_binomial: f64, dispersion: f64) -> f64 {
    let s: f64 = (0..sub.len())
        .filter(|&i| sub.ln_ratio[i].is_finite())
        .map(|i| {
            let l = sub.ln_ratio[i];
            let x = (h.z * sub.ln_rpg[i]).exp();
            let q = crate::model::pythagorean_pct(x, l);
            let d = x * sub.ln_rpg[i];
            sub.decisions[i] * q * (1.0 - q) * l * l * d
        })
        .sum();
    dispersion * s * se_binomial.powi(2) * h.z_se_binomial.powi(2)
}

fn window_fit(
    t: &Table,
    rows: &[TeamSeason],
    idx: &[usize],
    span: (i32, i32),
    h: &History,
    boot: Option<&bootstrap::Options<'static>>,
) -> Result<Option<WindowFit>, FitError> {
    let Some((f, sub)) = exponent_fit(t, idx) else {
        return Ok(None);
    };
    let Some(se) = f.std_errors.clone() else {
        return Ok(None);
    };
    let rpg = runs_per_game(rows, idx);
    let x = f.model.params[0];
    let implied_history = rpg.powf(h.z);
    let implied_published = rpg.powf(PUBLISHED_Z);
    let g = implied_history * rpg.ln();
    let cov = score_covariance(&sub, h, se.binomial[0], se.dispersion);
    let var_gap = se.corrected[0].powi(2) + (g * h.z_se).powi(2) - 2.0 * g * cov;
    let (interval, bootstrap_seed) = match boot {
        Some(b) => {
            let seed = window_seed(b.seed, span.0, span.1);
            let window_rows: Vec<TeamSeason> = idx.iter().map(|&i| rows[i].clone()).collect();
            let opts = bootstrap::Options {
                seed,
                progress: None,
                ..*b
            };
            let iv = bootstrap::run(&sub, &window_rows, &f, &opts)?;
            (Some(iv.params[0]), Some(seed))
        }
        None => (None, None),
    };
    Ok(Some(WindowFit {
        exponent: x,
        std_error: se.corrected[0],
        std_error_binomial: se.binomial[0],
        dispersion: se.dispersion,
        converged: f.converged,
        implied_history,
        implied_published,
        gap_history: x - implied_history,
        gap_history_se: var_gap.max(0.0).sqrt(),
        gap_published: x - implied_published,
        gap_published_se: se.corrected[0],
        normal_interval: (x - Z95 * se.corrected[0], x + Z95 * se.corrected[0]),
        interval,
        bootstrap_seed,
    }))
}

/// Fit every window, test for change and pick a calibration span.
pub fn analyse(t: &Table, rows: &[TeamSeason], opts: &Options) -> Result<EraAnalysis, FitError> {
    let by_season = seasons_of(rows);
    let seasons: Vec<i32> = by_season.keys().copied().collect();
    opts.validate(seasons.len())?;
    let (first, last) = match (seasons.first(), seasons.last()) {
        (Some(&a), Some(&b)) => (a, b),
        _ => return Err(FitError::Invalid("no seasons to analyse".to_string())),
    };
    let h = history(t, rows, first, last)?;
    let windows = spans(&seasons, opts.window, opts.kind)
        .into_par_iter()
        .map(|(a, b, n)| {
            let idx = rows_between(&by_season, a, b);
            let fit = if idx.len() < opts.min_group {
                None
            } else {
                window_fit(t, rows, &idx, (a, b), &h, opts.bootstrap.as_ref())?
            };
            Ok(Window {
                first: a,
                last: b,
                seasons: n,
                rows: idx.len(),
                runs_per_game: runs_per_game(rows, &idx),
                fit,
            })
        })
        .collect::<Result<Vec<Window>, FitError>>()?;
    let (change, change_skipped) = match change::test(t, &by_season, opts) {
        Ok(c) => (Some(c), None),
        Err(reason) => (None, Some(reason)),
    };
    let recommendation = span::recommend(t, &by_season, opts);
    Ok(EraAnalysis {
        window: opts.window,
        kind: opts.kind,
        min_group: opts.min_group,
        target_se: opts.target_se,
        ci_level: opts.bootstrap.map(|b| b.level),
        resamples: opts.bootstrap.map(|b| b.resamples),
        history: h,
        windows,
        change,
        change_skipped,
        recommendation,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rolling_and_expanding_spans_cover_the_seasons_present() {
        let seasons = [2001, 2002, 2004, 2005];
        assert_eq!(
            spans(&seasons, 2, WindowKind::Rolling),
            vec![(2001, 2002, 2), (2002, 2004, 2), (2004, 2005, 2)]
        );
        assert_eq!(
            spans(&seasons, 3, WindowKind::Expanding),
            vec![(2001, 2004, 3), (2001, 2005, 4)]
        );
        assert!(spans(&seasons, 5, WindowKind::Rolling).is_empty());
        assert!(spans(&seasons, 0, WindowKind::Rolling).is_empty());
    }

    #[test]
    fn window_seeds_depend_on_the_window_only() {
        assert_eq!(window_seed(1, 1990, 1999), window_seed(1, 1990, 1999));
        assert_ne!(window_seed(1, 1990, 1999), window_seed(1, 1991, 2000));
        assert_ne!(window_seed(1, 1990, 1999), window_seed(2, 1990, 1999));
        // SplitMix64's first output from state 0 (Vigna's reference implementation; value from memory).
        assert_eq!(splitmix64(0), 0xE220_A839_7B1D_CDAF);
    }

    #[test]
    fn options_refuse_what_no_analysis_can_honour() {
        let ok = Options {
            window: 10,
            kind: WindowKind::Rolling,
            min_group: 8,
            target_se: 0.05,
            change_by: ChangeBy::Season,
            bootstrap: None,
        };
        assert!(ok.validate(150).is_ok());
        assert!(Options { window: 0, ..ok }.validate(150).is_err());
        assert!(ok.validate(9).is_err());
        assert!(
            Options {
                target_se: -1.0,
                ..ok
            }
            .validate(150)
            .is_err()
        );
        let huge = bootstrap::Options {
            resamples: MAX_RESAMPLES + 1,
            seed: 1,
            resample: bootstrap::Resample::Team,
            level: 0.95,
            progress: None,
        };
        assert!(
            Options {
                bootstrap: Some(huge),
                ..ok
            }
            .validate(150)
            .is_err()
        );
    }
}
