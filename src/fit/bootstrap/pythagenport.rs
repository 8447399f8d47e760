//! Pythagenport's bootstrap fast path. Its log-loss is a logistic regression without intercept:
//! η = θ·x with x = (l·log10 RPG, l), θ = (a, b). As for the fixed exponent ([`super::series`]),
//! every row's negative log-likelihood is expanded once around the full-data optimum θ0, now in two
//! variables: with t = δ·x and q = σ(η0),
//!
//!   nll(η0 + t) = nll(η0) + (n·q − w)·t + Σₘ₌₂ n·Pₘ₋₁(q)/m!·tᵐ,   tᵐ = Σₐ C(m, a)·x₁ᵃ·x₂ᵐ⁻ᵃ·δ₁ᵃ·δ₂ᵐ⁻ᵃ,
//!
//! so a resample's log-loss is a polynomial in δ whose coefficients are count-weighted column sums
//! (no exp, no ln). Its minimum (Newton on the polynomial, with its exact gradient and Hessian)
//! predicts the resample's optimum; one exact pass there (p̂ from exp(−η0) times a polynomial for
//! exp, the score and the information, every metric) checks it: when the exact Newton step is
//! within 1e-12 of each parameter the prediction stands, corrected by the step, and the log-loss is
//! the polynomial's value. Otherwise exact Newton passes continue ([`PASSES`]), and any doubt (an
//! information matrix not safely positive definite, a p̂ at the log-loss clamp) returns `None` for
//! the general solver.

use super::Resampled;
use super::columns::BySeason;
use super::series::{logistic_derivative_polys, shifted_logistic, shifted_logistic_squared};
use crate::data::Table;
use crate::fit::loss::{Metrics, Sums, row_nll};
use crate::model::logistic;

/// Highest power of δ kept in the log-loss polynomial.
const DEGREE: usize = 7;
/// Monomials δ₁ᵃ·δ₂ᵐ⁻ᵃ for 1 ≤ m ≤ DEGREE, in order of m, then a.
const TERMS: usize = DEGREE * (DEGREE + 3) / 2;
/// Columns of a prepared row: the monomials' coefficients and the row's nll at θ0, padded to an even
/// width for two-lane arithmetic.
const WIDTH: usize = TERMS + 2;
const NLL: usize = TERMS;
/// Numbers stored per row: Bₘ for m = 1..=DEGREE, log10 RPG and the nll at θ0.
const BASE: usize = DEGREE + 2;
/// Exact passes allowed before the general solver takes over.
const PASSES: usize = 4;
/// A counted p̂ closer than this to 0 or 1 is at the log-loss clamp (as in [`super::refit`]).
const EDGE: f64 = 1e-9;

/// Column of the monomial δ₁ᵃ·δ₂ᵐ⁻ᵃ.
const fn column(m: usize, a: usize) -> usize {
    m * (m + 1) / 2 - 1 + a
}

/// Per-row quantities at the full-data optimum.
#[derive(Debug, Clone)]
pub struct PortSeries {
    theta0: [f64; 2],
    /// max |l| and the range of log10 RPG over the rows: with δ·x = l·(δ₁·log10 RPG + δ₂), they
    /// bound |δ·x| for every row (the parameters move along Pythagenport's valley, where δ₁ and δ₂
    /// nearly cancel, so a bound from |δ₁| and |δ₂| alone would be far too wide).
    ln_ratio_max: f64,
    log10_rpg_range: [f64; 2],
    /// Per row: Bₘ = cₘ·lᵐ for m = 1..=DEGREE (cₘ the row's coefficient of tᵐ), log10 RPG and
    /// the row's nll at θ0. Monomial δ₁ᵃ·δ₂ᵐ⁻ᵃ's coefficient is C(m, a)·Bₘ·log10 RPGᵃ (as
    /// x₁ᵃ·x₂ᵐ⁻ᵃ = lᵐ·log10 RPGᵃ), summed from these nine numbers a row instead of read from
    /// [`WIDTH`] stored ones: a quarter of the bytes (the whole table stays in cache).
    rows: Vec<[f64; BASE]>,
    /// C(m, a) by column.
    binom: [f64; WIDTH],
    /// x of each row.
    x: Vec<[f64; 2]>,
    /// exp(−η0) of each row.
    e_start: Vec<f64>,
    /// `rows` summed by season, under season resampling.
    by_season: Option<BySeason<WIDTH>>,
}

/// One exact pass at θ.
struct Pass {
    gradient: [f64; 2],
    hessian: [[f64; 2]; 2],
    edge: f64,
    sums: Sums,
}

impl PortSeries {
    /// `None` for a table with a zero-run side (an infinite ratio, whose prediction does not move
    /// smoothly with θ) or a row already at the clamp at θ0.
    pub fn new(t: &Table, theta0: &[f64]) -> Option<PortSeries> {
        let theta0 = [theta0[0], theta0[1]];
        let polys = logistic_derivative_polys(DEGREE);
        // Binomial coefficients C(m, a) and m!.
        let mut binom = [[0.0f64; DEGREE + 1]; DEGREE + 1];
        for m in 0..=DEGREE {
            binom[m][0] = 1.0;
            for a in 1..=m {
                binom[m][a] = binom[m - 1][a - 1] + if a < m { binom[m - 1][a] } else { 0.0 };
            }
        }
        let mut ln_ratio_max = 0.0f64;
        let mut log10_rpg_range = [f64::INFINITY, f64::NEG_INFINITY];
        let mut rows = Vec::with_capacity(t.len());
        let mut xs = Vec::with_capacity(t.len());
        let mut e_start = Vec::with_capacity(t.len());
        for i in 0..t.len() {
            let l = t.ln_ratio[i];
            if !l.is_finite() {
                return None;
            }
            let x = [l * t.log10_rpg[i], l];
            let eta = theta0[0] * x[0] + theta0[1] * x[1];
            let q = logistic(eta);
            if !(q > EDGE && q < 1.0 - EDGE) {
                return None;
            }
            ln_ratio_max = ln_ratio_max.max(l.abs());
            let g = t.log10_rpg[i];
            log10_rpg_range = [log10_rpg_range[0].min(g), log10_rpg_range[1].max(g)];
            let n = t.decisions[i];
            let mut row = [0.0; BASE];
            let mut factorial = 1.0;
            for m in 1..=DEGREE {
                factorial *= m as f64;
                let c = if m == 1 {
                    n * q - t.wins[i]
                } else {
                    let pm = polys[m - 1].iter().rev().fold(0.0, |acc, &c| acc * q + c);
                    n * pm / factorial
                };
                row[m - 1] = c * l.powi(m as i32);
            }
            row[DEGREE] = g;
            row[DEGREE + 1] = row_nll(t.wins[i], t.losses[i], q);
            rows.push(row);
            xs.push(x);
            e_start.push((-eta).exp());
        }
        Some(PortSeries {
            theta0,
            ln_ratio_max,
            log10_rpg_range,
            rows,
            binom: std::array::from_fn(|k| {
                (1..=DEGREE)
                    .flat_map(|m| (0..=m).map(move |a| (m, a)))
                    .nth(k)
                    .map_or(1.0, |(m, a)| binom[m][a])
            }),
            x: xs,
            e_start,
            by_season: None,
        })
    }

    /// For season resampling: the column sums by season (`seasons`: each season's rows).
    pub fn by_season(&mut self, seasons: &[Vec<usize>]) {
        self.by_season = Some(BySeason::new(seasons, |i| {
            let mut s = self.monomials(&self.rows[i], 1.0);
            for (s, b) in s.iter_mut().zip(&self.binom) {
                *s *= b;
            }
            s
        }));
    }

    /// Bound of |δ·x| over every row.
    fn reach(&self, delta: [f64; 2]) -> f64 {
        let [lo, hi] = self.log10_rpg_range;
        self.ln_ratio_max
            * (delta[0] * lo + delta[1])
                .abs()
                .max((delta[0] * hi + delta[1]).abs())
    }

    /// The resample's log-loss polynomial (count-weighted column sums).
    fn sums(&self, counts: &[f64], drawn: &[u32]) -> [f64; WIDTH] {
        if let Some(b) = &self.by_season {
            return b.sums(counts);
        }
        let mut s = [0.0; WIDTH];
        for &i in drawn {
            let (c, row) = (counts[i as usize], &self.rows[i as usize]);
            let mut g = [c; DEGREE + 1];
            for a in 1..=DEGREE {
                g[a] = g[a - 1] * row[DEGREE];
            }
            let mut k = 0;
            for (m, &b) in row[..DEGREE].iter().enumerate() {
                for &ga in &g[..m + 2] {
                    s[k] += b * ga;
                    k += 1;
                }
            }
            s[NLL] += c * row[DEGREE + 1];
        }
        for (s, b) in s.iter_mut().zip(&self.binom) {
            *s *= b;
        }
        s
    }

    /// A row's monomial coefficients without their binomial factor, counted `c` times.
    #[inline(always)]
    fn monomials(&self, row: &[f64; BASE], c: f64) -> [f64; WIDTH] {
        let mut g = [c; DEGREE + 1];
        for a in 1..=DEGREE {
            g[a] = g[a - 1] * row[DEGREE];
        }
        let mut out = [0.0; WIDTH];
        for m in 1..=DEGREE {
            for a in 0..=m {
                out[column(m, a)] = row[m - 1] * g[a];
            }
        }
        out[NLL] = c * row[DEGREE + 1];
        out
    }

    /// The polynomial's value, gradient and Hessian at δ.
    fn evaluate(s: &[f64; WIDTH], delta: [f64; 2]) -> (f64, [f64; 2], [[f64; 2]; 2]) {
        let mut p1 = [1.0; DEGREE + 1];
        let mut p2 = [1.0; DEGREE + 1];
        for k in 1..=DEGREE {
            p1[k] = p1[k - 1] * delta[0];
            p2[k] = p2[k - 1] * delta[1];
        }
        let (mut value, mut g, mut h) = (s[NLL], [0.0; 2], [[0.0; 2]; 2]);
        for m in 1..=DEGREE {
            for a in 0..=m {
                let (c, b) = (s[column(m, a)], m - a);
                let (af, bf) = (a as f64, b as f64);
                value += c * p1[a] * p2[b];
                if a >= 1 {
                    g[0] += c * af * p1[a - 1] * p2[b];
                }
                if b >= 1 {
                    g[1] += c * bf * p1[a] * p2[b - 1];
                }
                if a >= 2 {
                    h[0][0] += c * af * (af - 1.0) * p1[a - 2] * p2[b];
                }
                if b >= 2 {
                    h[1][1] += c * bf * (bf - 1.0) * p1[a] * p2[b - 2];
                }
                if a >= 1 && b >= 1 {
                    h[0][1] += c * af * bf * p1[a - 1] * p2[b - 1];
                }
            }
        }
        h[1][0] = h[0][1];
        (value, g, h)
    }

    /// The polynomial's minimum near δ = 0, or `None` when Newton on it finds none within the
    /// reach where the expansion holds (|δ·x| ≤ 1, well inside the radius π of σ's series).
    fn optimum(&self, s: &[f64; WIDTH]) -> Option<[f64; 2]> {
        let mut delta = [0.0; 2];
        for _ in 0..30 {
            let (_, g, h) = Self::evaluate(s, delta);
            let step = newton_step(&g, &h)?;
            delta = [delta[0] + step[0], delta[1] + step[1]];
            let reach = self.reach(delta);
            if reach.is_nan() || reach > 1.0 {
                return None;
            }
            let scale = |k: usize| (self.theta0[k] + delta[k]).abs().max(1.0);
            // Rounding leaves steps of about 1e-15 along the valley; the exact pass decides.
            if step[0].abs() <= 1e-13 * scale(0) && step[1].abs() <= 1e-13 * scale(1) {
                return Some(delta);
            }
        }
        None
    }

    /// Score, information, clamp distance and every metric's sums at θ (log-likelihood left out
    /// when `series_nll`: the caller takes it from the polynomial).
    fn pass(
        &self,
        t: &Table,
        theta: [f64; 2],
        r: Resampled<'_>,
        series_nll: bool,
        scratch: &mut Vec<f64>,
    ) -> Pass {
        let (counts, drawn) = (r.counts, r.drawn);
        let delta = [theta[0] - self.theta0[0], theta[1] - self.theta0[1]];
        let reach = self.reach(delta);
        let z = |i: usize| -(delta[0] * self.x[i][0] + delta[1] * self.x[i][1]);
        if reach <= 0.125 {
            shifted_logistic(&self.e_start, drawn, z, scratch);
        } else if reach <= 0.5 {
            // A fifth of the resamples move this far (the parameters are loosely determined
            // along Pythagenport's valley); exp(z) = exp(z/4)⁴ keeps them off exp.
            shifted_logistic_squared::<2>(&self.e_start, drawn, z, scratch);
        } else {
            scratch.clear();
            scratch.extend(drawn.iter().map(|&i| {
                let x = self.x[i as usize];
                logistic(theta[0] * x[0] + theta[1] * x[1])
            }));
        }
        let mut out = Pass {
            gradient: [0.0; 2],
            hessian: [[0.0; 2]; 2],
            edge: f64::INFINITY,
            sums: Sums::counted(r.counted),
        };
        for (&i, &p) in drawn.iter().zip(scratch.iter()) {
            let i = i as usize;
            let (c, x) = (counts[i], self.x[i]);
            let n = c * t.decisions[i];
            let residual = c * t.wins[i] - n * p;
            let v = n * p * (1.0 - p);
            out.gradient[0] -= residual * x[0];
            out.gradient[1] -= residual * x[1];
            out.hessian[0][0] += v * x[0] * x[0];
            out.hessian[0][1] += v * x[0] * x[1];
            out.hessian[1][1] += v * x[1] * x[1];
            out.edge = out.edge.min(p).min(1.0 - p);
            let nll = if series_nll {
                0.0
            } else {
                row_nll(t.wins[i], t.losses[i], p)
            };
            out.sums.add_scored(t.win_pct[i], t.weight[i], c, p, nll);
        }
        out.hessian[1][0] = out.hessian[0][1];
        out
    }

    /// A resample's optimum and metrics, or `None` for the general solver. `drawn`: the rows whose
    /// count is not zero, ascending, in `r`; `scratch` holds their p̂.
    pub(crate) fn refit(
        &self,
        t: &Table,
        r: Resampled<'_>,
        scratch: &mut Vec<f64>,
    ) -> Option<(Vec<f64>, Metrics)> {
        let (counts, drawn) = (r.counts, r.drawn);
        let s = self.sums(counts, drawn);
        let delta = self.optimum(&s)?;
        let mut theta = [self.theta0[0] + delta[0], self.theta0[1] + delta[1]];
        for n in 0..PASSES {
            let series_nll = n == 0;
            let pass = self.pass(t, theta, r, series_nll, scratch);
            if pass.edge <= EDGE {
                return None;
            }
            let step = newton_step(&pass.gradient, &pass.hessian)?;
            let small = (0..2).all(|a| step[a].abs() <= 1e-12 * theta[a].abs().max(1.0));
            if small {
                let mut m = pass.sums.metrics();
                if series_nll {
                    let (value, _, _) = Self::evaluate(&s, delta);
                    m.logloss = value / pass.sums.games;
                }
                let params = vec![theta[0] + step[0], theta[1] + step[1]];
                return params.iter().all(|v| v.is_finite()).then_some((params, m));
            }
            theta = [theta[0] + step[0], theta[1] + step[1]];
            if !theta.iter().all(|v| v.is_finite()) {
                return None;
            }
        }
        None
    }
}

/// The Newton step −H⁻¹·∇ in two parameters; `None` unless H is safely positive definite (the
/// rule of [`crate::fit::solve::newton`]).
pub(super) fn newton_step(gradient: &[f64; 2], hessian: &[[f64; 2]; 2]) -> Option<[f64; 2]> {
    let (haa, hab, hbb) = (hessian[0][0], hessian[0][1], hessian[1][1]);
    let det = haa * hbb - hab * hab;
    if !gradient.iter().all(|g| g.is_finite()) || det.is_nan() || det <= 1e-10 * haa * hbb {
        return None;
    }
    if haa <= 0.0 {
        return None;
    }
    let (ga, gb) = (gradient[0], gradient[1]);
    Some([(hab * gb - hbb * ga) / det, (hab * ga - haa * gb) / det])
}
