//! Losses and metrics, exactly as DESIGN defines them.

use crate::data::Table;
use crate::model::{ModelKind, Row, predict};

/// Log-loss clamps p̂ here so that a team that never scored (p̂ = 0) gives a large, finite loss.
pub const LOGLOSS_CLAMP: f64 = 1e-12;

/// What a fit minimises.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Loss {
    /// Mean absolute error in win%.
    Mae,
    /// Root mean squared error in win%.
    Rmse,
    /// Binomial log-likelihood per game.
    Logloss,
}

impl Loss {
    pub fn name(self) -> &'static str {
        match self {
            Loss::Mae => "mae",
            Loss::Rmse => "rmse",
            Loss::Logloss => "logloss",
        }
    }

    /// The loss's value in a set of metrics.
    pub fn of(self, m: &Metrics) -> f64 {
        match self {
            Loss::Mae => m.mae,
            Loss::Rmse => m.rmse,
            Loss::Logloss => m.logloss,
        }
    }
}

impl std::fmt::Display for Loss {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// Every metric of a model on a table.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Metrics {
    pub mae: f64,
    pub rmse: f64,
    pub logloss: f64,
    /// Mean of (win% − p̂): positive when teams beat their scoring on average.
    pub bias: f64,
    pub max_abs: f64,
    /// RMSE in wins over the data's mean season length.
    pub rmse_wins: f64,
}

#[inline]
fn clamp(p: f64) -> f64 {
    p.clamp(LOGLOSS_CLAMP, 1.0 - LOGLOSS_CLAMP)
}

/// The negative binomial log-likelihood of one row with expected win% `p` (not divided by games).
#[inline]
pub fn row_nll(wins: f64, losses: f64, p: f64) -> f64 {
    let p = clamp(p);
    -(wins * p.ln() + losses * (1.0 - p).ln())
}

/// The value of one loss. `counts` multiplies each row (bootstrap resamples); `None` means once each.
pub fn loss_value(
    t: &Table,
    kind: ModelKind,
    params: &[f64],
    loss: Loss,
    counts: Option<&[f64]>,
) -> f64 {
    let mut num = 0.0;
    let mut den = 0.0;
    for i in 0..t.len() {
        let c = counts.map_or(1.0, |c| c[i]);
        if c == 0.0 {
            continue;
        }
        let p = predict(kind, params, &Row::of(t, i));
        match loss {
            Loss::Mae => {
                num += c * t.weight[i] * (t.win_pct[i] - p).abs();
                den += c * t.weight[i];
            }
            Loss::Rmse => {
                let e = t.win_pct[i] - p;
                num += c * t.weight[i] * e * e;
                den += c * t.weight[i];
            }
            Loss::Logloss => {
                num += c * row_nll(t.wins[i], t.losses[i], p);
                den += c * t.decisions[i];
            }
        }
    }
    match loss {
        Loss::Rmse => (num / den).sqrt(),
        _ => num / den,
    }
}

/// Every metric at once (one pass over the rows).
pub fn metrics(t: &Table, kind: ModelKind, params: &[f64], counts: Option<&[f64]>) -> Metrics {
    metrics_with(t, counts, |i| predict(kind, params, &Row::of(t, i)))
}

/// Every metric of given predictions, one per row (pooled out-of-sample predictions).
pub fn metrics_of_predictions(t: &Table, predictions: &[f64]) -> Metrics {
    metrics_with(t, None, |i| predictions[i])
}

fn metrics_with(t: &Table, counts: Option<&[f64]>, prediction: impl Fn(usize) -> f64) -> Metrics {
    let mut sums = Sums::default();
    for i in 0..t.len() {
        let c = counts.map_or(1.0, |c| c[i]);
        if c == 0.0 {
            continue;
        }
        let p = prediction(i);
        sums.add(t, i, c, p, row_nll(t.wins[i], t.losses[i], p));
    }
    sums.metrics()
}

/// Running sums of every metric over rows with multiplicities.
#[derive(Default)]
pub(crate) struct Sums {
    pub(crate) abs: f64,
    pub(crate) sq: f64,
    pub(crate) wsum: f64,
    pub(crate) nll: f64,
    pub(crate) games: f64,
    pub(crate) bias: f64,
    pub(crate) csum: f64,
    pub(crate) max_abs: f64,
    pub(crate) season_games: f64,
}

/// The metrics' sums that depend on the row counts alone, not on the model: Σ c·weight,
/// Σ c·decisions, Σ c and Σ c·season games. A bootstrap resample takes them once for every pass of
/// every model.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Counted {
    pub(crate) wsum: f64,
    pub(crate) games: f64,
    pub(crate) csum: f64,
    pub(crate) season_games: f64,
}

impl Counted {
    /// Over every row of `t`, row i counted `counts[i]` times (four rows side by side, in
    /// separate lanes, added at the end).
    pub(crate) fn of(t: &Table, counts: &[f64]) -> Counted {
        const L: usize = 4;
        let mut acc = [[0.0; L]; 4];
        let n = counts.len().min(t.len());
        let (c, w, d, g) = (
            &counts[..n],
            &t.weight[..n],
            &t.decisions[..n],
            &t.games[..n],
        );
        let mut add = |k: usize, c: f64, w: f64, d: f64, g: f64| {
            acc[0][k] += c * w;
            acc[1][k] += c * d;
            acc[2][k] += c;
            acc[3][k] += c * g;
        };
        let blocks = c
            .chunks_exact(L)
            .zip(w.chunks_exact(L))
            .zip(d.chunks_exact(L).zip(g.chunks_exact(L)));
        for ((c, w), (d, g)) in blocks {
            for k in 0..L {
                add(k, c[k], w[k], d[k], g[k]);
            }
        }
        let tail = n / L * L;
        for (k, i) in (tail..n).enumerate() {
            add(k, c[i], w[i], d[i], g[i]);
        }
        Counted::from_lanes(&acc)
    }

    /// The sums from four lanes of running sums (Σ c·weight, Σ c·decisions, Σ c, Σ c·season games),
    /// row i in lane i mod 4, as [`Counted::of`] keeps them.
    pub(crate) fn from_lanes(acc: &[[f64; 4]; 4]) -> Counted {
        let total = |a: &[f64; 4]| a.iter().sum::<f64>();
        Counted {
            wsum: total(&acc[0]),
            games: total(&acc[1]),
            csum: total(&acc[2]),
            season_games: total(&acc[3]),
        }
    }
}

impl Sums {
    /// Sums whose count-only parts are `counted`'s (the rest added by [`Sums::add_scored`]).
    pub(crate) fn counted(counted: &Counted) -> Sums {
        Sums {
            wsum: counted.wsum,
            games: counted.games,
            csum: counted.csum,
            season_games: counted.season_games,
            ..Sums::default()
        }
    }

    /// The parts of [`Sums::add`] that depend on the prediction `p`: a row of win% `win_pct` and
    /// weight `weight`, counted `c` times (the count-only parts come from [`Counted`]).
    #[inline]
    pub(crate) fn add_scored(&mut self, win_pct: f64, weight: f64, c: f64, p: f64, nll: f64) {
        let e = win_pct - p;
        let w = c * weight;
        self.abs += w * e.abs();
        self.sq += w * e * e;
        self.nll += c * nll;
        self.bias += w * e;
        self.max_abs = self.max_abs.max(e.abs());
    }

    /// Add row `i`, counted `c` times, with prediction `p` and negative log-likelihood `nll`.
    #[inline]
    pub(crate) fn add(&mut self, t: &Table, i: usize, c: f64, p: f64, nll: f64) {
        let e = t.win_pct[i] - p;
        let w = c * t.weight[i];
        self.abs += w * e.abs();
        self.sq += w * e * e;
        self.wsum += w;
        self.nll += c * nll;
        self.games += c * t.decisions[i];
        self.bias += w * e;
        self.csum += c;
        self.season_games += c * t.games[i];
        self.max_abs = self.max_abs.max(e.abs());
    }

    pub(crate) fn metrics(&self) -> Metrics {
        let rmse = (self.sq / self.wsum).sqrt();
        Metrics {
            mae: self.abs / self.wsum,
            rmse,
            logloss: self.nll / self.games,
            bias: self.bias / self.wsum,
            max_abs: self.max_abs,
            rmse_wins: rmse * self.season_games / self.csum,
        }
    }
}

/// Expected win% of every row.
pub fn predictions(t: &Table, kind: ModelKind, params: &[f64]) -> Vec<f64> {
    (0..t.len())
        .map(|i| predict(kind, params, &Row::of(t, i)))
        .collect()
}
