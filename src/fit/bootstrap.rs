//! Bootstrap percentile intervals. Each resample is a vector of multinomial row weights over the same
//! arrays (no copies of the table); resample `b` draws from its own ChaCha stream, so results are
//! identical for a seed whatever the number of threads.

use std::collections::BTreeMap;
use std::io::IsTerminal;

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use super::loss::{self, Metrics};
use super::solve::{self, Problem};
use super::{Intervals, ModelFit};
use crate::data::{Table, TeamSeason};
use crate::error::FitError;

/// What is drawn with replacement.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum, serde::Serialize, serde::Deserialize,
)]
#[serde(rename_all = "lowercase")]
pub enum Resample {
    /// Team-seasons, independently.
    Team,
    /// Whole seasons, keeping every team of a drawn season together.
    Season,
}

#[derive(Debug, Clone, Copy)]
pub struct Options {
    pub resamples: usize,
    pub seed: u64,
    pub resample: Resample,
    pub level: f64,
    /// Show a progress bar (only ever on a terminal's stderr).
    pub progress: bool,
}

/// A metric's name and how to read it.
type MetricPick = (&'static str, fn(&Metrics) -> f64);

/// The random stream of one resample.
fn stream(seed: u64, b: usize) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(b as u64);
    rng
}

/// Row multiplicities of resample `b`.
pub fn weights(
    n: usize,
    seasons: &[Vec<usize>],
    resample: Resample,
    seed: u64,
    b: usize,
    counts: &mut Vec<f64>,
) {
    counts.clear();
    counts.resize(n, 0.0);
    let mut rng = stream(seed, b);
    match resample {
        Resample::Team => {
            for _ in 0..n {
                counts[rng.random_range(0..n)] += 1.0;
            }
        }
        Resample::Season => {
            for _ in 0..seasons.len() {
                for &i in &seasons[rng.random_range(0..seasons.len())] {
                    counts[i] += 1.0;
                }
            }
        }
    }
}

/// Row indices of each season, in ascending season order.
pub fn season_index(rows: &[TeamSeason]) -> Vec<Vec<usize>> {
    let mut by: BTreeMap<i32, Vec<usize>> = BTreeMap::new();
    for (i, r) in rows.iter().enumerate() {
        by.entry(r.season).or_default().push(i);
    }
    by.into_values().collect()
}

/// Percentile of sorted values with linear interpolation between order statistics.
pub fn percentile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let pos = q * (sorted.len() - 1) as f64;
    let lo = pos.floor() as usize;
    let hi = pos.ceil() as usize;
    sorted[lo] + (sorted[hi] - sorted[lo]) * (pos - lo as f64)
}

fn sd(v: &[f64]) -> f64 {
    let n = v.len() as f64;
    let mean = v.iter().sum::<f64>() / n;
    (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt()
}

/// Resample and refit `fit`'s model `opts.resamples` times.
pub fn run(
    t: &Table,
    rows: &[TeamSeason],
    fit: &ModelFit,
    opts: &Options,
) -> Result<Intervals, FitError> {
    if opts.resamples < 2 {
        return Err(FitError::Invalid(
            "--bootstrap needs at least 2 resamples".to_string(),
        ));
    }
    let seasons = season_index(rows);
    if opts.resample == Resample::Season && seasons.len() < 2 {
        return Err(FitError::Invalid(
            "--resample season needs at least 2 seasons".to_string(),
        ));
    }
    let bar = if opts.progress && std::io::stderr().is_terminal() {
        let pb = indicatif::ProgressBar::new(opts.resamples as u64);
        pb.set_style(
            indicatif::ProgressStyle::with_template(
                "bootstrap {bar:40} {pos}/{len} resamples, {eta} left",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        pb
    } else {
        indicatif::ProgressBar::hidden()
    };
    let kind = fit.model.kind;
    let start = fit.model.params.clone();
    let draws: Vec<Option<(Vec<f64>, Metrics)>> = (0..opts.resamples)
        .into_par_iter()
        .map_init(Vec::new, |counts, b| {
            weights(t.len(), &seasons, opts.resample, opts.seed, b, counts);
            let p = Problem {
                table: t,
                kind,
                loss: fit.loss,
                counts: Some(counts),
            };
            let out = solve::fit(p, Some(&start)).ok();
            bar.inc(1);
            out.filter(|o| o.params.iter().all(|v| v.is_finite()))
                .map(|o| {
                    let m = loss::metrics(t, kind, &o.params, Some(counts));
                    (o.params, m)
                })
        })
        .collect();
    bar.finish_and_clear();
    let ok: Vec<&(Vec<f64>, Metrics)> = draws.iter().flatten().collect();
    let failed = draws.len() - ok.len();
    if ok.len() < 2 {
        return Err(FitError::Invalid(format!(
            "only {} of {} bootstrap resamples could be fitted",
            ok.len(),
            draws.len()
        )));
    }
    let alpha = (1.0 - opts.level) / 2.0;
    let interval = |mut v: Vec<f64>| {
        v.sort_by(f64::total_cmp);
        (percentile(&v, alpha), percentile(&v, 1.0 - alpha))
    };
    let mut params = Vec::new();
    let mut params_sd = Vec::new();
    for j in 0..start.len() {
        let v: Vec<f64> = ok.iter().map(|(p, _)| p[j]).collect();
        params_sd.push(sd(&v));
        params.push(interval(v));
    }
    let mut metrics = BTreeMap::new();
    let pick: [MetricPick; 4] = [
        ("mae", |m| m.mae),
        ("rmse", |m| m.rmse),
        ("logloss", |m| m.logloss),
        ("rmse_wins", |m| m.rmse_wins),
    ];
    for (name, f) in pick {
        metrics.insert(name, interval(ok.iter().map(|(_, m)| f(m)).collect()));
    }
    Ok(Intervals {
        level: opts.level,
        params,
        params_sd,
        metrics,
        resamples: ok.len(),
        failed,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percentiles_interpolate_like_numpy() {
        // numpy.percentile([1, 2, 3, 4], 25) = 1.75 (linear interpolation, numpy's default).
        assert!((percentile(&[1.0, 2.0, 3.0, 4.0], 0.25) - 1.75).abs() < 1e-12);
        assert_eq!(percentile(&[5.0], 0.9), 5.0);
    }

    #[test]
    fn team_weights_sum_to_rows_and_repeat_per_seed() {
        let mut a = Vec::new();
        let mut b = Vec::new();
        weights(100, &[], Resample::Team, 7, 3, &mut a);
        weights(100, &[], Resample::Team, 7, 3, &mut b);
        assert_eq!(a, b);
        assert_eq!(a.iter().sum::<f64>(), 100.0);
        weights(100, &[], Resample::Team, 7, 4, &mut b);
        assert_ne!(a, b);
    }
}
