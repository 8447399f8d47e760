//! argmin's derivative-free solvers over our losses: Brent's method for one parameter (on the
//! bracket from [`super::bracket`]) and Nelder–Mead with restarts for two.

use argmin::core::{CostFunction, Error as ArgminError, Executor, State};
use argmin::solver::brent::BrentOpt;
use argmin::solver::neldermead::NelderMead;

use super::bracket::bracket;
use super::{Outcome, Problem, converged};
use crate::error::FitError;

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

/// argmin's error as ours, naming the model.
fn solver_error(p: Problem<'_>) -> impl Fn(ArgminError) -> FitError {
    move |e| FitError::Solver {
        model: p.kind.name().to_string(),
        message: e.to_string(),
    }
}

pub fn fit_one(p: Problem<'_>, start: f64) -> Result<Outcome, FitError> {
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
        .map_err(solver_error(p))?;
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

pub fn fit_two(p: Problem<'_>, start: &[f64]) -> Result<Outcome, FitError> {
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
            .map_err(solver_error(p))?;
        let res = Executor::new(TwoParam(p), solver)
            .configure(|s| s.max_iters(5000))
            .run()
            .map_err(solver_error(p))?;
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
