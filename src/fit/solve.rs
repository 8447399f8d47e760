//! Fitting: argmin problems over our loss functions. One-parameter models use Brent's method on a
//! bracket found automatically; the two-parameter model uses Nelder–Mead. The Pythagorean log-loss
//! (a logistic regression without intercept, convex in the exponent) takes Newton steps first.

use argmin::core::{
    CostFunction, Error as ArgminError, Executor, State, TerminationReason, TerminationStatus,
};
use argmin::solver::brent::BrentOpt;
use argmin::solver::neldermead::NelderMead;

use super::loss::{Loss, loss_value};
use crate::data::Table;
use crate::error::FitError;
use crate::model::ModelKind;

/// The result of one fit.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    pub params: Vec<f64>,
    pub loss: f64,
    pub iterations: u64,
    pub converged: bool,
}

/// What to fit and on which rows.
#[derive(Debug, Clone, Copy)]
pub struct Problem<'a> {
    pub table: &'a Table,
    pub kind: ModelKind,
    pub loss: Loss,
    /// Row multiplicities (bootstrap); `None` means each row once.
    pub counts: Option<&'a [f64]>,
}

impl Problem<'_> {
    fn value(&self, params: &[f64]) -> f64 {
        loss_value(self.table, self.kind, params, self.loss, self.counts)
    }
}

/// A one-parameter problem in u = ln(parameter): every parameter we fit is positive, and a
/// logarithmic scale lets one bracket search cover exponents from 0.1 to 100.
struct LogScale<'a>(Problem<'a>);

impl CostFunction for LogScale<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, u: &f64) -> Result<f64, ArgminError> {
        Ok(self.0.value(&[u.exp()]))
    }
}

struct TwoParam<'a>(Problem<'a>);

impl CostFunction for TwoParam<'_> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, p: &Vec<f64>) -> Result<f64, ArgminError> {
        Ok(self.0.value(p))
    }
}

/// Search range, in ln(parameter): about 1e-4 to 1e4.
const LOG_LIMIT: f64 = 9.2;

/// Fit a model. `start` overrides the usual starting values (the bootstrap starts at the full fit).
pub fn fit(p: Problem<'_>, start: Option<&[f64]>) -> Result<Outcome, FitError> {
    let start: Vec<f64> = start.map_or_else(|| p.kind.start(), <[f64]>::to_vec);
    match p.kind {
        ModelKind::Pythagenport => fit_two(p, &start),
        _ => {
            if p.kind == ModelKind::Pythagorean
                && p.loss == Loss::Logloss
                && let Some(out) = newton_pythagorean(p, start[0])
            {
                return Ok(out);
            }
            fit_one(p, start[0])
        }
    }
}

fn fit_one(p: Problem<'_>, start: f64) -> Result<Outcome, FitError> {
    let problem = LogScale(p);
    let f = |u: f64| p.value(&[u.exp()]);
    let (lo, hi, evals) =
        bracket(&f, start.max(1e-3).ln()).map_err(|reason| FitError::NoMinimum {
            model: p.kind.name().to_string(),
            reason,
        })?;
    let res = Executor::new(problem, BrentOpt::new(lo, hi).set_tolerance(1e-11, 1e-13))
        .configure(|s| s.max_iters(200))
        .run()
        .map_err(|e| FitError::Solver {
            model: p.kind.name().to_string(),
            message: e.to_string(),
        })?;
    let state = res.state();
    let u = *state.get_best_param().ok_or_else(|| FitError::Solver {
        model: p.kind.name().to_string(),
        message: "no parameter returned".to_string(),
    })?;
    Ok(Outcome {
        params: vec![u.exp()],
        loss: state.get_best_cost(),
        iterations: state.get_iter() + evals,
        converged: converged(state.get_termination_status()),
    })
}

fn converged(status: &TerminationStatus) -> bool {
    matches!(
        status,
        TerminationStatus::Terminated(TerminationReason::SolverConverged)
            | TerminationStatus::Terminated(TerminationReason::TargetCostReached)
    )
}

/// Find (lo, hi) around a minimum of `f`, expanding geometrically from `u0` until the loss rises on
/// both sides. Returns the bracket and the number of steps taken.
pub fn bracket(f: &dyn Fn(f64) -> f64, u0: f64) -> Result<(f64, f64, u64), String> {
    let mut h = 0.1;
    let (mut a, mut b, mut c) = (u0 - h, u0, u0 + h);
    let (mut fa, mut fb, mut fc) = (f(a), f(b), f(c));
    let mut steps = 0;
    if !(fa.is_finite() && fb.is_finite() && fc.is_finite()) {
        return Err("the loss is not finite at the starting value".to_string());
    }
    while !(fb < fa && fb < fc) {
        steps += 1;
        if steps > 200 || a < -LOG_LIMIT || c > LOG_LIMIT {
            return Err(if fa == fb && fb == fc {
                "the loss does not change with the parameter (do all teams score as many runs as they allow?)"
                    .to_string()
            } else {
                format!(
                    "the loss keeps falling toward {:.3e}; the data have no interior optimum",
                    if fa < fc { a.exp() } else { c.exp() }
                )
            });
        }
        h *= 1.6;
        if fa <= fc {
            // Downhill to the left: slide the triple left.
            c = b;
            fc = fb;
            b = a;
            fb = fa;
            a = b - h;
            fa = f(a);
        } else {
            a = b;
            fa = fb;
            b = c;
            fb = fc;
            c = b + h;
            fc = f(c);
        }
    }
    Ok((a, c, steps))
}

/// Newton's method on the Pythagorean log-loss, in the exponent itself. The loss is convex in x
/// (a logistic regression on ln(RS/RA) without intercept), so from a sensible start it converges in a
/// handful of steps; any sign of trouble hands the problem to Brent.
pub fn newton_pythagorean(p: Problem<'_>, x0: f64) -> Option<Outcome> {
    let t = p.table;
    let mut x = x0;
    for iter in 1..=50u64 {
        let (mut grad, mut hess) = (0.0, 0.0);
        for i in 0..t.len() {
            let c = p.counts.map_or(1.0, |c| c[i]);
            let l = t.ln_ratio[i];
            // An infinite ratio gives p̂ of exactly 0 or 1 whatever x is: no slope, no curvature.
            if c == 0.0 || !l.is_finite() {
                continue;
            }
            let q = 1.0 / (1.0 + (-x * l).exp());
            let n = c * t.decisions[i];
            grad += (c * t.wins[i] - n * q) * l;
            hess += n * q * (1.0 - q) * l * l;
        }
        if hess.is_nan() || hess <= 0.0 || !grad.is_finite() {
            return None;
        }
        let step = grad / hess;
        x += step;
        if !x.is_finite() || x <= 0.0 {
            return None;
        }
        if step.abs() <= 1e-12 * x.abs().max(1.0) {
            let loss = p.value(&[x]);
            return Some(Outcome {
                params: vec![x],
                loss,
                iterations: iter,
                converged: true,
            });
        }
    }
    None
}

/// The rows one weighted Pythagorean log-loss solve reads, gathered for [`newton_pythagorean_rows`]:
/// rows of weight zero and rows with an infinite ratio (no slope, no curvature) are left out, so the
/// inner loop has no branches.
#[derive(Debug, Clone, Default)]
pub struct NewtonRows {
    pub ln_ratio: Vec<f64>,
    /// c·wins and c·decisions, rounded exactly as `newton_pythagorean` rounds them.
    pub wins: Vec<f64>,
    pub decisions: Vec<f64>,
    /// σ(x0·ln_ratio) at the starting exponent x0, computed once for every resample.
    pub q_start: Vec<f64>,
}

impl NewtonRows {
    pub fn clear(&mut self) {
        self.ln_ratio.clear();
        self.wins.clear();
        self.decisions.clear();
        self.q_start.clear();
    }

    pub fn push(&mut self, ln_ratio: f64, count: f64, wins: f64, decisions: f64, q_start: f64) {
        self.ln_ratio.push(ln_ratio);
        self.wins.push(count * wins);
        self.decisions.push(count * decisions);
        self.q_start.push(q_start);
    }
}

/// Gradient and curvature of the total log-likelihood at x, given each row's σ(x·ln_ratio).
#[inline]
fn score_and_information(r: &NewtonRows, q: impl Fn(usize) -> f64) -> (f64, f64) {
    let (mut grad, mut hess) = (0.0, 0.0);
    for i in 0..r.ln_ratio.len() {
        let (l, q) = (r.ln_ratio[i], q(i));
        let n = r.decisions[i];
        grad += (r.wins[i] - n * q) * l;
        hess += n * q * (1.0 - q) * l * l;
    }
    (grad, hess)
}

/// [`newton_pythagorean`] for the bootstrap: the same Newton steps from `x0` over gathered rows, with
/// two savings. The first step reuses `q_start` (every resample starts at the same exponent). And it
/// stops as soon as Newton's quadratic convergence (step_k ≈ K·step_{k−1}²) predicts that the next
/// step would fall below the 1e-12 tolerance, instead of taking that step: one pass of exp fewer,
/// for a result that differs by less than the tolerance. `None` means "use the general solver".
pub fn newton_pythagorean_rows(r: &NewtonRows, x0: f64) -> Option<f64> {
    let mut x = x0;
    let mut previous: Option<f64> = None;
    for iter in 1..=50u64 {
        let (grad, hess) = if iter == 1 {
            score_and_information(r, |i| r.q_start[i])
        } else {
            score_and_information(r, |i| 1.0 / (1.0 + (-x * r.ln_ratio[i]).exp()))
        };
        if hess.is_nan() || hess <= 0.0 || !grad.is_finite() {
            return None;
        }
        let step = grad / hess;
        x += step;
        if !x.is_finite() || x <= 0.0 {
            return None;
        }
        let tolerance = 1e-12 * x.abs().max(1.0);
        if step.abs() <= tolerance {
            return Some(x);
        }
        // Predicted next step K·step² with K = step/previous², trusted only once steps shrink fast.
        if let Some(prev) = previous
            && step.abs() <= 1e-4 * x.abs().max(1.0)
            && step.abs() <= 0.1 * prev.abs()
            && step.abs().powi(3) <= tolerance * prev * prev
        {
            return Some(x);
        }
        previous = Some(step);
    }
    None
}

fn fit_two(p: Problem<'_>, start: &[f64]) -> Result<Outcome, FitError> {
    let mut best = start.to_vec();
    let mut best_cost = p.value(&best);
    if !best_cost.is_finite() {
        return Err(FitError::NoMinimum {
            model: p.kind.name().to_string(),
            reason: "the loss is not finite at the starting values".to_string(),
        });
    }
    let mut iterations = 0;
    let mut converged_any = false;
    // Restarting from the best point with a fresh simplex guards against a collapsed simplex on the
    // long, narrow valley that (a, b) form when run environments vary little.
    for round in 0..6 {
        let scale = if round == 0 { 0.25 } else { 0.05 };
        let simplex = vec![
            best.clone(),
            vec![best[0] + scale * best[0].abs().max(0.2), best[1]],
            vec![best[0], best[1] + scale * best[1].abs().max(0.2)],
        ];
        let solver = NelderMead::new(simplex)
            .with_sd_tolerance(1e-15)
            .map_err(|e| FitError::Solver {
                model: p.kind.name().to_string(),
                message: e.to_string(),
            })?;
        let res = Executor::new(TwoParam(p), solver)
            .configure(|s| s.max_iters(5000))
            .run()
            .map_err(|e| FitError::Solver {
                model: p.kind.name().to_string(),
                message: e.to_string(),
            })?;
        let state = res.state();
        iterations += state.get_iter();
        let done = converged(state.get_termination_status());
        let cost = state.get_best_cost();
        let improved = cost < best_cost - 1e-15 * best_cost.abs();
        if let Some(param) = state.get_best_param()
            && cost <= best_cost
        {
            best = param.clone();
            best_cost = cost;
        }
        converged_any = done;
        if round > 0 && !improved && done {
            break;
        }
    }
    Ok(Outcome {
        params: best,
        loss: best_cost,
        iterations,
        converged: converged_any,
    })
}
