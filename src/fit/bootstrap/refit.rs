//! The bootstrap fast path of the one-parameter models' log-loss (PythagenPat's z, the linear
//! model's runs per win r; Pythagenport has its own in [`super::pythagenport`]): per-row
//! quantities computed once at the full-data optimum θ0, from which a resample's optimum is
//! predicted by sums over its rows (weighted by their integer counts, no exp or ln), then checked
//! and finished by exact Newton steps, each ONE pass over the drawn rows that accumulates the
//! gradient, the Hessian and every metric together.
//!
//! Each row's score
//! ∂nll/∂θ at θ0 + d as a Taylor polynomial in d of order [`ORDER`], from the power series of the
//! row's p̂(θ0 + d) (PythagenPat: p̂ = σ(l·x0·exp(d·ln RPG)) by the recurrence p̂' = p̂(1 − p̂)·η';
//! linear: p̂ = 0.5 + D/(r0 + d), geometric), through nll' = −(W/p̂ − L/(1 − p̂))·p̂'. The resample's
//! score polynomial is the count-weighted sum of the rows' polynomials; its root predicts the
//! optimum.
//!
//! A prediction is only a start: the result is the point where an exact Newton step (the same
//! derivatives [`crate::fit::solve::newton`] uses, from [`logit_derivatives`]) is within 1e-12 of its
//! parameter, the metrics are those of the pass that took that step, and any doubt (a Hessian not
//! positive definite, a p̂ at the log-loss clamp, no convergence in [`PASSES`] passes) returns
//! `None`, and the caller runs the general solver.

use crate::data::Table;
use crate::fit::loss::{Metrics, Sums, row_nll};
use crate::model::{ModelKind, Row, logit_derivatives, predict};

/// Order of the one-parameter score polynomials.
const ORDER: usize = 8;
/// Columns of a prepared row: ORDER + 1 score coefficients and the row's nll at θ0.
const WIDTH: usize = ORDER + 2;
/// The column of a one-parameter row's nll at θ0.
const NLL: usize = ORDER + 1;
/// Exact passes allowed before the general solver takes over.
const PASSES: usize = 5;
/// A counted p̂ closer than this to 0 or 1 (or past them) is at the log-loss clamp, where the loss
/// is not the smooth function the derivatives describe.
const EDGE: f64 = 1e-9;

/// The per-row quantities of one model at its full-data optimum.
#[derive(Debug, Clone)]
pub struct Prepared {
    kind: ModelKind,
    theta0: f64,
    rows: Vec<[f64; WIDTH]>,
}

/// Truncated power-series product (coefficients 0..N).
fn mul<const N: usize>(a: &[f64; N], b: &[f64; N]) -> [f64; N] {
    let mut out = [0.0; N];
    for (i, &ai) in a.iter().enumerate() {
        for (j, &bj) in b.iter().take(N - i).enumerate() {
            out[i + j] += ai * bj;
        }
    }
    out
}

/// Truncated power series of 1/a (a₀ ≠ 0).
fn recip<const N: usize>(a: &[f64; N]) -> [f64; N] {
    let mut out = [0.0; N];
    out[0] = 1.0 / a[0];
    for k in 1..N {
        let s: f64 = (1..=k).map(|j| a[j] * out[k - j]).sum();
        out[k] = -s * out[0];
    }
    out
}

/// p̂(θ0 + d) as a power series in d (ORDER + 2 terms), or `None` where the row has no likelihood
/// slope at θ0 (the same rows [`logit_derivatives`] leaves out).
fn p_series(kind: ModelKind, theta0: f64, row: &Row) -> Option<[f64; ORDER + 2]> {
    const N: usize = ORDER + 2;
    let mut p = [0.0; N];
    match kind {
        ModelKind::Pythagenpat => {
            let l = row.ln_ratio;
            if !l.is_finite() {
                return None;
            }
            // η(d) = l·x0·exp(d·ln RPG); its derivative's coefficients (j+1)·η_{j+1}.
            let x0 = (theta0 * row.ln_rpg).exp();
            let (mut eta, mut term) = ([0.0; N], l * x0);
            for (k, e) in eta.iter_mut().enumerate() {
                *e = term;
                term *= row.ln_rpg / (k + 1) as f64;
            }
            let mut deta = [0.0; N];
            for j in 0..N - 1 {
                deta[j] = (j + 1) as f64 * eta[j + 1];
            }
            p[0] = crate::model::logistic(eta[0]);
            for k in 0..N - 1 {
                // (k+1)·p_{k+1} = [p(1 − p)·η']_k, whose right side needs p_0..p_k only.
                let mut q = p;
                q[k + 1..].fill(0.0);
                let pp = mul(&q, &q);
                let v: [f64; N] = std::array::from_fn(|j| q[j] - pp[j]);
                p[k + 1] = mul(&v, &deta)[k] / (k + 1) as f64;
            }
        }
        ModelKind::Linear => {
            let (d, r) = (row.diff_per_game, theta0);
            p[0] = 0.5 + d / r;
            if !(p[0] > 0.0 && p[0] < 1.0) {
                return None;
            }
            // D/(r + δ) = Σ D·(−δ)ᵏ/r^(k+1).
            let mut term = -d / (r * r);
            for c in p.iter_mut().skip(1) {
                *c = term;
                term *= -1.0 / r;
            }
        }
        ModelKind::Pythagorean | ModelKind::Pythagenport => return None,
    }
    Some(p)
}

/// A row's score polynomial: nll'(θ0 + d) = Σₖ sₖ·dᵏ, k ≤ ORDER.
fn score_series(p: &[f64; ORDER + 2], wins: f64, losses: f64) -> [f64; ORDER + 1] {
    const N: usize = ORDER + 1;
    let head: [f64; N] = std::array::from_fn(|k| p[k]);
    let dp: [f64; N] = std::array::from_fn(|k| (k + 1) as f64 * p[k + 1]);
    let one_minus: [f64; N] = std::array::from_fn(|k| if k == 0 { 1.0 } else { 0.0 } - head[k]);
    let (rp, rq) = (recip(&head), recip(&one_minus));
    let factor: [f64; N] = std::array::from_fn(|k| losses * rq[k] - wins * rp[k]);
    mul(&factor, &dp)
}

/// One exact pass at θ.
struct Pass {
    gradient: f64,
    hessian: f64,
    /// min over counted rows of min(p̂, 1 − p̂) (0 for a one-sided linear row).
    edge: f64,
    sums: Option<Sums>,
}

impl Prepared {
    /// `None` for models without this path (the Pythagorean and Pythagenport ones have their own).
    pub fn new(t: &Table, kind: ModelKind, theta0: &[f64]) -> Option<Prepared> {
        if !matches!(kind, ModelKind::Pythagenpat | ModelKind::Linear) {
            return None;
        }
        let rows = (0..t.len())
            .map(|i| {
                let mut out = [0.0; WIDTH];
                if let Some(p) = p_series(kind, theta0[0], &Row::of(t, i)) {
                    let s = score_series(&p, t.wins[i], t.losses[i]);
                    out[..=ORDER].copy_from_slice(&s);
                }
                let p0 = predict(kind, theta0, &Row::of(t, i));
                out[NLL] = row_nll(t.wins[i], t.losses[i], p0);
                out
            })
            .collect();
        Some(Prepared {
            kind,
            theta0: theta0[0],
            rows,
        })
    }

    /// The predicted optimum of a resample: the root of its score polynomial nearest θ0, with the
    /// polynomial's coefficients. `None` when the prediction finds no minimum.
    fn predict(&self, counts: &[f64], drawn: &[u32]) -> Option<(f64, [f64; WIDTH])> {
        let mut s = [0.0; WIDTH];
        for &i in drawn {
            let (c, row) = (counts[i as usize], &self.rows[i as usize]);
            for (s, &r) in s.iter_mut().zip(row) {
                *s += c * r;
            }
        }
        let t0 = self.theta0;
        let mut d = 0.0;
        for _ in 0..30 {
            let (mut score, mut slope) = (0.0, 0.0);
            for &c in s[..=ORDER].iter().rev() {
                slope = slope * d + score;
                score = score * d + c;
            }
            if slope.is_nan() || slope <= 0.0 {
                return None;
            }
            let step = score / slope;
            d -= step;
            if !d.is_finite() || d.abs() > 0.5 * t0.abs() {
                return None;
            }
            if step.abs() <= 1e-15 * t0.abs().max(1.0) {
                return Some((t0 + d, s));
            }
        }
        None
    }

    /// Gradient and Hessian of the resample's total negative log-likelihood at θ, the distance of
    /// the nearest counted p̂ to 0 or 1, and (when asked) every metric's running sums, without the
    /// log-likelihood when `series_nll` (the caller takes it from the series, with no ln per row).
    fn pass(
        &self,
        t: &Table,
        theta: f64,
        counts: &[f64],
        drawn: &[u32],
        metrics: bool,
        series_nll: bool,
    ) -> Pass {
        let mut out = Pass {
            gradient: 0.0,
            hessian: 0.0,
            edge: f64::INFINITY,
            sums: metrics.then(Sums::default),
        };
        let params = [theta];
        for &i in drawn {
            let i = i as usize;
            let c = counts[i];
            let row = Row::of(t, i);
            let p = match logit_derivatives(self.kind, &params, &row) {
                Some(d) => {
                    let n = c * t.decisions[i];
                    let residual = c * t.wins[i] - n * d.p;
                    let v = n * d.p * (1.0 - d.p);
                    out.gradient -= residual * d.gradient[0];
                    out.hessian += v * d.gradient[0] * d.gradient[0] - residual * d.hessian[0][0];
                    d.p
                }
                None => predict(self.kind, &params, &row),
            };
            // The linear loss is convex in 1/r only while every counted row is inside (0, 1) with
            // both wins and losses: a row past 0 or 1 keeps its clamped loss whatever r does, and
            // the loss has other local minima there (on the full history, eight between r = 5
            // and 60, each just past where an 1870s row reaches the clamp), which the general
            // solver may find lower, so such a resample goes to it.
            let one_sided =
                self.kind == ModelKind::Linear && (t.wins[i] == 0.0 || t.losses[i] == 0.0);
            out.edge = if one_sided {
                0.0
            } else {
                out.edge.min(p).min(1.0 - p)
            };
            if let Some(sums) = out.sums.as_mut() {
                let nll = if series_nll {
                    0.0
                } else {
                    row_nll(t.wins[i], t.losses[i], p)
                };
                sums.add(t, i, c, p, nll);
            }
        }
        out
    }

    /// A resample's optimum and metrics (see the module notes), or `None` for the general solver.
    /// `drawn`: the rows whose count is not zero, ascending.
    pub fn refit(&self, t: &Table, counts: &[f64], drawn: &[u32]) -> Option<(Vec<f64>, Metrics)> {
        let (mut theta, series) = self.predict(counts, drawn)?;
        // The prediction is usually exact to rounding, so its first pass scores too.
        let mut metrics = true;
        for n in 0..PASSES {
            // PythagenPat's series (radius about 1/ln RPG, far beyond a resample's move) gives the
            // log-likelihood when its own prediction passed the exact check; the linear series'
            // radius is only as wide as the nearest row's distance from 0 or 1, so it takes ln.
            let series_nll = self.kind == ModelKind::Pythagenpat && n == 0;
            let pass = self.pass(t, theta, counts, drawn, metrics, series_nll);
            let h = pass.hessian;
            if !(h > 0.0 && pass.gradient.is_finite()) {
                return None;
            }
            let delta = -pass.gradient / h;
            // The clamp: the linear model's loss changes its form where a p̂ crosses 0 or 1.
            if self.kind == ModelKind::Linear && pass.edge <= EDGE {
                return None;
            }
            let small = delta.abs() <= 1e-12 * theta.abs().max(1.0);
            if let (true, Some(sums)) = (small, pass.sums.as_ref()) {
                let param = theta + delta;
                let mut m = sums.metrics();
                if series_nll {
                    // Σ c·nll(θ0) + ∫ score from θ0 to the optimum, by Horner.
                    let d = param - self.theta0;
                    let mut integral = 0.0;
                    for (j, &c) in series[..=ORDER].iter().enumerate().rev() {
                        integral = integral * d + c / (j + 1) as f64;
                    }
                    m.logloss = (series[NLL] + integral * d) / sums.games;
                }
                return (param > 0.0 && param.is_finite()).then_some((vec![param], m));
            }
            theta += delta;
            if !theta.is_finite() || theta <= 0.0 {
                return None;
            }
            metrics = delta.abs() <= 1e-6 * theta.abs().max(1.0);
        }
        None
    }
}
