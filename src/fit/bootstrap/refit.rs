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
//! The linear model searches past its prediction: its loss has several local minima, found in
//! [`super::window`], checked by [`super::exact`] (Newton in u = 1/r) and proved lowest by
//! [`super::stretches`]; see [`Prepared::refit`].
//!
//! A prediction is only a start: the result is the point where an exact Newton step (for
//! PythagenPat the derivatives [`crate::fit::solve::newton`] uses, from [`logit_derivatives`],
//! computed without exp by [`exact::pythagenpat_pass`] near z0) is within 1e-12 of its parameter,
//! the metrics are those of the pass that took that step, and any doubt (a Hessian not positive definite, a p̂ at the log-loss clamp, no convergence in
//! [`PASSES`] passes) returns `None`, and the caller runs the general solver.

use crate::data::Table;
use crate::fit::loss::{Counted, Metrics, Sums, row_nll};
use crate::model::{ModelKind, Row, logit_derivatives, predict};

use super::Resampled;
use super::columns::{self, BySeason};
use super::exact;
use super::stretches::{self, Found, Stretches, Verdict};
use super::window::{SEARCH_TOL, Window};
use crate::fit::solve::pieces;

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

/// A linear resample's minimum from its exact pass: r, the metrics there, and the point, loss and
/// slope in u that the certificate reads.
struct LinearFit {
    r: f64,
    metrics: Metrics,
    at: Found,
}

impl LinearFit {
    fn result(self) -> (Vec<f64>, Metrics) {
        (vec![self.r], self.metrics)
    }
}

/// The per-row quantities of one model at its full-data optimum.
#[derive(Debug, Clone)]
pub struct Prepared {
    kind: ModelKind,
    theta0: f64,
    rows: Vec<[f64; WIDTH]>,
    /// The linear model's certificate that no other stretch of its loss is lower.
    stretches: Option<Stretches>,
    /// The linear model's cheap loss near its full-data optimum.
    window: Option<Window>,
    /// The linear model's rows for its exact pass (empty for PythagenPat).
    packed: Vec<exact::Packed>,
    /// PythagenPat's rows for its exact pass (empty for the linear model), and their bounds.
    pat: Vec<exact::PatPacked>,
    pat_bounds: [f64; 2],
    /// `rows` summed by season, under season resampling.
    by_season: Option<BySeason<WIDTH>>,
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
        let stretches = (kind == ModelKind::Linear)
            .then(|| Stretches::new(t, 1.0 / theta0[0]))
            .flatten();
        let window = stretches.is_some().then(|| Window::new(t, 1.0 / theta0[0]));
        let pat = if kind == ModelKind::Pythagenpat {
            exact::pack_pythagenpat(t, theta0[0])
        } else {
            Vec::new()
        };
        let pat_bounds = exact::pat_bounds(&pat);
        Some(Prepared {
            kind,
            theta0: theta0[0],
            rows,
            stretches,
            window,
            packed: if kind == ModelKind::Linear {
                exact::pack(t)
            } else {
                Vec::new()
            },
            pat,
            pat_bounds,
            by_season: None,
        })
    }

    /// For season resampling: the column sums by season (`seasons`: each season's rows), the
    /// series' and the window's.
    pub fn by_season(&mut self, seasons: &[Vec<usize>]) {
        self.by_season = Some(BySeason::new(seasons, |i| self.rows[i]));
        if let Some(w) = self.window.as_mut() {
            w.by_season(seasons);
        }
    }

    /// The predicted optimum of a resample: the root of its score polynomial nearest θ0, with the
    /// polynomial's coefficients. `None` when the prediction finds no minimum.
    fn predict(&self, counts: &[f64], drawn: &[u32]) -> Option<(f64, [f64; WIDTH])> {
        let s = columns::sums(&self.rows, self.by_season.as_ref(), counts, drawn);
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

    /// Gradient and Hessian of the resample's total negative log-likelihood at θ and (when asked)
    /// every metric's running sums, without the log-likelihood when `series_nll` (the caller takes
    /// it from the series, with no ln per row).
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
    pub(crate) fn refit(&self, t: &Table, r: Resampled<'_>) -> Option<(Vec<f64>, Metrics)> {
        let Resampled {
            counts,
            drawn,
            counted,
        } = r;
        let Some(stretches) = &self.stretches else {
            if self.kind == ModelKind::Linear {
                let theta = self.predict(counts, drawn).map_or(self.theta0, |p| p.0);
                return self
                    .linear_newton(counts, drawn, counted, 1.0 / theta, None)
                    .map(LinearFit::result);
            }
            let (theta, series) = self.predict(counts, drawn)?;
            let nll = |param: f64| self.series_nll(&series, param);
            return self.newton(t, counts, drawn, counted, theta, Some(&nll));
        };
        // The linear model: the lowest minimum inside the window, checked exactly; else Newton
        // from the series' prediction or the full-data optimum, and the stretch around it.
        let windowed = self.window.as_ref().and_then(|w| {
            let sums = w.sums(counts, drawn);
            let u = w.lowest(t, &sums)?;
            let (lo, hi) = w.bounds();
            let nll = |u: f64| w.value(t, &sums, u);
            let found = self.linear_newton(counts, drawn, counted, u, Some(&nll))?;
            (found.at.u > lo && found.at.u < hi).then_some(found)
        });
        let mut found = match windowed {
            Some(found) => found,
            None => self.unwindowed(t, counts, drawn, counted, stretches)?,
        };
        // A stretch that may hold a lower minimum is searched, and its minimum checked in turn:
        // lower, it is the new candidate; not lower, the stretch is ruled out. Four searches are
        // as far as the fast path goes.
        let mut ruled_out = Vec::new();
        for _ in 0..4 {
            match stretches.certify(t, counts, drawn, found.at, &ruled_out) {
                Verdict::Lowest => return Some(found.result()),
                Verdict::Unknown => return None,
                Verdict::Search(lo, hi) => {
                    let u = pieces::stretch_minimum(
                        pieces::pole_free(|u| stretches::derivatives(t, counts, drawn, u), hi),
                        lo,
                        hi,
                        SEARCH_TOL,
                    );
                    // No minimum inside (the bound dipped below, the loss did not): no verdict.
                    let u = u?;
                    let other = self.linear_newton(counts, drawn, counted, u, None)?;
                    if other.at.loss < found.at.loss {
                        found = other;
                    } else {
                        ruled_out.push((lo, hi));
                    }
                }
            }
        }
        None
    }

    /// The linear model beyond its window: Newton in u from the series' prediction (its radius is
    /// only as wide as the nearest row's distance from 0 or 1) or else from the full-data optimum;
    /// where Newton fails (a step across a breakpoint, where the loss is not convex), the stretch
    /// around the full-data optimum is searched, safeguarded.
    fn unwindowed(
        &self,
        t: &Table,
        counts: &[f64],
        drawn: &[u32],
        counted: &Counted,
        stretches: &Stretches,
    ) -> Option<LinearFit> {
        let theta = self.predict(counts, drawn).map_or(self.theta0, |p| p.0);
        if let Some(found) = self.linear_newton(counts, drawn, counted, 1.0 / theta, None) {
            return Some(found);
        }
        let (lo, hi) = stretches.around(counts, 1.0 / self.theta0);
        let u = pieces::stretch_minimum(
            pieces::pole_free(|u| stretches::derivatives(t, counts, drawn, u), hi),
            lo,
            hi,
            SEARCH_TOL,
        )?;
        self.linear_newton(counts, drawn, counted, u, None)
    }

    /// Σ c·nll at θ from a resample's score series: Σ c·nll(θ0) + ∫ score from θ0, by Horner.
    fn series_nll(&self, series: &[f64; WIDTH], theta: f64) -> f64 {
        let d = theta - self.theta0;
        let mut integral = 0.0;
        for (j, &c) in series[..=ORDER].iter().enumerate().rev() {
            integral = integral * d + c / (j + 1) as f64;
        }
        series[NLL] + integral * d
    }

    /// The linear model's exact Newton passes, in u = 1/r (where each stretch of its loss is
    /// convex), each one [`exact::pass`]; a row within [`EDGE`] of the clamp ends the fast path.
    /// Accepted, as in [`Self::newton`], when the step is within 1e-12 of u, with the metrics of
    /// the pass that took it and the loss from `nll` (a function of u) when given.
    fn linear_newton(
        &self,
        counts: &[f64],
        drawn: &[u32],
        counted: &Counted,
        mut u: f64,
        nll: Option<&dyn Fn(f64) -> f64>,
    ) -> Option<LinearFit> {
        let mut metrics = true;
        for _ in 0..PASSES {
            if !(u > 0.0 && u.is_finite()) {
                return None;
            }
            let kernel = exact::Linear { u };
            let r = Resampled {
                counts,
                drawn,
                counted,
            };
            let pass = exact::pass(&kernel, &self.packed, r, metrics, nll.is_none());
            if pass.edge <= EDGE {
                return None;
            }
            let (g, h, sums) = (pass.gradient, pass.hessian, pass.sums);
            if !(h > 0.0 && g.is_finite()) {
                return None;
            }
            let delta = -g / h;
            if let (true, Some(sums)) = (delta.abs() <= 1e-12 * u, sums.as_ref()) {
                let next = u + delta;
                if !(next > 0.0 && next.is_finite()) {
                    return None;
                }
                let mut m = sums.metrics();
                if let Some(total) = nll {
                    m.logloss = total(next) / sums.games;
                }
                return Some(LinearFit {
                    r: 1.0 / next,
                    metrics: m,
                    at: Found {
                        u: next,
                        loss: m.logloss * sums.games,
                        gradient: g,
                    },
                });
            }
            u += delta;
            metrics = delta.abs() <= 1e-6 * u;
        }
        None
    }

    /// PythagenPat's exact Newton passes from θ: the optimum and its metrics.
    fn newton(
        &self,
        t: &Table,
        counts: &[f64],
        drawn: &[u32],
        counted: &Counted,
        mut theta: f64,
        nll: Option<&dyn Fn(f64) -> f64>,
    ) -> Option<(Vec<f64>, Metrics)> {
        let predicted = theta;
        // The prediction is usually exact to rounding, so its first pass scores too.
        let mut metrics = true;
        for n in 0..PASSES {
            // The series gives the log-likelihood (Σ c·nll at the optimum) with no ln per row
            // (PythagenPat's radius is about 1/ln RPG, far beyond a resample's move) when its own
            // prediction passed the exact check.
            let by_series = nll.filter(|_| n == 0 && theta == predicted);
            let d = theta - self.theta0;
            let fast = exact::pythagenpat_pass(
                &self.pat,
                Resampled {
                    counts,
                    drawn,
                    counted,
                },
                d,
                self.pat_bounds,
                metrics,
                by_series.is_none(),
            );
            let (gradient, h, sums) = match fast {
                Some(pass) if pass.edge <= EDGE => return None,
                Some(pass) => (pass.gradient, pass.hessian, pass.sums),
                None => {
                    let pass = self.pass(t, theta, counts, drawn, metrics, by_series.is_some());
                    (pass.gradient, pass.hessian, pass.sums)
                }
            };
            if !(h > 0.0 && gradient.is_finite()) {
                return None;
            }
            let delta = -gradient / h;
            let small = delta.abs() <= 1e-12 * theta.abs().max(1.0);
            if let (true, Some(sums)) = (small, sums.as_ref()) {
                let param = theta + delta;
                let mut m = sums.metrics();
                if let Some(total) = by_series {
                    m.logloss = total(param) / sums.games;
                }
                if !(param > 0.0 && param.is_finite()) {
                    return None;
                }
                return Some((vec![param], m));
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
