//! Bootstrap percentile intervals. Each resample is a vector of multinomial row weights over the same
//! arrays (no copies of the table); resample `b` draws from its own ChaCha stream, so results are
//! identical for a seed whatever the number of threads.

mod columns;
pub mod exact;
pub mod pythagenport;
pub mod refit;
pub mod series;
pub mod stretches;
pub mod window;

use std::collections::BTreeMap;

use rand::{Rng, RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use super::loss::{self, Counted, Loss, Metrics};
use super::solve::{self, Problem};
use super::{Intervals, ModelFit};
use crate::data::{Table, TeamSeason};
use crate::error::FitError;
use crate::model::ModelKind;
use pythagenport::PortSeries;
use refit::Prepared;
use series::PythagoreanSeries;

/// What is drawn with replacement.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Resample {
    /// Team-seasons, independently.
    Team,
    /// Whole seasons, keeping every team of a drawn season together.
    Season,
}

impl Resample {
    pub const ALL: [Resample; 2] = [Resample::Team, Resample::Season];

    pub fn name(self) -> &'static str {
        match self {
            Resample::Team => "team",
            Resample::Season => "season",
        }
    }

    /// One line on what is drawn (for help texts).
    pub fn help(self) -> &'static str {
        match self {
            Resample::Team => "team-seasons, independently",
            Resample::Season => "whole seasons, keeping every team of a drawn season together",
        }
    }
}

impl std::fmt::Display for Resample {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

impl std::str::FromStr for Resample {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Resample::ALL
            .into_iter()
            .find(|r| r.name() == s.trim())
            .ok_or_else(|| format!("unknown resampling '{s}' (team or season)"))
    }
}

/// Called with the number of resamples finished since the last call (from any thread).
pub type Progress<'a> = &'a (dyn Fn(u64) + Sync);

#[derive(Clone, Copy)]
pub struct Options<'a> {
    pub resamples: usize,
    pub seed: u64,
    pub resample: Resample,
    pub level: f64,
    /// Told of every finished resample; the caller decides whether and how to show it.
    pub progress: Option<Progress<'a>>,
}

impl std::fmt::Debug for Options<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Options")
            .field("resamples", &self.resamples)
            .field("seed", &self.seed)
            .field("resample", &self.resample)
            .field("level", &self.level)
            .field("progress", &self.progress.is_some())
            .finish()
    }
}

/// A metric's name and how to read it.
type MetricPick = (&'static str, fn(&Metrics) -> f64);

/// The random stream of one resample.
fn stream(seed: u64, b: usize) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(b as u64);
    rng
}

/// A uniform index below `n`: exactly the draws of rand's `random_range(0..n)` for `n` up to
/// u32::MAX (Canon's method: the high half of one u32 times n, and a second u32 only in the rare
/// case where the first could be biased; a test pins the equivalence), written out so that the
/// bootstrap's inner loop does not call a sampler per draw.
#[inline]
fn below(rng: &mut ChaCha8Rng, n: u32) -> usize {
    let m = u64::from(rng.next_u32()) * u64::from(n);
    let (mut hi, lo) = ((m >> 32) as u32, m as u32);
    if lo > n.wrapping_neg() {
        let hi2 = ((u64::from(rng.next_u32()) * u64::from(n)) >> 32) as u32;
        hi += u32::from(lo.checked_add(hi2).is_none());
    }
    hi as usize
}

/// `n` team draws from `rng` tallied into `hits` (length `n`): whole-number increments, converted
/// to counts once (an increment of an f64 in memory waits on the add before its store).
fn tally(rng: &mut ChaCha8Rng, n: u32, hits: &mut Vec<u32>) {
    hits.clear();
    hits.resize(n as usize, 0);
    for _ in 0..n {
        hits[below(rng, n)] += 1;
    }
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
        Resample::Team => match u32::try_from(n) {
            Ok(n32) => {
                let mut hits = Vec::new();
                tally(&mut rng, n32, &mut hits);
                for (c, &h) in counts.iter_mut().zip(&hits) {
                    *c = f64::from(h);
                }
            }
            Err(_) => {
                for _ in 0..n {
                    counts[rng.random_range(0..n)] += 1.0;
                }
            }
        },
        Resample::Season => {
            for _ in 0..seasons.len() {
                for &i in &seasons[rng.random_range(0..seasons.len())] {
                    counts[i] += 1.0;
                }
            }
        }
    }
}

/// One resample as a fast path's pass reads it: the row counts, the rows drawn (count not zero,
/// ascending) and the count-only sums.
#[derive(Clone, Copy)]
pub(crate) struct Resampled<'a> {
    pub counts: &'a [f64],
    pub drawn: &'a [u32],
    pub counted: &'a Counted,
}

/// Per-thread buffers of one resample.
#[derive(Default)]
struct Scratch {
    counts: Vec<f64>,
    /// Indices of the rows drawn at least once, ascending.
    drawn: Vec<u32>,
    /// p̂ of each drawn row.
    predictions: Vec<f64>,
    /// The metrics' count-only sums.
    counted: Counted,
    /// The team draws' tallies (see [`tally`]).
    hits: Vec<u32>,
}

impl Scratch {
    /// Any model and loss: refit with the general solver, then score.
    fn general(
        &self,
        t: &Table,
        kind: ModelKind,
        loss: Loss,
        start: &[f64],
    ) -> Option<(Vec<f64>, Metrics)> {
        let p = Problem {
            table: t,
            kind,
            loss,
            counts: Some(&self.counts),
        };
        let out = solve::fit(p, Some(start)).ok()?;
        if !out.params.iter().all(|v| v.is_finite()) {
            return None;
        }
        let m = loss::metrics(t, kind, &out.params, Some(&self.counts));
        Some((out.params, m))
    }

    /// Resample `b`'s counts, its drawn rows and its count-only sums, once for every model. Team
    /// draws are tallied (see [`tally`]) and then turned into the counts, the drawn rows and
    /// the sums in one sweep of the rows; season draws go through [`weights`] and [`Self::prepare`].
    fn draw(&mut self, t: &Table, seasons: &[Vec<usize>], opts: &Options<'_>, b: usize) {
        let n = t.len();
        let Ok(n32) = u32::try_from(n) else {
            weights(n, seasons, opts.resample, opts.seed, b, &mut self.counts);
            return self.prepare(t);
        };
        if opts.resample == Resample::Season {
            weights(n, seasons, opts.resample, opts.seed, b, &mut self.counts);
            return self.prepare(t);
        }
        tally(&mut stream(opts.seed, b), n32, &mut self.hits);
        const L: usize = 4;
        let mut acc = [[0.0; L]; 4];
        self.counts.clear();
        self.counts.resize(n, 0.0);
        self.drawn.clear();
        self.drawn.resize(n, 0);
        let (w, d, g) = (&t.weight[..n], &t.decisions[..n], &t.games[..n]);
        let (hits, counts) = (&self.hits[..n], &mut self.counts[..n]);
        let mut k = 0;
        for i in 0..n {
            let c = f64::from(hits[i]);
            counts[i] = c;
            self.drawn[k] = i as u32;
            k += usize::from(hits[i] != 0);
            // The lanes of `Counted::of`, so the same sums bit for bit.
            let lane = i % L;
            acc[0][lane] += c * w[i];
            acc[1][lane] += c * d[i];
            acc[2][lane] += c;
            acc[3][lane] += c * g[i];
        }
        self.drawn.truncate(k);
        self.counted = Counted::from_lanes(&acc);
    }

    /// After the counts of a new resample are drawn, and before any model's refit: the drawn rows
    /// and the count-only sums, once for every model.
    fn prepare(&mut self, t: &Table) {
        self.compact();
        self.counted = Counted::of(t, &self.counts);
    }

    /// Indices of the rows drawn at least once into `drawn`, ascending. About a third of the rows
    /// are not drawn; branch-free compaction (always write the index, advance only past drawn rows)
    /// keeps that unpredictable branch out of the passes that follow.
    fn compact(&mut self) {
        let n = self.counts.len();
        self.drawn.clear();
        self.drawn.resize(n, 0);
        let mut k = 0;
        for i in 0..n {
            self.drawn[k] = i as u32;
            k += usize::from(self.counts[i] != 0.0);
        }
        self.drawn.truncate(k);
    }

    /// The resample as the passes read it.
    fn resampled(&self) -> Resampled<'_> {
        Resampled {
            counts: &self.counts,
            drawn: &self.drawn,
            counted: &self.counted,
        }
    }

    /// PythagenPat and linear log-loss: see [`refit`].
    fn refit(&mut self, t: &Table, prepared: &Prepared) -> Option<(Vec<f64>, Metrics)> {
        prepared.refit(t, self.resampled())
    }

    /// Pythagenport log-loss: see [`pythagenport`].
    fn pythagenport(&mut self, t: &Table, series: &PortSeries) -> Option<(Vec<f64>, Metrics)> {
        let r = Resampled {
            counts: &self.counts,
            drawn: &self.drawn,
            counted: &self.counted,
        };
        series.refit(t, r, &mut self.predictions)
    }

    /// The Pythagorean log-loss: the general path's numbers from one pass of exp over the rows
    /// instead of six (and no ln). The optimum is predicted from the log-loss's Taylor series at the
    /// full-data exponent (dot products, no exp), then checked by an exact Newton step computed in
    /// the same pass as the metrics: when that step is within Newton's own tolerance (1e-12·x) the
    /// prediction stands, corrected by the step; otherwise the general path runs.
    fn pythagorean(
        &mut self,
        t: &Table,
        series: &PythagoreanSeries,
    ) -> Option<(Vec<f64>, Metrics)> {
        let sums = series.sums(&self.counts, &self.drawn);
        let x = sums.optimum()?;
        let (m, step) = series::series_metrics(
            t,
            x,
            Resampled {
                counts: &self.counts,
                drawn: &self.drawn,
                counted: &self.counted,
            },
            &sums,
            series,
            &mut self.predictions,
        );
        (step.abs() <= 1e-12 * x.max(1.0)).then(|| (vec![x + step], m))
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
    opts: &Options<'_>,
) -> Result<Intervals, FitError> {
    run_all(t, rows, std::slice::from_ref(fit), opts)?.remove(0)
}

/// One resample's refit: its parameters and metrics, `None` where it could not be fitted.
type Draw = Option<(Vec<f64>, Metrics)>;

/// One model's resample fitter: its fast path where it has one, and what the general solver needs.
struct Refitter<'f> {
    fit: &'f ModelFit,
    /// The Pythagorean log-loss (the default fit) has a specialised resample; see `Scratch`.
    taylor_series: Option<PythagoreanSeries>,
    /// Pythagenport's log-loss: a two-variable series; see `pythagenport`.
    port_series: Option<PortSeries>,
    /// PythagenPat's and the linear model's: per-row series and exact Newton passes; see `refit`.
    prepared: Option<Prepared>,
}

impl<'f> Refitter<'f> {
    /// `seasons`: each season's rows, under season resampling (the predictions' sums are then
    /// taken by season).
    fn new(t: &Table, fit: &'f ModelFit, seasons: Option<&[Vec<usize>]>) -> Refitter<'f> {
        let (kind, start) = (fit.model.kind, &fit.model.params);
        let logloss = fit.loss == Loss::Logloss;
        let mut out = Refitter {
            fit,
            taylor_series: (kind == ModelKind::Pythagorean && logloss)
                .then(|| PythagoreanSeries::new(t, start[0]))
                .flatten(),
            port_series: (kind == ModelKind::Pythagenport && logloss)
                .then(|| PortSeries::new(t, start))
                .flatten(),
            prepared: logloss.then(|| Prepared::new(t, kind, start)).flatten(),
        };
        if let Some(seasons) = seasons {
            if let Some(s) = out.taylor_series.as_mut() {
                s.by_season(seasons);
            }
            if let Some(s) = out.port_series.as_mut() {
                s.by_season(seasons);
            }
            if let Some(p) = out.prepared.as_mut() {
                p.by_season(seasons);
            }
        }
        out
    }

    /// The resample in `s.counts`, refitted.
    fn refit(&self, t: &Table, s: &mut Scratch) -> Option<(Vec<f64>, Metrics)> {
        let fit = self.fit;
        if let Some(series) = &self.taylor_series {
            s.pythagorean(t, series)
        } else if let Some(series) = &self.port_series {
            s.pythagenport(t, series)
        } else {
            self.prepared.as_ref().and_then(|p| s.refit(t, p))
        }
        .or_else(|| s.general(t, fit.model.kind, fit.loss, &fit.model.params))
    }
}

/// Resample once and refit every one of `fits` (on the same table) on each resample: resample `b`
/// has the same counts for every model, so each model's intervals are those [`run`] gives it
/// alone, and the draws are made once instead of once per model. One result per fit, in order.
pub fn run_all(
    t: &Table,
    rows: &[TeamSeason],
    fits: &[ModelFit],
    opts: &Options<'_>,
) -> Result<Vec<Result<Intervals, FitError>>, FitError> {
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
    let by_season = (opts.resample == Resample::Season).then_some(seasons.as_slice());
    let refitters: Vec<Refitter<'_>> = fits
        .iter()
        .map(|f| Refitter::new(t, f, by_season))
        .collect();
    let draws: Vec<Vec<Draw>> = (0..opts.resamples)
        .into_par_iter()
        .map_init(Scratch::default, |s, b| {
            s.draw(t, &seasons, opts, b);
            let out: Vec<_> = refitters.iter().map(|r| r.refit(t, s)).collect();
            if let Some(progress) = opts.progress {
                progress(refitters.len() as u64);
            }
            out
        })
        .collect();
    Ok((0..fits.len())
        .map(|j| {
            let column: Vec<Draw> = draws.iter().map(|d| d[j].clone()).collect();
            summarise(&column, fits[j].model.params.len(), opts)
        })
        .collect())
}

/// Percentile intervals and standard deviations of one model's resample fits.
fn summarise(draws: &[Draw], parameters: usize, opts: &Options<'_>) -> Result<Intervals, FitError> {
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
    for j in 0..parameters {
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

    /// The fused team draw (tally, counts, drawn rows and count-only sums in one sweep) gives what
    /// `weights` and `prepare` give, bit for bit; season draws go through them.
    #[test]
    fn one_sweep_draws_match_weights_then_prepare() {
        let (t, rows) = crate::fit::testdata::databank(None, crate::data::Weighting::Games);
        let seasons = season_index(&rows);
        for resample in Resample::ALL {
            let opts = Options {
                resamples: 2,
                seed: 9,
                resample,
                level: 0.95,
                progress: None,
            };
            let (mut a, mut b) = (Scratch::default(), Scratch::default());
            for draw in 0..5 {
                a.draw(&t, &seasons, &opts, draw);
                weights(t.len(), &seasons, resample, 9, draw, &mut b.counts);
                b.prepare(&t);
                assert_eq!(a.counts, b.counts);
                assert_eq!(a.drawn, b.drawn);
                let bits =
                    |c: &Counted| [c.wsum, c.games, c.csum, c.season_games].map(f64::to_bits);
                assert_eq!(bits(&a.counted), bits(&b.counted));
            }
        }
    }

    #[test]
    fn pythagorean_resamples_match_the_general_solver() {
        use crate::data::Weighting;
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * a.abs().max(b.abs());
        for (weighting, resample) in [
            (Weighting::None, Resample::Team),
            (Weighting::Games, Resample::Season),
        ] {
            let (t, rows) = crate::fit::testdata::databank(None, weighting);
            let seasons = season_index(&rows);
            let full = crate::fit::fit_model(&t, ModelKind::Pythagorean, Loss::Logloss).unwrap();
            let start = full.model.params;
            let mut series = PythagoreanSeries::new(&t, start[0]).unwrap();
            // As `run_all` does: season resamples sum the series by season.
            if resample == Resample::Season {
                series.by_season(&seasons);
            }
            let mut s = Scratch::default();
            let mut predicted = 0;
            for b in 0..200 {
                weights(t.len(), &seasons, resample, 11, b, &mut s.counts);
                s.prepare(&t);
                let (gp, gm) = s
                    .general(&t, ModelKind::Pythagorean, Loss::Logloss, &start)
                    .unwrap();
                if let Some((fp, fm)) = s.pythagorean(&t, &series) {
                    predicted += 1;
                    assert!(close(fp[0], gp[0]), "{b}: {fp:?} vs {gp:?}");
                    for (f, g) in [
                        (fm.mae, gm.mae),
                        (fm.rmse, gm.rmse),
                        (fm.logloss, gm.logloss),
                        (fm.bias, gm.bias),
                        (fm.max_abs, gm.max_abs),
                        (fm.rmse_wins, gm.rmse_wins),
                    ] {
                        assert!(close(f, g), "{b}: {fm:?} vs {gm:?}");
                    }
                }
            }
            // Only a prediction far from the full-data optimum takes the general path.
            assert!(predicted >= 190, "{predicted} of 200 predicted");
        }
    }

    #[test]
    fn fast_resamples_of_every_other_model_match_the_general_solver() {
        use crate::data::Weighting;
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1e-3);
        for (seasons, resample) in [
            (None, Resample::Team),
            (None, Resample::Season),
            (Some("1980-2006"), Resample::Team),
            (Some("1980-2006"), Resample::Season),
        ] {
            let (t, rows) = crate::fit::testdata::databank(seasons, Weighting::None);
            let season_rows = season_index(&rows);
            for kind in [
                ModelKind::Pythagenpat,
                ModelKind::Linear,
                ModelKind::Pythagenport,
            ] {
                let full = crate::fit::fit_model(&t, kind, Loss::Logloss).unwrap();
                let start = full.model.params;
                let mut prepared = Prepared::new(&t, kind, &start);
                let mut port = (kind == ModelKind::Pythagenport)
                    .then(|| PortSeries::new(&t, &start))
                    .flatten();
                // As `run_all` does: season resamples sum the predictions' series by season.
                if resample == Resample::Season {
                    prepared.iter_mut().for_each(|p| p.by_season(&season_rows));
                    port.iter_mut().for_each(|p| p.by_season(&season_rows));
                }
                assert!(
                    prepared.is_some() != port.is_some(),
                    "{kind}: one fast path"
                );
                let mut s = Scratch::default();
                let mut by_newton = 0; // resamples the fast path kept
                for b in 0..60 {
                    weights(t.len(), &season_rows, resample, 3, b, &mut s.counts);
                    s.prepare(&t);
                    let (gp, gm) = s.general(&t, kind, Loss::Logloss, &start).unwrap();
                    let fast = match (&prepared, &port) {
                        (Some(p), _) => s.refit(&t, p),
                        (_, Some(p)) => s.pythagenport(&t, p),
                        _ => unreachable!(),
                    };
                    if let Some((fp, fm)) = fast {
                        by_newton += 1;
                        // The same optimum within 1e-9 (the general path polishes its
                        // derivative-free optimum with Newton; Pythagenport's is Newton from the
                        // same start).
                        for (f, g) in fp.iter().zip(&gp) {
                            assert!(
                                close(*f, *g),
                                "{kind} {b}: {fp:?} vs {gp:?}: {} vs {}",
                                fm.logloss,
                                gm.logloss
                            );
                        }
                        for (f, g) in [
                            (fm.mae, gm.mae),
                            (fm.rmse, gm.rmse),
                            (fm.logloss, gm.logloss),
                            (fm.rmse_wins, gm.rmse_wins),
                        ] {
                            assert!(close(f, g), "{kind} {b}: {fm:?} vs {gm:?}");
                        }
                    }
                }
                // Every model, the linear one on the full history too: its 1870s rows put
                // several minima in its loss, and the fast path proves which is lowest.
                assert!(
                    by_newton >= 55,
                    "{kind}: {by_newton} of 60 by the fast path"
                );
            }
        }
    }

    /// `run_all` draws each resample once for every model; each model's intervals must be what
    /// `run` gives it alone (the same counts per resample), and a progress callback must hear of
    /// every refit.
    #[test]
    fn every_model_on_one_set_of_resamples_matches_each_alone() {
        use crate::data::Weighting;
        let (t, rows) = crate::fit::testdata::databank(Some("1990-2006"), Weighting::None);
        let fits: Vec<ModelFit> = ModelKind::ALL
            .into_iter()
            .map(|k| crate::fit::fit_model(&t, k, Loss::Logloss).unwrap())
            .collect();
        let told = std::sync::atomic::AtomicU64::new(0);
        let progress = |n: u64| {
            told.fetch_add(n, std::sync::atomic::Ordering::Relaxed);
        };
        for resample in [Resample::Team, Resample::Season] {
            let opts = Options {
                resamples: 40,
                seed: 11,
                resample,
                level: 0.9,
                progress: Some(&progress),
            };
            let together = run_all(&t, &rows, &fits, &opts).unwrap();
            assert_eq!(together.len(), fits.len());
            for (f, iv) in fits.iter().zip(together) {
                let alone = run(&t, &rows, f, &opts).unwrap();
                assert_eq!(iv.unwrap(), alone, "{}", f.model.kind);
            }
        }
        // Each resample once per model together, then once per model alone; two resamplings.
        let n = fits.len() as u64;
        assert_eq!(
            told.load(std::sync::atomic::Ordering::Relaxed),
            2 * (40 * n + 40 * n)
        );
    }

    #[test]
    fn below_draws_what_random_range_draws() {
        for n in [1u32, 2, 3, 7, 2955, 61_740, 1 << 31, u32::MAX] {
            let (mut a, mut b) = (stream(5, n as usize), stream(5, n as usize));
            for _ in 0..10_000 {
                assert_eq!(below(&mut a, n), b.random_range(0..n as usize));
            }
        }
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
