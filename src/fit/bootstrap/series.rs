//! The fixed exponent's bootstrap fast path: a Taylor series of the log-loss around the full-data
//! exponent, from which a resample's optimum and log-loss follow by dot products, and the exact
//! Newton check that decides whether the prediction stands.

use super::Resampled;
use super::columns::{self, BySeason};
use super::exact::exp_squared;
use crate::data::Table;
use crate::fit::loss::{Metrics, Sums, row_nll};
use crate::model::pythagorean_pct;

/// Order of [`PythagoreanSeries`]: terms up to dᴼᴿᴰᴱᴿ of the score's Taylor series.
const ORDER: usize = 6;
/// Columns of a series row: w·l, ORDER + 1 score coefficients and the log-likelihood at x0, padded
/// to an even width for two-lane arithmetic.
const WIDTH: usize = ORDER + 4;
const NLL: usize = ORDER + 2;

/// The Pythagorean log-loss of a weighted table as a Taylor series in d = x − x0 around a fixed
/// exponent x0, so that a bootstrap resample's optimum and log-loss follow from dot products of the
/// row counts with per-row coefficients, with no exp or ln at all.
///
/// With q = σ(x0·l), σ⁽ᵏ⁾(x0·l) = Pₖ(q) for polynomials with P₀ = q and Pₖ₊₁ = Pₖ'·q(1−q), so a row's
/// score c·(w − n·σ(x·l))·l is c·(w·l − Σₖ aₖ·dᵏ) with aₖ = n·Pₖ(q)·l^(k+1)/k!, and its negative
/// log-likelihood, whose derivative is minus the score, is c·(nll(x0) − w·l·d + Σₖ aₖ·d^(k+1)/(k+1)).
/// Rows with an infinite ratio have no slope and keep zero coefficients.
#[derive(Debug, Clone)]
pub struct PythagoreanSeries {
    pub x0: f64,
    /// max |l| over rows with a finite ratio: bounds how far the series can be trusted.
    ln_ratio_max: f64,
    rows: Vec<[f64; WIDTH]>,
    /// Per row: l where finite, else 0 (the row's p̂ does not move with x)…
    slopes: Vec<f64>,
    /// …and exp(−x0·l): 0 for l = +∞ (p̂ = 1), +∞ for l = −∞ (p̂ = 0).
    e_start: Vec<f64>,
    /// `rows` summed by season, under season resampling.
    by_season: Option<BySeason<WIDTH>>,
}

/// Rows per step of [`PythagoreanSeries::predictions`].
const LANES: usize = 8;

/// Sums over a resample's rows of every series column, counted with their multiplicities.
#[derive(Debug, Clone, Copy)]
pub struct SeriesSums {
    x0: f64,
    ln_ratio_max: f64,
    sums: [f64; WIDTH],
}

impl PythagoreanSeries {
    /// `None` when a row's p̂ lies within 1e-9 of 0 or 1 at x0: the log-loss clamps such rows, so
    /// their loss is not the smooth function the series expands.
    pub fn new(t: &Table, x0: f64) -> Option<PythagoreanSeries> {
        let polys = logistic_derivative_polys(ORDER);
        let mut ln_ratio_max = 0.0f64;
        let mut rows = Vec::with_capacity(t.len());
        let slopes: Vec<f64> = t
            .ln_ratio
            .iter()
            .map(|&l| if l.is_finite() { l } else { 0.0 })
            .collect();
        let e_start: Vec<f64> = t.ln_ratio.iter().map(|&l| (-x0 * l).exp()).collect();
        for i in 0..t.len() {
            let l = t.ln_ratio[i];
            let mut row = [0.0; WIDTH];
            let p = pythagorean_pct(x0, l);
            if l.is_finite() {
                if !(p > 1e-9 && p < 1.0 - 1e-9) {
                    return None;
                }
                ln_ratio_max = ln_ratio_max.max(l.abs());
                row[0] = t.wins[i] * l;
                let (mut lk, mut factorial) = (l, 1.0);
                for (k, poly) in polys.iter().enumerate() {
                    if k > 0 {
                        factorial *= k as f64;
                    }
                    let pk = poly.iter().rev().fold(0.0, |acc, &c| acc * p + c);
                    row[k + 1] = t.decisions[i] * pk * lk / factorial;
                    lk *= l;
                }
            }
            row[NLL] = row_nll(t.wins[i], t.losses[i], p);
            rows.push(row);
        }
        Some(PythagoreanSeries {
            x0,
            ln_ratio_max,
            rows,
            slopes,
            e_start,
            by_season: None,
        })
    }

    /// For season resampling: the column sums by season (`seasons`: each season's rows).
    pub fn by_season(&mut self, seasons: &[Vec<usize>]) {
        self.by_season = Some(BySeason::new(seasons, |i| self.rows[i]));
    }

    /// p̂ at exponent x of each row in `drawn`, into `out`, without calling exp:
    /// exp(−x·l) = exp(−x0·l)·exp(−(x − x0)·l), the second factor a degree-11 Taylor polynomial,
    /// which is exact to rounding while |(x − x0)·l| ≤ 1/8 (the remainder is below 3e-19), and
    /// which vectorises where exp, a call, does not. `false` (and nothing written) beyond that.
    pub fn predictions(&self, x: f64, drawn: &[u32], out: &mut Vec<f64>) -> bool {
        let d = x - self.x0;
        let reach = d.abs() * self.ln_ratio_max;
        if reach.is_nan() || reach > 0.125 {
            return false;
        }
        shifted_logistic(&self.e_start, drawn, |i| -d * self.slopes[i], out);
        true
    }

    /// Column sums over `drawn` (the rows whose count is not zero), each row `counts[i]` times.
    pub fn sums(&self, counts: &[f64], drawn: &[u32]) -> SeriesSums {
        SeriesSums {
            x0: self.x0,
            ln_ratio_max: self.ln_ratio_max,
            sums: columns::sums(&self.rows, self.by_season.as_ref(), counts, drawn),
        }
    }
}

/// The coefficients, in powers of q, of the polynomials Pₖ (k ≤ `order`) with σ⁽ᵏ⁾ = Pₖ(σ):
/// P₀ = q and Pₖ₊₁ = Pₖ'·q(1−q) (Pₖ has degree k+1).
pub(super) fn logistic_derivative_polys(order: usize) -> Vec<Vec<f64>> {
    let mut polys: Vec<Vec<f64>> = vec![vec![0.0, 1.0]];
    for k in 0..order {
        let p = &polys[k];
        let mut next = vec![0.0; p.len() + 1];
        for j in 1..p.len() {
            let dp = j as f64 * p[j];
            next[j] += dp;
            next[j + 1] -= dp;
        }
        polys.push(next);
    }
    polys
}

/// p̂ = 1/(1 + e·exp(z)) of each row in `drawn`, into `out`, with e = `e_start[i]` (exp(−η) at the
/// start) and z = `z(i)` the change of −η, |z| ≤ 1/8 (the caller's bound): exp(z) is a degree-11
/// Taylor polynomial there ([`super::exact::exp_m1`]), exact to rounding (the remainder is below
/// 3e-19), and it vectorises where exp, a call, does not.
pub(super) fn shifted_logistic(
    e_start: &[f64],
    drawn: &[u32],
    z: impl Fn(usize) -> f64,
    out: &mut Vec<f64>,
) {
    shifted_logistic_squared::<0>(e_start, drawn, z, out);
}

/// [`shifted_logistic`] for |z| ≤ 2ᴴ/8, exp(z) by [`exp_squared`].
pub(super) fn shifted_logistic_squared<const H: u32>(
    e_start: &[f64],
    drawn: &[u32],
    z: impl Fn(usize) -> f64,
    out: &mut Vec<f64>,
) {
    out.clear();
    // Eight rows at a time: their polynomials are independent, so they fill the vector lanes
    // and hide each other's latency.
    for rows in drawn.chunks(LANES) {
        let (mut zs, mut e) = ([0.0; LANES], [0.0; LANES]);
        for (j, &i) in rows.iter().enumerate() {
            zs[j] = z(i as usize);
            e[j] = e_start[i as usize];
        }
        let mut p = [0.0; LANES];
        for j in 0..LANES {
            p[j] = 1.0 / (1.0 + e[j] * exp_squared::<H>(zs[j]));
        }
        out.extend_from_slice(&p[..rows.len()]);
    }
}

impl SeriesSums {
    /// The optimum predicted by the truncated series (Newton's method on a polynomial). Only a
    /// prediction: the caller checks it with an exact Newton step. `None` when the series has no
    /// usable root within |d·l| ≤ 1 (well inside the radius π where σ's series converges).
    pub fn optimum(&self) -> Option<f64> {
        let s = &self.sums;
        let mut d = 0.0;
        for _ in 0..20 {
            // score(d) = s[0] − poly(d) with poly(d) = Σₖ s[k+1]·dᵏ; information(d) = poly'(d).
            let (mut poly, mut info) = (0.0, 0.0);
            for k in (0..=ORDER).rev() {
                info = info * d + poly;
                poly = poly * d + s[k + 1];
            }
            let score = s[0] - poly;
            if info.is_nan() || info <= 0.0 {
                return None;
            }
            let step = score / info;
            d += step;
            let reach = d.abs() * self.ln_ratio_max;
            if reach.is_nan() || reach > 1.0 {
                return None;
            }
            if step.abs() <= 1e-15 * self.x0 {
                let x = self.x0 + d;
                return (x.is_finite() && x > 0.0).then_some(x);
            }
        }
        None
    }

    /// Total negative log-likelihood at exponent x, from the series.
    pub fn nll(&self, x: f64) -> f64 {
        let (s, d) = (&self.sums, x - self.x0);
        // ∫₀ᵈ poly = Σₖ s[k+1]·d^(k+1)/(k+1), by Horner.
        let mut integral = 0.0;
        for k in (0..=ORDER).rev() {
            integral = integral * d + s[k + 1] / (k + 1) as f64;
        }
        s[NLL] - s[0] * d + integral * d
    }

    /// Σ c·w·l: the score's part that does not depend on x.
    pub fn wins_ln_ratio(&self) -> f64 {
        self.sums[0]
    }
}

/// [`crate::fit::loss::metrics`] of the Pythagorean model at exponent `x` for the bootstrap
/// resample `r` (reading only its drawn rows), and the exact Newton step of the log-loss at `x`,
/// with which the bootstrap checks its predicted optimum.
/// The log-loss comes from `series`; the rest needs each row's p̂, one exp per row. `scratch` holds
/// the p̂ of each row.
pub(crate) fn series_metrics(
    t: &Table,
    x: f64,
    r: Resampled<'_>,
    series: &SeriesSums,
    predictor: &PythagoreanSeries,
    scratch: &mut Vec<f64>,
) -> (Metrics, f64) {
    let (counts, rows) = (r.counts, r.drawn);
    // The predictions first: from the series when it reaches, else by exp, alone in their loop
    // because each call clobbers every vector register, so the running sums below would
    // otherwise be spilled to memory and reloaded around every row.
    if !predictor.predictions(x, rows, scratch) {
        scratch.clear();
        scratch.extend(
            rows.iter()
                .map(|&i| pythagorean_pct(x, t.ln_ratio[i as usize])),
        );
    }
    let mut sums = Sums::counted(r.counted);
    let (mut expected, mut hess) = (0.0, 0.0);
    for (&i, &p) in rows.iter().zip(scratch.iter()) {
        let i = i as usize;
        let c = counts[i];
        // The log-likelihood comes from the series below, so none is added here.
        sums.add_scored(t.win_pct[i], t.weight[i], c, p, 0.0);
        let l = t.ln_ratio[i];
        // An infinite ratio gives p̂ of exactly 0 or 1 whatever x is: no slope, no curvature.
        if l.is_finite() {
            let n = c * t.decisions[i];
            expected += n * p * l;
            hess += n * p * (1.0 - p) * l * l;
        }
    }
    let mut m = sums.metrics();
    m.logloss = series.nll(x) / sums.games;
    (m, (series.wins_ln_ratio() - expected) / hess)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::testdata::databank;

    #[test]
    fn series_predictions_match_exp_to_rounding() {
        let (t, _) = databank(None, crate::data::Weighting::None);
        let x0 = 1.86;
        let series = PythagoreanSeries::new(&t, x0).unwrap();
        let rows: Vec<u32> = (0..t.len() as u32).collect();
        let reach = 0.1249 / series.ln_ratio_max;
        let mut out = Vec::new();
        for d in [-reach, -0.3 * reach, 0.0, 1e-9, 0.5 * reach, reach] {
            assert!(series.predictions(x0 + d, &rows, &mut out));
            for (&i, &p) in rows.iter().zip(&out) {
                let want = crate::model::pythagorean_pct(x0 + d, t.ln_ratio[i as usize]);
                assert!((p - want).abs() <= 1e-15 * want, "{d}: {p} vs {want}");
            }
        }
        assert!(!series.predictions(x0 + 1.02 * reach, &rows, &mut out));
    }
}
